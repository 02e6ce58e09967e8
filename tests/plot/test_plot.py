"""The link figure: each format is produced and valid, text stays text, the
profile panel draws what the report says, bad output paths fail cleanly.

Realistic reports come from ``profiler.api.link`` over the bundled synthetic
terrain (invented Vellmoor valley scenario).  Figures are rendered at low dpi
to keep the file fast.
"""

import re
import xml.etree.ElementTree as ET
import zlib

import numpy as np
import pytest
from sample_sites import DEM, EVIL_A, EVIL_B, GATEWAY, PUMP, SHEEPFOLD, TANK  # noqa: E402

from profiler.api import link
from profiler.errors import ProfilerError
from profiler.io.report import inert_text, verdict
from profiler.plot import build_link_figure, write_link_figure

MM_PER_IN = 25.4                       # exact, by definition of the inch
PT_PER_IN = 72.0                       # PostScript/PDF point (ISO 32000-1, 8.3.2.3)
PAPER_IN = {"a4": (297.0 / MM_PER_IN, 210.0 / MM_PER_IN),   # ISO 216 A4, landscape
            "letter": (11.0, 8.5)}                           # ANSI letter, landscape
SVG_NS = "{http://www.w3.org/2000/svg}"


@pytest.fixture(scope="module")
def blocked_report():
    """No line of sight: both ends low, the ridge between them."""
    return link(PUMP, SHEEPFOLD, dem=DEM, name_a="Osterby Farm pump", name_b="Greywater Sheepfold",
                mast_a_m=2.0, mast_b_m=2.0).to_dict()


@pytest.fixture(scope="module")
def clear_report():
    return link(GATEWAY, TANK, dem=DEM, name_a="Cairnfell Beacon", name_b="Millbrook Tank",
                mast_a_m=10.0, mast_b_m=2.0).to_dict()


@pytest.fixture(scope="module")
def surveyed_report(tmp_path_factory):
    path = tmp_path_factory.mktemp("surveyed") / "weir_to_shed.csv"
    d = np.arange(0.0, 6001.0, 50.0)
    h = 300.0 + 90.0 * np.exp(-((d - 3500.0) / 500.0) ** 2)
    path.write_text("distance_m,elevation_m\n" + "".join(f"{a:.1f},{b:.2f}\n" for a, b in zip(d, h)))
    return link(profile_csv=path, name_a="Upper Weir", name_b="Lambing Shed", mast_a_m=6.0, mast_b_m=3.0).to_dict()


def _svg_texts(path):
    root = ET.parse(path).getroot()
    return ["".join(el.itertext()) for el in root.iter(f"{SVG_NS}text")]


def _pdf_text_blocks(data: bytes) -> list[str]:
    """Text shown by the page content streams: every BT..ET block's strings, decoded.

    Type 42 (TrueType, Identity-H) text is written by matplotlib as UTF-16BE
    strings in Tj/TJ operators; a name found here is drawn as real text with
    a font, not as outlines.
    """
    blocks = []
    for body in re.findall(rb"stream\r?\n(.*?)\r?\nendstream", data, re.S):
        try:
            content = zlib.decompress(body)
        except zlib.error:
            content = body
        for block in re.findall(rb"BT(.*?)ET", content, re.S):
            raw = b""
            for lit, hexs in re.findall(rb"\(((?:\\.|[^\\)])*)\)|<([0-9A-Fa-f\s]*)>", block, re.S):
                if hexs:
                    raw += bytes.fromhex(hexs.decode().replace(" ", ""))
                else:
                    raw += re.sub(rb"\\([0-7]{1,3}|.)", _unescape, lit)
            blocks.append(raw.decode("utf-16-be", errors="replace"))
    return blocks


def _unescape(m):
    s = m.group(1)
    if s[:1].isdigit():
        return bytes([int(s, 8)])
    return {b"n": b"\n", b"r": b"\r", b"t": b"\t", b"b": b"\b", b"f": b"\f"}.get(s, s)


# --------------------------------------------------------------------------- formats
@pytest.mark.parametrize("paper", ["a4", "letter"])
def test_png_has_the_paper_size_at_the_dpi(tmp_path, los_report, paper):
    from PIL import Image

    out = tmp_path / "link.png"
    write_link_figure(los_report, out, paper=paper, dpi=60, dem_paths=DEM)
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"            # PNG signature (ISO/IEC 15948)
    with Image.open(out) as img:
        img.load()
        width, height = img.size
    w_in, h_in = PAPER_IN[paper]
    assert abs(width - w_in * 60) <= 1 and abs(height - h_in * 60) <= 1
    assert width > height                                            # landscape


def test_pdf_is_one_landscape_a4_page_with_names_as_text(tmp_path, los_report):
    out = tmp_path / "link.pdf"
    write_link_figure(los_report, out, paper="a4", dpi=72, dem_paths=DEM)
    data = out.read_bytes()
    assert data.startswith(b"%PDF-")
    assert len(re.findall(rb"/Type\s*/Page(?![a-zA-Z])", data)) == 1
    box = [float(v) for v in re.search(rb"/MediaBox\s*\[([^\]]*)\]", data).group(1).split()]
    assert box[2] == pytest.approx(297.0 / MM_PER_IN * PT_PER_IN, abs=0.01)   # 841.89 pt
    assert box[3] == pytest.approx(210.0 / MM_PER_IN * PT_PER_IN, abs=0.01)   # 595.28 pt
    # Embedded TrueType fonts with a ToUnicode map (searchable, copyable), no Type 3 glyph outlines.
    assert b"/FontFile2" in data and b"/ToUnicode" in data and b"/Type3" not in data
    text = "\n".join(_pdf_text_blocks(data))
    for name in ("Cairnfell Beacon", "Osterby Farm pump"):
        assert name in text
    assert verdict(los_report) in text


def test_svg_holds_distance_and_verdict_as_text_elements(tmp_path, los_report):
    out = tmp_path / "link.svg"
    write_link_figure(los_report, out, paper="letter", dpi=72, dem_paths=DEM)
    texts = _svg_texts(out)
    assert verdict(los_report) in texts
    km = f"{los_report['distance_m'] / 1000:.3f} km"
    assert km in texts                                   # results table cell
    # Coordinates in degrees-minutes-seconds: 29.9125 deg = 29 deg 54' 45" (1 deg = 60', 1' = 60").
    assert "29\u00b054\u203245.00\u2033 S" in texts
    assert "19\u00b057\u203218.00\u2033 W" in texts     # 19.955 deg = 19 deg 57' 18"


def test_figure_formats_and_bad_extension(tmp_path, los_report):
    with pytest.raises(ProfilerError, match=r"\.png, \.pdf or \.svg"):
        write_link_figure(los_report, tmp_path / "link.jpg", dem_paths=DEM)
    with pytest.raises(ProfilerError):
        write_link_figure(los_report, tmp_path / "link", dem_paths=DEM)
    with pytest.raises(ProfilerError, match="paper"):
        write_link_figure(los_report, tmp_path / "link.png", paper="a3", dem_paths=DEM)
    assert list(tmp_path.iterdir()) == []


def test_missing_folder_is_a_profiler_error_and_writes_nothing(tmp_path, los_report):
    with pytest.raises(ProfilerError, match="does not exist"):
        write_link_figure(los_report, tmp_path / "no" / "such" / "link.png", dem_paths=DEM)
    assert list(tmp_path.iterdir()) == []


def test_failed_save_leaves_old_file_untouched(tmp_path, los_report, monkeypatch):
    from matplotlib.figure import Figure

    out = tmp_path / "link.png"
    out.write_bytes(b"previous figure")

    def broken(self, *args, **kwargs):
        raise RuntimeError("disk full halfway")

    monkeypatch.setattr(Figure, "savefig", broken)
    with pytest.raises(RuntimeError):
        write_link_figure(los_report, out, dpi=50, dem_paths=DEM)
    assert out.read_bytes() == b"previous figure"
    assert [p.name for p in tmp_path.iterdir()] == ["link.png"]


# --------------------------------------------------------------------------- content
def test_blocked_link_and_surveyed_profile_render(tmp_path, blocked_report, surveyed_report):
    assert not blocked_report["line_of_sight"]
    write_link_figure(blocked_report, tmp_path / "blocked.png", dpi=50, dem_paths=DEM)
    write_link_figure(surveyed_report, tmp_path / "surveyed.svg", paper="letter", dem_paths=[])
    texts = _svg_texts(tmp_path / "surveyed.svg")
    assert "no map: surveyed profile" in texts
    assert texts.count("\u2014") >= 8        # coordinates, DMS and azimuths shown as em dashes
    assert (tmp_path / "blocked.png").stat().st_size > 20_000


def test_terrain_is_drawn_raised_by_the_earth_bulge(los_report):
    """The drawn terrain line equals terrain + d1 d2 / (2 k a), a = 6371 km
    (ITU-R P.452-18 eq. 14 Earth-curvature term; mean Earth radius per P.452 eq. 6a)."""
    fig = build_link_figure(los_report, dem_paths=None)
    profile_ax = next(ax for ax in fig.axes if ax.get_xlabel().startswith("Distance from site A"))
    prof = los_report["profile"]
    d = np.array(prof["distance_m"])
    d1, d2 = d, d[-1] - d
    expected = np.array(prof["terrain_m"]) + d1 * d2 / (2 * los_report["k_factor"] * 6_371_000.0)
    drawn = [line.get_ydata() for line in profile_ax.get_lines() if len(line.get_ydata()) == d.size]
    assert any(np.allclose(y, expected, atol=1e-6) for y in drawn)
    los = prof["los_m"]
    tips = (los_report["site_a"]["ground_m"] + los_report["site_a"]["mast_m"],
            los_report["site_b"]["ground_m"] + los_report["site_b"]["mast_m"])
    assert any(np.allclose(y, np.interp(d, [0, d[-1]], tips), atol=1e-6) for y in drawn)   # straight LoS
    assert np.allclose(los, np.interp(d, [0, d[-1]], tips), atol=1e-6)


def test_vertical_exaggeration_matches_the_drawn_axes(los_report):
    """The stated exaggeration is (pixels per metre up) / (pixels per metre along) of the panel as drawn."""
    fig = build_link_figure(los_report, dem_paths=None)
    fig.canvas.draw()
    ax = next(a for a in fig.axes if a.get_xlabel().startswith("Distance from site A"))
    box = ax.get_window_extent()
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    ve = (box.height / (y1 - y0)) / (box.width / ((x1 - x0) * 1000.0))
    note = next(t.get_text() for t in fig.texts if "Vertical exaggeration" in t.get_text())
    stated = float(re.search(r"\u00d7([0-9.]+)", note).group(1))
    assert stated == pytest.approx(ve, rel=0.05)       # stated to two significant digits
    assert "curved-earth convention" in note.lower() and "k = 4/3" in note


def test_shortfall_legend_follows_the_fresnel_verdict(los_report, clear_report):
    for report in (los_report, clear_report):
        fig = build_link_figure(report, dem_paths=None)
        labels = [t.get_text() for ax in fig.axes if ax.get_legend() for t in ax.get_legend().get_texts()]
        short = next(s for s in labels if s.startswith("Clearance short of requirement"))
        assert short.endswith("(none)") == report["fresnel_clear"]


def test_hostile_site_names_stay_escaped_text_and_inert(tmp_path, evil_report):
    out = tmp_path / "evil.svg"
    write_link_figure(evil_report, out, dem_paths=DEM)
    texts = _svg_texts(out)                        # parses: the XML is well formed
    joined = "\n".join(texts)
    assert EVIL_A in joined                        # shown literally, markup escaped
    assert inert_text(EVIL_B) in joined            # starts with a quote: not a formula
    assert not any(t.startswith("=") for t in texts)
    raw = out.read_text(encoding="utf-8")
    assert "<b>" not in raw and "&lt;b&gt;&amp;" in raw
