"""The network map sheet: statuses as the profiler.network/1 contract defines them, each format
written and valid, the caution, names and legend as text, markers, links and scale bar where the
geodesy (geographiclib, pyproj) says, labels that do not pile up, bad input refused.

The report is a small hand-built ``profiler.network/1`` fixture over the bundled synthetic
terrain (invented Vellmoor valley sites); figures are drawn at low dpi to keep the file fast.
"""

import re
import subprocess
import sys
import xml.etree.ElementTree as ET

import numpy as np
import pytest
from sample_sites import DEM, GATEWAY, PUMP, SHEEPFOLD, TANK  # noqa: E402

from profiler.about import CAUTION
from profiler.errors import ProfilerError
from profiler.plot import build_network_figure, link_status, write_network_figure
from profiler.plot.network import STATUS_STYLE, build_network_sheets

SVG_NS = "{http://www.w3.org/2000/svg}"
MM_PER_IN = 25.4                       # exact, by definition of the inch
PT_PER_IN = 72.0                       # PostScript/PDF point (ISO 32000-1, 8.3.2.3)
FADE_DB = 10.0

# name, (lat, lon) [deg], role; all inside the sample DEM (lat -30.05..-29.8, lon -20.0..-19.75)
SITES = [
    ("Cairnfell Beacon", GATEWAY, "gateway"),
    ("Tollan Down mast", (-29.852, -19.792), "candidate"),
    ("Osterby Farm pump", PUMP, "node"),
    ("Millbrook Tank", TANK, "node"),
    ("Greywater Sheepfold", SHEEPFOLD, "node"),
    ("Wendle Reservoir", (-30.0, -19.845), "node"),
    ("Quarry Gate sensor", (-29.965, -19.82), "node"),
]
# gateway, node, uplink margin [dB], error: two of each status
LINKS = [
    ("Cairnfell Beacon", "Millbrook Tank", 18.0, None),            # closes
    ("Tollan Down mast", "Millbrook Tank", FADE_DB, None),         # closes (exactly the fade margin)
    ("Cairnfell Beacon", "Osterby Farm pump", 4.0, None),          # marginal
    ("Tollan Down mast", "Osterby Farm pump", 0.0, None),          # marginal (exactly 0 dB)
    ("Cairnfell Beacon", "Wendle Reservoir", -12.0, None),         # fails
    ("Tollan Down mast", "Wendle Reservoir", -0.5, None),          # fails
    ("Cairnfell Beacon", "Quarry Gate sensor", None, "void in the elevation data; use --fill-voids"),
    ("Tollan Down mast", "Greywater Sheepfold", 25.0, "site outside the elevation data"),   # error wins
]
EXPECTED = ["closes", "closes", "marginal", "marginal", "fails", "fails", "error", "error"]


def _best(links, node, role_of, role):
    """The (site, margin) of ``node``'s computed link with the highest margin from a site of ``role``."""
    rows = [(m, g) for g, nd, m, e in links if nd == node and e is None and m is not None and role_of[g] == role]
    return (max(rows)[1], max(rows)[0]) if rows else (None, None)


def network_report(sites=SITES, links=LINKS) -> dict:
    """A profiler.network/3 report (the keys of the contract; numbers not read by the sheet left out):
    existing gateways and candidate sites counted apart, as docs/network.md defines them."""
    node_names = [name for name, _, role in sites if role == "node"]
    role_of = {name: role for name, _, role in sites}

    def heard(n, role):
        return sum(1 for g, nd, m, e in links
                   if nd == n and e is None and m is not None and m >= FADE_DB and role_of[g] == role)

    nodes = []
    for n in node_names:
        (bg, bgm), (bc, bcm) = _best(links, n, role_of, "gateway"), _best(links, n, role_of, "candidate")
        nodes.append({"name": n, "gateways_heard": heard(n, "gateway"), "best_gateway": bg, "best_margin_db": bgm,
                      "recommended_dr": None, "candidates_heard": heard(n, "candidate"), "best_candidate": bc,
                      "best_candidate_margin_db": bcm, "best_candidate_recommended_dr": None})
    by_gw = sum(1 for nd in nodes if nd["gateways_heard"])
    return {
        "schema": "profiler.network/3", "tool_version": "0.1.0", "band": "EU868", "frequency_mhz": 868.1,
        "k_factor": 4.0 / 3.0, "fade_margin_db": FADE_DB,
        "sites": [{"name": n, "lat_deg": ll[0], "lon_deg": ll[1], "mast_m": 2.0, "role": r, "ground_m": 300.0}
                  for n, ll, r in sites],
        "links": [{"gateway": g, "node": n, "distance_m": None, "azimuth_deg": None, "margin_db": m,
                   "downlink_margin_db": m, "recommended_dr": None, "closes": m is not None and m >= 0, "error": e}
                  for g, n, m, e in links],
        "nodes": nodes,
        "summary": {"links": len(links), "closing": 2, "errors": 2, "nodes_total": len(node_names),
                    "gateways": sum(r == "gateway" for r in role_of.values()),
                    "candidates": sum(r == "candidate" for r in role_of.values()),
                    "nodes_covered": by_gw, "nodes_covered_twice": 0, "nodes_covered_by_gateways": by_gw,
                    "nodes_covered_with_candidates": sum(1 for nd in nodes
                                                         if nd["gateways_heard"] or nd["candidates_heard"]),
                    "nodes_covered_twice_with_candidates": 0},
        "dem": {"sources": [{"path": "dem_samples/vellmoor_synthetic_1s.tif", "sha256": "ab" * 32,
                             "crs": "EPSG:4326", "resolution": [1 / 3600, 1 / 3600]}]},
        "warnings": [], "caution": CAUTION}


@pytest.fixture(scope="module")
def report():
    return network_report()


@pytest.fixture(scope="module")
def figure(report):
    return build_network_figure(report, dem_paths=DEM, highlight={"Tollan Down mast"}, marked={"Wendle Reservoir"},
                                links="all")


def _map_axes(fig):
    return next(ax for ax in fig.axes if ax.get_label() == "network-map")


def _svg_texts(path):
    root = ET.parse(path).getroot()                      # raises if the XML is not well formed
    return ["".join(el.itertext()) for el in root.iter(f"{SVG_NS}text")]


# --------------------------------------------------------------------------- status
def test_link_status_follows_the_contract_thresholds(report):
    """closes: margin >= fade margin; marginal: 0 <= margin < fade; fails: < 0; error: error set
    (the profiler.network/3 contract and the map of docs/network.md), boundaries included."""
    assert link_status(report["links"], FADE_DB) == EXPECTED
    assert link_status([{"margin_db": 9.999, "error": None}], FADE_DB) == ["marginal"]
    assert link_status([{"margin_db": -1e-9, "error": None}], FADE_DB) == ["fails"]
    assert link_status([], FADE_DB) == []


# --------------------------------------------------------------------------- formats
def test_svg_holds_caution_names_and_legend_as_text(tmp_path, report):
    out = tmp_path / "network.svg"
    write_network_figure(report, out, dpi=60, dem_paths=DEM, highlight={"Tollan Down mast"},
                         marked={"Wendle Reservoir"})
    texts = _svg_texts(out)
    joined = "\n".join(texts)
    assert CAUTION in texts
    for name, _, _ in SITES:
        assert name in joined
    for label in ("Closes with the fade margin (\u2265 10.0 dB)", "Closes below the fade margin (0 to 10.0 dB)",
                  "Fails (margin below 0 dB)", "Not computed (error)", "Existing gateway", "Candidate site (not built)",
                  "Link of a candidate site: thinner, paler", "Node covered by a gateway",
                  "Node covered only with a candidate", "Node not covered", "Chosen site", "Unreachable site"):
        assert label in texts
    assert "1 of 5 nodes covered by gateways" in texts       # only Millbrook Tank is heard with the margin
    assert any(t.startswith("Elevation data: vellmoor_synthetic_1s.tif (sha256 abababababab") for t in texts)


def test_png_and_pdf_are_written_at_the_paper_size(tmp_path, report):
    from PIL import Image

    png = tmp_path / "network.png"
    write_network_figure(report, png, paper="letter", dpi=50, dem_paths=DEM)
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"          # PNG signature (ISO/IEC 15948)
    with Image.open(png) as img:
        assert abs(img.size[0] - 11.0 * 50) <= 1 and abs(img.size[1] - 8.5 * 50) <= 1   # ANSI letter, landscape
    pdf = tmp_path / "network.pdf"
    write_network_figure(report, pdf, dpi=50, dem_paths=DEM)
    data = pdf.read_bytes()
    assert data.startswith(b"%PDF-")
    sheets = build_network_sheets(report, dem_paths=None)       # the side column does not depend on the relief
    assert len(re.findall(rb"/Type\s*/Page(?![a-zA-Z])", data)) == len(sheets)      # and its continuation sheets
    box = [float(v) for v in re.search(rb"/MediaBox\s*\[([^\]]*)\]", data).group(1).split()]
    assert box[2:] == pytest.approx([297.0 / MM_PER_IN * PT_PER_IN, 210.0 / MM_PER_IN * PT_PER_IN], abs=0.01)
    assert b"/FontFile2" in data and b"/Type3" not in data      # TrueType text, not glyph outlines
    assert len(data) < 3_000_000                                # relief embedded as one raster, not vectors


def test_bad_outputs_and_reports_are_profiler_errors(tmp_path, report):
    with pytest.raises(ProfilerError, match=r"\.png, \.pdf or \.svg"):
        write_network_figure(report, tmp_path / "network.jpg")
    with pytest.raises(ProfilerError, match="paper"):
        write_network_figure(report, tmp_path / "network.png", paper="a3")
    with pytest.raises(ProfilerError, match="does not exist"):
        write_network_figure(report, tmp_path / "no" / "network.png")
    with pytest.raises(ProfilerError, match="no sites"):
        write_network_figure({**report, "sites": []}, tmp_path / "network.png")
    with pytest.raises(ProfilerError, match="best, all"):
        write_network_figure(report, tmp_path / "network.png", links="some")
    assert list(tmp_path.iterdir()) == []


def test_importing_the_plot_package_does_not_import_matplotlib():
    code = "import sys, profiler.plot; print('matplotlib' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "False"


# --------------------------------------------------------------------------- geometry
def test_site_markers_sit_at_their_coordinates(figure, report):
    ax = _map_axes(figure)
    lines = {line.get_gid(): line for line in ax.get_lines() if line.get_gid()}
    where = {s["name"]: (s["lon_deg"], s["lat_deg"]) for s in report["sites"]}
    expected = {"sites-gateway": ["Cairnfell Beacon"], "sites-candidate": ["Tollan Down mast"],
                "sites-node": ["Millbrook Tank"],
                "sites-node_uncovered": ["Osterby Farm pump", "Greywater Sheepfold", "Wendle Reservoir",
                                         "Quarry Gate sensor"],
                "sites-highlight": ["Tollan Down mast"], "sites-marked": ["Wendle Reservoir"]}
    for gid, names in expected.items():
        drawn = np.column_stack([lines[gid].get_xdata(), lines[gid].get_ydata()])
        assert drawn == pytest.approx(np.array([where[n] for n in names]), abs=1e-12)
    assert lines["sites-gateway"].get_marker() != lines["sites-candidate"].get_marker() != \
        lines["sites-node"].get_marker()                       # roles differ by shape, not colour alone


def test_links_are_drawn_by_status_between_their_sites(figure, report):
    ax = _map_axes(figure)
    where = {s["name"]: (s["lon_deg"], s["lat_deg"]) for s in report["sites"]}
    role = {s["name"]: s["role"] for s in report["sites"]}
    collections = {c.get_gid(): c for c in ax.collections if "links-" in (c.get_gid() or "")}
    for status in ("closes", "marginal", "fails", "error"):
        for prefix, kind in (("links", "gateway"), ("candidate-links", "candidate")):
            ends = [[where[ln["gateway"]], where[ln["node"]]] for ln, s in zip(report["links"], EXPECTED)
                    if s == status and role[ln["gateway"]] == kind]
            drawn = np.array(collections[f"{prefix}-{status}"].get_segments())
            assert drawn == pytest.approx(np.array(ends), abs=1e-12)
            assert (collections[f"{prefix}-{status}"].get_linewidths()[0] < STATUS_STYLE[status]["lw"]) == \
                (kind == "candidate")                           # a candidate's links are thinner
    error = collections["links-error"]
    r, g, b, _ = error.get_colors()[0]
    assert r == g == b                                          # grey
    assert error.get_linewidths()[0] < min(STATUS_STYLE[s]["lw"] for s in ("closes", "marginal", "fails"))


def test_status_styles_differ_in_dash_and_lightness():
    """Greyscale legibility: each status has its own dash pattern or width, and the three colours
    differ in relative luminance by at least 0.1 (sRGB transfer function of IEC 61966-2-1 and the
    luminance weights of ITU-R BT.709: Y = 0.2126 R + 0.7152 G + 0.0722 B)."""
    from matplotlib.colors import to_rgb

    patterns = {(str(s["ls"]), s["lw"]) for s in STATUS_STYLE.values()}
    assert len(patterns) == len(STATUS_STYLE)

    def luminance(color):
        c = np.array(to_rgb(color))
        c = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
        return float(c @ [0.2126, 0.7152, 0.0722])

    ys = sorted(luminance(STATUS_STYLE[s]["color"]) for s in ("closes", "marginal", "fails"))
    assert min(np.diff(ys)) >= 0.1


def test_map_has_equal_metres_both_ways(figure):
    """On the drawn map a kilometre east is as long as a kilometre north at the centre (geographiclib)."""
    geodesic = pytest.importorskip("geographiclib.geodesic").Geodesic.WGS84
    ax = _map_axes(figure)
    figure.canvas.draw()
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    lon, lat = 0.5 * (x0 + x1), 0.5 * (y0 + y1)
    d = 0.01
    px = ax.transData.transform([[lon, lat], [lon + d, lat], [lon, lat + d]])
    east_m = geodesic.Inverse(lat, lon, lat, lon + d)["s12"]
    north_m = geodesic.Inverse(lat, lon, lat + d, lon)["s12"]
    per_m_east = np.hypot(*(px[1] - px[0])) / east_m
    per_m_north = np.hypot(*(px[2] - px[0])) / north_m
    assert per_m_east == pytest.approx(per_m_north, rel=0.005)


def test_scale_bar_length_matches_the_geodesic(figure):
    """The bar's drawn length along its parallel equals its label (geographiclib, WGS84)."""
    geodesic = pytest.importorskip("geographiclib.geodesic").Geodesic.WGS84
    ax = _map_axes(figure)
    halves = [p for p in ax.patches if p.get_gid() == "scale-bar"]
    assert len(halves) == 2
    x0 = min(p.get_x() for p in halves)
    x1 = max(p.get_x() + p.get_width() for p in halves)
    y = halves[0].get_y()
    texts = [t for t in ax.texts if t.get_position()[1] > y and abs(t.get_position()[0] - x1) < 1e-9]
    value = float(texts[0].get_text())
    unit = next(t.get_text() for t in ax.texts if t.get_text() in ("m", "km"))
    length_m = geodesic.Inverse(y, x0, y, x1)["s12"]
    assert length_m == pytest.approx(value * (1000.0 if unit == "km" else 1.0), rel=1e-6)


def test_labels_do_not_pile_up_and_are_capped(tmp_path):
    """Sixty nodes in a small area: at most 40 node names, and no two labels overlap."""
    rng = np.random.default_rng(7)
    nodes = [(f"Meter {i:02d}", (float(rng.uniform(-29.96, -29.86)), float(rng.uniform(-19.93, -19.80))), "node")
             for i in range(60)]
    links = [("Cairnfell Beacon", name, float(rng.normal(8.0, 8.0)), None) for name, _, _ in nodes]
    fig = build_network_figure(network_report(SITES[:1] + nodes, links), dem_paths=None)
    ax = _map_axes(fig)
    fig.canvas.draw()
    labels = [t for t in ax.texts if t.get_text().startswith(("Meter", "Cairnfell"))]
    assert any(t.get_text() == "Cairnfell Beacon" for t in labels)      # the gateway is always named
    assert 0 < sum(t.get_text().startswith("Meter") for t in labels) <= 40
    boxes = [t.get_window_extent() for t in labels]
    for i, a in enumerate(boxes):
        for b in boxes[i + 1:]:
            assert not a.overlaps(b)
    caption = next(t.get_text() for t in ax.texts if "left out (crowded)" in t.get_text())
    assert f"of {len(nodes) + 1} site names" in caption


def test_hostile_site_name_stays_escaped_text(tmp_path):
    evil = '<b>&"x'
    sites = SITES[:2] + [(evil, PUMP, "node")]
    out = tmp_path / "evil.svg"
    write_network_figure(network_report(sites, [("Cairnfell Beacon", evil, 3.0, None)]), out, dpi=40)
    assert any(evil in t for t in _svg_texts(out))
    assert "<b>" not in out.read_text(encoding="utf-8")


def test_site_names_clear_of_north_arrow_and_scale_bar():
    """Nodes at the four corners of the map: no name shares area with the north arrow or the scale bar."""
    from matplotlib.transforms import Bbox

    corners = [(f"Corner farm {k}", (lat, lon), "node") for k, (lat, lon) in
               enumerate(((-30.03, -19.985), (-30.03, -19.765), (-29.82, -19.985), (-29.82, -19.765)))]
    links = [("Cairnfell Beacon", name, 12.0, None) for name, _, _ in corners]
    fig = build_network_figure(network_report(SITES[:1] + corners, links), dem_paths=None)
    ax = _map_axes(fig)
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    furniture = []
    for gid in ("north-arrow", "scale-bar"):
        parts = [a for a in ax.get_children() if (a.get_gid() or "").startswith(gid)]
        extents = [a.get_window_extent(renderer) for a in parts]
        extents += [a.arrow_patch.get_window_extent(renderer) for a in parts if getattr(a, "arrow_patch", None)]
        furniture.append(Bbox.union(extents))
    labels = [t for t in ax.texts if t.get_text().startswith(("Corner", "Cairnfell"))]
    assert len(labels) == 5
    for label in labels:
        box = label.get_window_extent(renderer)
        for other in furniture:
            shared = max(0.0, min(box.x1, other.x1) - max(box.x0, other.x0)) * max(0.0, min(box.y1, other.y1)
                                                                                 - max(box.y0, other.y0))
            assert shared == 0.0


def test_candidates_and_what_they_add_are_drawn_apart():
    """A node only a candidate site hears is drawn in the candidate colour, apart from the nodes an
    existing gateway hears and from those nobody hears; the candidate's marker differs from the
    gateway's in shape and colour; with links="best" each node shows only its best link from a gateway
    and its best from a candidate."""
    from matplotlib.colors import to_rgba

    sites = SITES[:2] + [("Osterby Farm pump", PUMP, "node"), ("Millbrook Tank", TANK, "node"),
                         ("Wendle Reservoir", (-30.0, -19.845), "node")]
    links = [("Cairnfell Beacon", "Osterby Farm pump", 4.0, None),
             ("Tollan Down mast", "Osterby Farm pump", 15.0, None),
             ("Cairnfell Beacon", "Millbrook Tank", 18.0, None), ("Tollan Down mast", "Millbrook Tank", 12.0, None),
             ("Cairnfell Beacon", "Wendle Reservoir", -3.0, None), ("Tollan Down mast", "Wendle Reservoir", -1.0, None)]
    report = network_report(sites, links)
    ax = _map_axes(build_network_figure(report, dem_paths=None))
    lines = {line.get_gid(): line for line in ax.get_lines() if line.get_gid()}
    for gid, lon in (("sites-node", TANK[1]), ("sites-node_candidate", PUMP[1]), ("sites-node_uncovered", -19.845)):
        assert list(lines[gid].get_xdata()) == pytest.approx([lon], abs=1e-9)
    gateway, candidate = lines["sites-gateway"], lines["sites-candidate"]
    assert gateway.get_marker() != candidate.get_marker()
    assert to_rgba(gateway.get_markerfacecolor()) != to_rgba(candidate.get_markerfacecolor())
    assert to_rgba(lines["sites-node_candidate"].get_markerfacecolor()) == to_rgba(candidate.get_markerfacecolor())
    drawn = {c.get_gid(): len(c.get_segments()) for c in ax.collections if "links-" in (c.get_gid() or "")}
    assert sum(drawn.values()) == 6                 # three nodes, each its best gateway link and best candidate link
    assert sum(n for gid, n in drawn.items() if gid.startswith("candidate-links-")) == 3
