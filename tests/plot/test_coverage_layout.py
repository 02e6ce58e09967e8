"""The coverage sheet: layout audit, title block, site table = JSON, candidates apart, classes, line of sight.

The layout is checked from matplotlib's own renderer extents
(:func:`profiler.plot.audit.layout_problems`); the numbers on the sheet
against the JSON written beside it; the EIRP against EIRP = P + G - L
(ITU-R P.525-4 Annex 1 section 2.2) and the EU863-870 EIRP limit of
+16 dBm (LoRaWAN Regional Parameters RP002-1.0.4, section 2.2.7); the
line-of-sight edge against the ``line_of_sight`` band it outlines.
"""

import json

import numpy as np
import pytest
from click.testing import CliRunner
from sample_sites import DEM, GATEWAY

from profiler.plot.audit import drawn_texts, layout_problems
from profiler.plot.coverage import build_coverage_figure
from profiler.products.coverage.map import coverage

RADIUS_KM, RES_M = 1.5, 150.0
SHORT = "Cairnfell Beacon"
LONG = ("Cairnfell Beacon upper hill-top gateway cabinet on the old fire lookout " * 3)[:200]   # invented
MEDIUM = LONG[:80]
CANDIDATE = (GATEWAY[0] - 0.012, GATEWAY[1] + 0.015)
EU868_MAX_EIRP_DBM = 16.0          # RP002-1.0.4 section 2.2.7 (EU863-870 default max EIRP)


def _single(name):
    return coverage(GATEWAY, dem=DEM, mast_m=10.0, name=name, radius_km=RADIUS_KM, resolution_m=RES_M,
                    progress=False)


def _with_candidate(folder, name):
    csv = folder / "sites.csv"
    csv.write_text("name,lat_deg,lon_deg,mast_m,role,gain_dbi,cable_loss_db\n"
                   f'"{name}",{GATEWAY[0]},{GATEWAY[1]},10,gateway,,\n'
                   f'"{name[:194]} spare",{CANDIDATE[0]},{CANDIDATE[1]},6,candidate,5,1.5\n',   # <= 200 characters
                   encoding="utf-8")
    return coverage(dem=DEM, sites=csv, radius_km=RADIUS_KM, resolution_m=RES_M, progress=False)


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    folder = tmp_path_factory.mktemp("coverage-layout")
    return {("single", "short"): _single(SHORT), ("single", "long"): _single(LONG),
            ("sites", "short"): _with_candidate(folder, SHORT), ("sites", "medium"): _with_candidate(folder, MEDIUM),
            ("sites", "long"): _with_candidate(folder, LONG)}


@pytest.fixture(scope="module")
def figures(runs):
    return {(paper, *key): build_coverage_figure(result, paper=paper, dem_paths=DEM, date_text="2026-03-15")
            for key, result in runs.items() for paper in ("a4", "letter")}


CASES = [(paper, *key) for paper in ("a4", "letter") for key in (("single", "short"), ("single", "long"),
                                                                  ("sites", "short"), ("sites", "medium"),
                                                                  ("sites", "long"))]


@pytest.mark.parametrize("case", CASES, ids=["-".join(c) for c in CASES])
def test_layout_audit_clean(figures, case):
    assert [str(p) for p in layout_problems(figures[case])] == []


def _axes(fig, label):
    return next(ax for ax in fig.axes if ax.get_label() == label)


def _texts(ax) -> str:
    return " ".join(t.get_text().replace("\n", " ") for t in ax.texts)


@pytest.mark.parametrize("case", CASES, ids=["-".join(c) for c in CASES])
def test_site_table_numbers_equal_the_json(runs, figures, case):
    report = runs[case[1:]].report
    table = _axes(figures[case], "coverage-sites")
    drawn = _texts(table)
    sites = report["gateways"] or [report["site"]]
    joined = " ".join(drawn.split())
    for s in sites:
        lat = f"{abs(s['lat_deg']):.5f}\u00b0 {'S' if s['lat_deg'] < 0 else 'N'}"
        lon = f"{abs(s['lon_deg']):.5f}\u00b0 {'W' if s['lon_deg'] < 0 else 'E'}"
        for value in (lat, lon, f"{s['mast_m']:g} m", f"{s['gain_dbi']:.2f} dBi", f"{s['eirp_dbm']:.2f} dBm"):
            assert value in drawn, value
        assert " ".join(s["name"].split()) in joined          # the whole name, wrapped, never cut
        # EIRP = P + G - L (ITU-R P.525-4) and within the EU868 limit (the default power keeps to it)
        assert s["eirp_dbm"] == pytest.approx(s["tx_power_dbm"] + s["gain_dbi"] - s["cable_loss_db"], abs=1e-9)
        assert s["eirp_dbm"] <= EU868_MAX_EIRP_DBM + 1e-9


def test_site_records_carry_the_radio_of_each_site(runs):
    gw, cand = runs[("sites", "short")].report["gateways"]
    assert (gw["role"], gw["gain_dbi"], gw["cable_loss_db"]) == ("gateway", 2.15, 0.0)     # the option's default
    assert (cand["role"], cand["gain_dbi"], cand["cable_loss_db"]) == ("candidate", 5.0, 1.5)   # the file's columns
    assert cand["mast_m"] == 6.0 and cand["lat_deg"] == CANDIDATE[0]


def test_title_block_with_the_sheet_block(tmp_path):
    from profiler.cli import main

    info = tmp_path / "sheet.toml"
    info.write_text('notes = "Gateway on the pump house roof."\nchecked_by = "B. Reviewer"\n', encoding="utf-8")
    out = tmp_path / "c.json"
    r = CliRunner().invoke(main, ["coverage", "--dem", str(DEM[0]), "--site", f"{GATEWAY[0]},{GATEWAY[1]}",
                                  "--mast-m", "10", "--radius-km", "1", "--resolution-m", "150", "--json", str(out),
                                  "--sheet-info", str(info), "--project", "Vellmoor valley LoRaWAN",
                                  "--document", "VV-RF-002", "--revision", "B", "--prepared-by", "A. Planner",
                                  "--organisation", "Vellmoor water board", "--date", "2026-03-15", "--no-progress"])
    assert r.exit_code == 0, r.output
    report = json.loads(out.read_text())
    assert report["schema"] == "profiler.coverage/5"
    assert report["sheet"] == {"project": "Vellmoor valley LoRaWAN", "document": "VV-RF-002", "revision": "B",
                               "prepared_by": "A. Planner", "checked_by": "B. Reviewer",
                               "organisation": "Vellmoor water board", "notes": "Gateway on the pump house roof.",
                               "date": "2026-03-15"}
    result = _single(SHORT)
    fig = build_coverage_figure(result, {**result.report, "sheet": report["sheet"]}, dem_paths=DEM)
    texts = " ".join(t.get_text() for t in drawn_texts(fig))
    for value in ("Vellmoor valley LoRaWAN", "VV-RF-002", "A. Planner", "B. Reviewer", "Vellmoor water board",
                  "2026-03-15", "Coverage map: Cairnfell Beacon", "CHECKED BY", "Planning aid only"):
        assert value in texts, value


def test_classes_translucent_over_the_hillshade(figures):
    ax = _axes(figures[("a4", "single", "short")], "coverage-map")
    images = ax.get_images()
    classes = next(im for im in images if im.get_gid() == "coverage-classes")
    relief = [im for im in images if im is not classes]
    assert relief and all(im.get_zorder() < classes.get_zorder() for im in relief)
    alpha = np.asarray(classes.get_array())[..., 3]
    assert alpha.max() <= 0.6 * 255          # at least 40 % of the relief shows through every class


def test_line_of_sight_edge_drawn_where_the_band_changes(runs, figures):
    from profiler.io.coverage import geographic_classes

    result = runs[("single", "short")]
    ax = _axes(figures[("a4", "single", "short")], "coverage-map")
    edge = [c for c in ax.collections if c.get_gid() == "line-of-sight-edge"]
    assert len(edge) == 1
    vertices = np.vstack([p.vertices for p in edge[0].get_paths() if len(p.vertices)])
    assert len(vertices) > 10
    los, (west, east, south, north) = geographic_classes(result, max_pixels=900, band="line_of_sight")
    ny, nx = los.shape
    col = (vertices[:, 0] - west) / (east - west) * nx - 0.5
    row = (north - vertices[:, 1]) / (north - south) * ny - 0.5
    c0, r0 = np.clip(np.floor(col).astype(int), 0, nx - 2), np.clip(np.floor(row).astype(int), 0, ny - 2)
    around = np.stack([los[r0, c0], los[r0 + 1, c0], los[r0, c0 + 1], los[r0 + 1, c0 + 1]])
    # every vertex of the 0.5 contour lies between a pixel in sight and one out of sight
    assert np.all((np.nanmax(around, axis=0) == 1.0) & (np.nanmin(around, axis=0) == 0.0))
    legend = _axes_with_legend(figures[("a4", "single", "short")])
    assert any(t.get_text().startswith("Edge of line of sight") for t in legend.get_texts())


def _axes_with_legend(fig):
    return next(ax.get_legend() for ax in fig.axes if ax.get_legend() is not None)


def test_gateways_and_candidates_apart(runs, figures):
    report = runs[("sites", "short")].report
    s = report["summary"]
    assert (s["gateways"], s["candidates"]) == (1, 1)
    assert 0 < s["covered_by_gateways"]["pixels"] <= s["covered"]["pixels"]
    ax = _axes(figures[("a4", "sites", "short")], "coverage-map")
    markers = {line.get_gid(): line for line in ax.lines if str(line.get_gid()).startswith("sites-")}
    assert set(markers) == {"sites-gateway", "sites-candidate"}
    assert markers["sites-gateway"].get_marker() != markers["sites-candidate"].get_marker()
    assert np.allclose(markers["sites-candidate"].get_ydata(), [CANDIDATE[0]])
    labels = [t.get_text() for t in _axes_with_legend(figures[("a4", "sites", "short")]).get_texts()]
    assert "Existing gateway" in labels and "Candidate site" in labels
    single = runs[("single", "short")].report["summary"]
    assert (single["gateways"], single["candidates"]) == (1, 0)
    assert single["covered_by_gateways"] == single["covered"]
    from profiler.io.coverage import coverage_summary_text

    text = coverage_summary_text(report)
    assert "1 gateway and 1 candidate site" in text and "existing gateways alone" in text


def test_out_optional_and_no_output_refused(tmp_path):
    from profiler.cli import main

    base = ["coverage", "--dem", str(DEM[0]), "--site", f"{GATEWAY[0]},{GATEWAY[1]}", "--mast-m", "10",
            "--radius-km", "1", "--resolution-m", "150", "--no-progress"]
    r = CliRunner().invoke(main, base + ["--json", str(tmp_path / "c.json")])
    assert r.exit_code == 0, r.output
    assert [p.name for p in tmp_path.iterdir()] == ["c.json"]
    r = CliRunner().invoke(main, base)
    assert r.exit_code == 2
    lines = [line for line in r.output.splitlines() if line.strip()]
    assert len(lines) == 1 and "--out" in lines[0] and "--plot" in lines[0] and "Traceback" not in r.output


def test_many_sites_counted_never_dropped_silently():
    import re
    from pathlib import Path

    sites_csv = Path(__file__).resolve().parents[2] / "examples" / "vellmoor_network.csv"
    result = coverage(dem=DEM, sites=sites_csv, radius_km=0.6, resolution_m=RES_M, progress=False)
    fig = build_coverage_figure(result, paper="letter", dem_paths=DEM)
    assert [str(p) for p in layout_problems(fig)] == []
    drawn = _texts(_axes(fig, "coverage-sites"))
    records = result.report["gateways"]
    shown = [s for s in records if s["name"] in drawn]
    more = re.search(r"(\d+) more sites? continued on sheet 2", drawn)
    assert len(shown) + (int(more.group(1)) if more else 0) == len(records) == 6
    s = result.report["summary"]
    assert (s["gateways"], s["candidates"]) == (2, 4)


def test_map_labels_clear_of_north_arrow_and_scale_bar(tmp_path):
    # two gateways on a diagonal: on letter paper the ring distance used to sit on the north arrow's "N"
    csv = tmp_path / "two.csv"
    csv.write_text("name,lat_deg,lon_deg,mast_m,role\n"
                   f"Cairnfell Beacon north cabinet,{GATEWAY[0]},{GATEWAY[1]},10,gateway\n"
                   f"Tollan Down mast lookout,{GATEWAY[0] + 0.02},{GATEWAY[1] + 0.03},10,gateway\n", encoding="utf-8")
    result = coverage(dem=DEM, sites=csv, radius_km=RADIUS_KM, resolution_m=RES_M, progress=False)
    fig = build_coverage_figure(result, paper="letter", dem_paths=DEM)
    assert [str(p) for p in layout_problems(fig)] == []


@pytest.mark.parametrize("paper", ["a4", "letter"])
def test_header_names_the_site_when_it_fits(figures, paper):
    """The count ("Coverage map: 1 gateway") stands in for the name only when the name does not fit."""
    heads = [t.get_text() for t in figures[(paper, "single", "short")].texts
             + [t for ax in figures[(paper, "single", "short")].axes for t in ax.texts]]
    assert f"Coverage map: {SHORT}" in heads
    long_heads = [t.get_text() for ax in figures[(paper, "single", "long")].axes for t in ax.texts]
    assert "Coverage map: 1 gateway" in long_heads


# --------------------------------------------------------------------------- land cover and the probability map
LAND_COVER = DEM[0].parent / "vellmoor_landcover.tif"


@pytest.fixture(scope="module")
def land_runs(tmp_path_factory):
    """A run with the sample land cover reaching the forest (7 km), single site and with a candidate."""
    folder = tmp_path_factory.mktemp("coverage-land-cover")
    csv = folder / "sites.csv"
    csv.write_text("name,lat_deg,lon_deg,mast_m,role\n"
                   f'"{LONG}",{GATEWAY[0]},{GATEWAY[1]},10,gateway\n'
                   f'"{MEDIUM}",{CANDIDATE[0]},{CANDIDATE[1]},6,candidate\n', encoding="utf-8")
    single = {name: coverage(GATEWAY, dem=DEM, mast_m=10.0, name=name, radius_km=7.0, resolution_m=250.0,
                             progress=False, land_cover=LAND_COVER) for name in (SHORT, LONG)}
    return {**{("single", k): v for k, v in zip(("short", "long"), single.values())},
            ("sites", "long"): coverage(dem=DEM, sites=csv, radius_km=7.0, resolution_m=250.0, progress=False,
                                        land_cover=LAND_COVER)}


LAND_CASES = [(paper, kind, *key) for paper in ("a4", "letter") for kind, key in (
    ("probability", ("single", "short")), ("probability", ("single", "long")), ("margin", ("sites", "long")),
    ("probability", ("sites", "long")))]
"""The sheet with a land cover: both maps, short and 200-character names (the 80-character one as the candidate)."""


@pytest.mark.parametrize("case", LAND_CASES, ids=["-".join(c) for c in LAND_CASES])
def test_layout_audit_clean_with_land_cover_and_the_probability_map(land_runs, case):
    paper, kind, *key = case
    result = land_runs[tuple(key)]
    fig = build_coverage_figure(result, paper=paper, dem_paths=DEM, date_text="2026-03-15", map_kind=kind)
    assert [str(p) for p in layout_problems(fig)] == []
    inset = _axes(fig, "coverage-land-cover")
    assert inset.get_images()
    drawn = " ".join(t.get_text() for t in drawn_texts(fig))
    for row in result.report["summary"]["land_cover_classes"]:   # the inset's legend = the JSON's table
        assert f"{row['code']} {row['clutter']}, R {row['clutter_height_m']:g} m, {row['share']:.0%}" in \
            " ".join(drawn.split())
    mean = result.report["summary"]["mean_probability_heard"]
    assert f"{mean:.2f}" in drawn
    gids = {im.get_gid() for im in _axes(fig, "coverage-map").get_images()}
    assert ("coverage-probability" in gids) == (kind == "probability")
    assert ("coverage-classes" in gids) == (kind == "margin")


def test_probability_map_shows_the_band(land_runs):
    from profiler.io.coverage import geographic_classes

    result = land_runs[("single", "short")]
    fig = build_coverage_figure(result, dem_paths=DEM, map_kind="probability")
    image = next(im for im in _axes(fig, "coverage-map").get_images() if im.get_gid() == "coverage-probability")
    want, _ = geographic_classes(result, max_pixels=900, band="probability_heard")
    got = np.ma.filled(np.asarray(image.get_array(), dtype=float), np.nan)
    np.testing.assert_array_equal(np.isnan(got), np.isnan(want))
    np.testing.assert_allclose(got[np.isfinite(got)], want[np.isfinite(want)])
    assert image.norm.vmin == 0.0 and image.norm.vmax == 1.0


def test_subtitle_says_where_the_node_is():
    # Issue 20: the sheet states the node's clutter and building when the options set them (the report's
    # settings), so an indoor probability map is never read as an outdoor one.
    from profiler.plot.coverage import node_text

    assert node_text({"node_mast_m": 1.5}) == "node mast 1.5 m"
    assert node_text({"node_mast_m": 1.5, "clutter_b": "urban", "clutter_height_b_m": None,
                      "indoor_b": "traditional"}) == "node mast 1.5 m in urban, indoors (traditional)"
    assert node_text({"node_mast_m": 2, "clutter_b": "trees", "clutter_height_b_m": 5.0}) == \
        "node mast 2 m in trees (R 5 m)"


def test_settings_record_the_terminal_options():
    from click.testing import CliRunner

    from profiler.cli import main

    res = CliRunner().invoke(main, ["coverage", "--dem", "dem_samples", "--site", "-29.9125,-19.955", "--mast-m", "10",
                                    "--radius-km", "1", "--indoor-b", "thermally-efficient", "--clutter-b", "suburban",
                                    "--json", "-", "--no-progress"])
    assert res.exit_code == 0, res.output
    st = json.loads(res.stdout)["settings"]
    assert (st["indoor_b"], st["clutter_b"], st["indoor_a"], st["clutter_statistics"]) == \
        ("thermally-efficient", "suburban", None, False)
