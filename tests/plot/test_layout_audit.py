"""The layout audit and the link sheet: nothing cut, nothing overlapping, nothing outside its box.

The check values come from matplotlib's own renderer extents
(:func:`profiler.plot.audit.layout_problems`) and from the JSON report the
sheet is drawn from (the verdict of :func:`profiler.io.report.verdict`).  The
first tests show that the audit can fail: a sheet with a cut text and with
two overlapping texts is reported.
"""

from __future__ import annotations

import copy
import re

import pytest
from click.testing import CliRunner
from sample_sites import DEM, GATEWAY, PUMP

from profiler.cli import main
from profiler.limits import MAX_NAME_CHARS
from profiler.plot import audit
from profiler.plot.audit import layout_problems

BLOCKED_B = (-30.0, -19.845)           # the blocked sample link (issue 17): no line of sight
PAPERS = ("a4", "letter")
# Invented names: 80 characters with spaces, 200 characters with spaces and one 200-character word.
NAME_80 = "Cairnfell Beacon north mast gateway enclosure on the old signal tower ridge road"
NAME_200 = ("Osterby Farm pump house and irrigation controller beside the long southern reservoir dam wall of "
            "the Vellmoor valley water board, station number seventeen, lower terrace, behind the east gate and yard")
WORD_200 = "Millbrook" * 22 + "Tk"
NAMES = {"short": ("A", "B"), "80": (NAME_80, "Osterby Farm pump"), "200": (NAME_200, WORD_200)}
MINUS_WITH_HEMISPHERE = re.compile(r"[\u2212-]\d[\d.]*\u00b0\s*[NSEW]\b")


def test_sample_names_have_the_lengths_the_matrix_needs():
    assert len(NAME_80) == 80 and len(NAME_200) == 200 and len(WORD_200) == 200 == MAX_NAME_CHARS


# --------------------------------------------------------------------------- the audit can fail
def _small_sheet():
    from profiler.plot.sheet import inch_axes, new_sheet, style

    with style():
        fig, renderer, width_in, height_in = new_sheet("a4", 100)
        ax = inch_axes(fig, (1.0, 1.0, 4.0, 2.0), width_in, height_in)
    return fig, ax


def test_audit_reports_a_cut_text_and_overlapping_texts():
    fig, ax = _small_sheet()
    ax.text(0.1, 1.8, "downlink does N\u2026", fontsize=8)
    ax.text(0.1, 0.5, "Worst clearance", fontsize=8)
    ax.text(0.3, 0.5, "868.3125 MHz", fontsize=8)
    kinds = {(p.kind, p.text) for p in layout_problems(fig)}
    assert ("ellipsis", "downlink does N\u2026") in kinds
    assert any(kind == "overlap" for kind, _ in kinds)


def test_audit_reports_a_text_outside_its_box_and_the_frame():
    fig, ax = _small_sheet()
    cell = ax.text(0.05, 0.5, "a value far wider than its cell", fontsize=8)
    audit.contain(cell, ax, (0.0, 0.4, 0.8, 0.7), name="table cell")
    ax.text(-0.95, 0.2, "past the frame", fontsize=8)
    kinds = {p.kind for p in layout_problems(fig)}
    assert {"outside-box", "outside-frame"} <= kinds


def test_audit_of_a_clean_small_sheet_is_empty():
    fig, ax = _small_sheet()
    audit.contain(ax.text(0.1, 0.5, "Worst clearance", fontsize=8), ax, (0.0, 0.3, 1.5, 0.8))
    ax.text(2.0, 0.5, "868.3125 MHz", fontsize=8)
    assert layout_problems(fig) == []


# --------------------------------------------------------------------------- the shared fitting
def test_fit_text_wraps_then_shrinks_and_never_cuts():
    from profiler.plot.sheet import new_sheet, style
    from profiler.plot.textfit import MIN_FONT_PT, Measure, fit_text

    with style():
        _, renderer, _, _ = new_sheet("a4", 100)
        measure = Measure(renderer)
        text = "obstructed (no line of sight); uplink closes, downlink does NOT"
        two = fit_text(text, 2.6, measure, 9.5, max_lines=2, bold=True)
        assert two.fits and len(two.lines) == 2 and two.fontsize == 9.5
        assert " ".join(two.lines) == text
        word = fit_text(WORD_200, 1.0, measure, 7.0)          # one long word: broken between characters
        assert "".join(word.lines) == WORD_200 and word.fits and word.width_in <= 1.0
        tiny = fit_text(NAME_200, 0.5, measure, 7.0, max_lines=2)   # cannot fit: reported, still whole
        assert not tiny.fits and tiny.fontsize == MIN_FONT_PT
        assert " ".join(tiny.lines).replace(" ", "") == NAME_200.replace(" ", "")


def test_draw_tables_reports_overflow_instead_of_cutting():
    from profiler.plot.sheet import inch_axes, new_sheet, style
    from profiler.plot.tables import draw_tables
    from profiler.plot.textfit import LayoutOverflow

    rows = [(f"Row {i}", NAME_200) for i in range(6)]
    with style():
        fig, renderer, width_in, height_in = new_sheet("a4", 100)
        ax = inch_axes(fig, (1.0, 1.0, 2.0, 1.0), width_in, height_in)
        with pytest.raises(LayoutOverflow):
            draw_tables(ax, renderer, [("Names", None, rows)], strict=True)
        used = draw_tables(ax, renderer, [("Names", None, rows)])
    assert used > 1.0                                        # said, not hidden: taller than its axes
    assert not [p for p in layout_problems(fig) if p.kind in ("ellipsis", "outside-box")]


def test_abbreviate_keeps_the_whole_name():
    from profiler.plot.sheet import abbreviate

    shown = abbreviate(NAME_80, 14)
    assert "\u2026" not in shown and shown.replace("\n", " ") == NAME_80
    assert max(len(line) for line in shown.splitlines()) <= 14


# --------------------------------------------------------------------------- the link sheet matrix
@pytest.fixture(scope="module")
def link_reports():
    """The two sample links (line of sight, blocked), computed once; names set per case."""
    from profiler.api import link

    return {"los": link(GATEWAY, PUMP, dem=DEM).to_dict(), "blocked": link(GATEWAY, BLOCKED_B, dem=DEM).to_dict()}


def _named(report, names):
    out = copy.deepcopy(report)
    out["site_a"]["name"], out["site_b"]["name"] = names
    return out


@pytest.fixture(scope="module")
def sheets(link_reports):
    """``sheet(case, names, paper)`` -> (report, figure, problems, drawn texts), each built and audited once."""
    from matplotlib.text import Text

    from profiler.plot.link import build_link_figure

    built = {}

    def sheet(case, names, paper):
        key = (case, names, paper)
        if key not in built:
            report = _named(link_reports[case], NAMES[names])
            fig = build_link_figure(report, paper=paper, dpi=100)
            problems = layout_problems(fig)          # draws the figure once
            texts = [t for t in fig.findobj(Text) if t.get_visible() and t.get_text().strip()]
            built[key] = (report, fig, problems, texts)
        return built[key]

    return sheet


@pytest.mark.parametrize("paper", PAPERS)
@pytest.mark.parametrize("names", sorted(NAMES))
@pytest.mark.parametrize("case", ["los", "blocked"])
def test_link_sheet_layout_is_clean(sheets, case, names, paper):
    from profiler.io.report import verdict

    report, _, problems, texts = sheets(case, names, paper)
    assert problems == [], "\n".join(str(p) for p in problems[:10])
    badge = [t for t in texts if t.get_gid() == "title-badge"]
    assert len(badge) == 1 and " ".join(badge[0].get_text().split()) == verdict(report)
    shown = " ".join(t.get_text() for t in texts)
    assert not MINUS_WITH_HEMISPHERE.search(shown), MINUS_WITH_HEMISPHERE.search(shown).group(0)
    if names != "short":         # each full name is on the sheet (wrapped, maybe broken inside a word)
        flat = "".join(shown.split())
        for name in NAMES[names]:
            assert "".join(name.split()) in flat


@pytest.mark.parametrize("paper", PAPERS)
def test_blocked_badge_says_not_in_every_paper(sheets, paper):
    texts = sheets("blocked", "short", paper)[3]
    badge = [t for t in texts if t.get_gid() == "title-badge"][0]
    assert "downlink does NOT" in " ".join(badge.get_text().split())
    assert badge.get_fontsize() >= 8.0        # two lines at (nearly) full size, not shrunk to nothing


def test_site_named_by_its_letter_is_labelled_once(sheets):
    drawn = sheets("los", "short", "a4")[3]               # sites named A and B
    texts = [t.get_text() for t in drawn]
    assert not any(re.match(r"^(A\s+A|B\s+B)\b", s) for s in texts), [s for s in texts if s[:1] in "AB"]
    labels = {t.get_gid(): t.get_text() for t in drawn if (t.get_gid() or "").startswith("site-label")}
    assert labels == {"site-label-a": "A", "site-label-b": "B"}
    ends = [s.splitlines()[0] for s in texts if "\nmast " in s]
    assert sorted(ends) == ["A", "B"]


def test_declination_has_no_sign_beside_its_hemisphere_letter():
    from profiler.plot.link_tables import declination_text

    # WMM declination east positive (NOAA/BGS WMM2025 report): west is a letter, not a minus sign
    assert declination_text(-24.1) == "24.10\u00b0 W"
    assert declination_text(4.04) == "4.04\u00b0 E"
    assert declination_text(-0.001) == "0.00\u00b0"
    assert declination_text(None) == "\u2014"


def test_radio_table_units_in_the_headers(link_reports):
    from profiler.plot.link_tables import radio_block

    _, header, rows = radio_block(link_reports["blocked"])
    number = re.compile(r"^[+\u2212-]?\d")
    for j, head in enumerate(header):
        unit = re.search(r"\[([^\]]+)\]$", head)
        if unit is None:
            continue
        for row in rows:           # a "[unit]" header: the cell is a number in that unit
            assert number.match(row[j]), (head, row[j])
            assert not row[j].rstrip().endswith(unit.group(1)), (head, row[j])
    assert any("SF" in head and "kHz" in head for head in header)


# --------------------------------------------------------------------------- names too long
def _link_args(name_a):
    return ["link", "--dem", str(DEM[0]), "--site-a", f"{GATEWAY[0]},{GATEWAY[1]}", "--site-b",
            f"{PUMP[0]},{PUMP[1]}", "--name-a", name_a, "--json", "-"]


def test_name_of_201_characters_refused_with_one_line():
    result = CliRunner().invoke(main, _link_args("x" * (MAX_NAME_CHARS + 1)))
    assert result.exit_code == 2
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("profiler: error: ") and "200 characters" in lines[0]
    assert result.stdout == ""


def test_name_of_200_characters_accepted():
    import json

    result = CliRunner().invoke(main, _link_args("x" * MAX_NAME_CHARS))
    assert result.exit_code == 0, result.stderr
    assert json.loads(result.stdout)["site_a"]["name"] == "x" * MAX_NAME_CHARS


def test_long_names_refused_by_every_entry_point(tmp_path):
    import profiler
    from profiler.errors import ProfilerError
    from profiler.products.sites import sites_from_records

    long = "y" * (MAX_NAME_CHARS + 1)
    with pytest.raises(ProfilerError, match="at most 200 characters"):
        profiler.link(GATEWAY, PUMP, dem=DEM, name_b=long)
    with pytest.raises(ProfilerError, match="at most 200 characters"):
        sites_from_records([{"name": long, "lat_deg": 1.0, "lon_deg": 2.0, "mast_m": 3.0, "role": "gateway"}])
    sites = tmp_path / "sites.csv"
    sites.write_text(f"name,lat_deg,lon_deg,mast_m,role\n{long},{GATEWAY[0]},{GATEWAY[1]},10,gateway\n"
                     f"n1,{PUMP[0]},{PUMP[1]},2,node\n", encoding="utf-8")
    for args in (["network", "--dem", str(DEM[0]), "--sites", str(sites), "--json", "-"],
                 ["coverage", "--dem", str(DEM[0]), "--site", f"{GATEWAY[0]},{GATEWAY[1]}", "--mast-m", "10",
                  "--radius-km", "1", "--out", str(tmp_path / "c.tif"), "--name", long],
                 ["mast", "--dem", str(DEM[0]), "--site-a", f"{GATEWAY[0]},{GATEWAY[1]}", "--site-b",
                  f"{PUMP[0]},{PUMP[1]}", "--name-b", long, "--solve", "b"]):
        result = CliRunner().invoke(main, args)
        assert result.exit_code == 2, (args[0], result.stderr)
        assert len(result.stderr.splitlines()) == 1 and "200 characters" in result.stderr, args[0]
    assert not (tmp_path / "c.tif").exists()
