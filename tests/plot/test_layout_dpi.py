"""A sheet laid out at one resolution must fit at the resolution it is saved at.

The sheets measure their text while they are built (at 100 dpi unless a PNG
asks for its own); a PNG is then saved at ``--dpi`` (default 150) and a PDF
or SVG with the font's own metrics.  With hinted glyphs text widths changed
by up to 3 % with the resolution, so a line measured to fit at 100 dpi ran
past its box at 150 dpi (the siting notes into the title block, the verdict
out of its badge).  Check value: matplotlib's own renderer extents at each
resolution (``profiler.plot.audit``).
"""

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from profiler.cli import main
from profiler.plot.audit import layout_problems

ROOT = Path(__file__).resolve().parents[2]
DEM = [str(ROOT / "dem_samples")]
SITES = ROOT / "examples" / "siting_sites.csv"
BLOCKED = ("-29.9125,-19.955", "-30.0,-19.845")     # Cairnfell Beacon to a node behind the ridge (invented)


def _json(*args):
    res = CliRunner().invoke(main, [*args, "--json", "-"], catch_exceptions=False)
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


@pytest.fixture(scope="module")
def reports():
    link = _json("link", "--dem", DEM[0], "--site-a", BLOCKED[0], "--site-b", BLOCKED[1])
    net = _json("network", "--dem", DEM[0], "--sites", str(SITES), "--no-progress")
    siting = _json("siting", "--dem", DEM[0], "--sites", str(SITES), "--redundancy", "3", "--no-progress")
    return link, net, siting


def _sheets(reports, paper):
    from profiler.plot.link import build_link_figure
    from profiler.plot.network import build_network_figure
    from profiler.plot.siting import build_siting_figure

    link, net, siting = reports
    yield "link", build_link_figure(link, paper=paper, dem_paths=DEM)
    yield "network", build_network_figure(net, paper=paper, dem_paths=DEM)
    yield "siting", build_siting_figure(siting, net, paper=paper, dem_paths=DEM)


@pytest.mark.parametrize("paper", ["a4", "letter"])
def test_sheets_built_at_100_dpi_fit_when_saved_at_72_150_and_300_dpi(reports, paper):
    for name, fig in _sheets(reports, paper):
        for dpi in (72, 150, 300):
            fig.set_dpi(dpi)
            problems = layout_problems(fig)
            assert problems == [], (name, dpi, [str(p) for p in problems])


def test_audit_flags_a_note_running_into_the_title_block():
    """The audit's reserved regions: a text that is not the title block's, crossing its rules."""
    from profiler.plot.sheet import inch_axes, new_sheet, put_text, style
    from profiler.plot.titleblock import draw_title_box

    with style():
        fig, renderer, w, h = new_sheet("a4")
        block = inch_axes(fig, (w - 3.4, 0.4, 3.0, 1.5), w, h)
        draw_title_box(block, renderer, [[("Title", "Test sheet")]])
        notes = inch_axes(fig, (0.4, 1.6, w - 0.8, 0.3), w, h)   # level with the block's top row
        put_text(notes, 0.0, 0.15, "a note " * 40, fontsize=6)      # runs into the title block
    kinds = {p.kind for p in layout_problems(fig)}
    assert "intrudes" in kinds
