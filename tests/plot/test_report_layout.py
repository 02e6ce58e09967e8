"""The ``--report`` PDF pages of ``link`` and ``mast``: layout audit, wording, numbers equal to the JSON.

Each page is built as a figure (``build_link_report_pages`` /
``build_mast_report_pages``, as the writers do) and checked with
:func:`profiler.plot.audit.layout_problems`, which measures every drawn text
with matplotlib's own renderer (inside the frame and its table cell, no
overlap, no ellipsis).  The texts are read back from the drawn figure and
compared with the JSON report beside it and with click's own option
objects.  Sites are the invented Vellmoor valley ones on the bundled
synthetic terrain; 100 dpi keeps the file fast.
"""

import json

import click
import pytest
from click.testing import CliRunner
from sample_sites import DEM, GATEWAY, PUMP  # noqa: E402

from profiler.api import link
from profiler.cli import main
from profiler.cli.link import link_command
from profiler.cli.options import run_record
from profiler.plot.audit import layout_problems
from profiler.plot.report_pdf import build_link_report_pages, build_mast_report_pages
from profiler.plot.sheet import num

BLOCKED_B = (-30.0, -19.845)          # the ridge between it and the gateway: no line of sight
LONG_A = ("Cairnfell Beacon upper hill-top gateway cabinet beside the old signal mast on the northern "
          "shoulder of the fell above the Vellmoor reservoir dam, reached by the quarry track from Osterby")[:200]
LONG_B = ("Osterby Farm lower pump house telemetry node in the stone outbuilding by the sheep dip, next "
          "to the diesel tank and the borehole head, south of the Harrowback Ridge footpath and gate")[:200]
# paper x names x geometry, each value of each dimension at least twice (pairwise)
CASES = {"a4-short-los": ("a4", "Cairnfell Beacon", "Osterby Farm pump", PUMP),
         "letter-short-blocked": ("letter", "Cairnfell Beacon", "Osterby Farm pump", BLOCKED_B),
         "a4-long-blocked": ("a4", LONG_A, LONG_B, BLOCKED_B),
         "letter-long-los": ("letter", LONG_A, LONG_B, PUMP)}


def _ll(p):
    return f"{p[0]},{p[1]}"


def _record(command, args):
    """The record ``run_record()`` makes inside ``command`` parsing ``args`` (as the CLI would)."""
    ctx = command.make_context(command.name, list(args))
    with ctx:
        record = run_record()
    record["command_line"] = ["profiler", command.name, *args]
    return record


def _texts(fig) -> list[str]:
    """The non-blank texts of a page in the order they were made, wrapped lines joined by a space
    (no redraw: the audit drew the page)."""
    from matplotlib.text import Text

    return [" ".join(str(t.get_text()).split("\n")) for t in fig.findobj(Text)
            if t.get_visible() and str(t.get_text()).strip()]


def _audited(pages):
    """Each page's layout problems as text, every page drawn once."""
    return [[str(p) for p in layout_problems(fig)] for fig in pages]


def _flat(fig) -> str:
    """Every drawn text of a page, wrapped lines joined by spaces."""
    return " ".join(" ".join(s.split()) for s in _texts(fig))


@pytest.fixture(scope="module", params=list(CASES))
def link_case(request):
    paper, name_a, name_b, site_b = CASES[request.param]
    report = link(GATEWAY, site_b, dem=DEM, name_a=name_a, name_b=name_b).to_dict()
    args = ["--dem", str(DEM[0]), "--site-a", _ll(GATEWAY), "--site-b", _ll(site_b), "--name-a", name_a,
            "--name-b", name_b, "--k", "4/3", "--paper", paper, "--report", "r.pdf"]
    pages = build_link_report_pages(report, paper, 100, [str(DEM[0])], _record(link_command, args))
    return request.param, report, pages, _audited(pages)


def test_link_report_sheet_page_layout(link_case):
    """Page 1 is the link sheet: nothing cut, outside its box or overlapping (shared text fitting)."""
    assert link_case[3][0] == [], "\n".join(str(p) for p in link_case[3][0][:10])


def test_link_report_table_pages_layout(link_case):
    """Budget and record pages: every text inside the frame and its cell, no overlap, nothing cut."""
    case, _, pages, problems = link_case
    for i, fig in enumerate(pages[1:], start=2):
        assert problems[i - 1] == [], (case, i)
        assert f"page {i} of {len(pages)}" in _texts(fig), (case, i)


def _page(pages, heading):
    return [fig for fig in pages[1:] if any(t.startswith(heading) for t in _texts(fig))]


def test_budget_page_readable_rows_and_json_numbers(link_case):
    case, report, pages, _ = link_case
    budget = _page(pages, "Link budget")
    assert budget, case
    text = " ".join(_flat(fig) for fig in budget)
    texts = [t for fig in budget for t in _texts(fig)]
    up, down, ends = report["budget"], report["budget_downlink"], report["radio_ends"]
    name = {"a": report["site_a"]["name"], "b": report["site_b"]["name"]}
    # per-end names instead of "b" / "a"
    assert f"Node {name['b']}" in text and f"Gateway {name['a']}" in text
    # readable compliance: EIRP against the EU868 limit (ETSI EN 300 220 / LoRaWAN RP002: 16 dBm ERP band)
    for key in ("a", "b"):
        line = f"EIRP {ends[key]['eirp_dbm']:.1f} dBm, limit {ends[key]['max_eirp_dbm']:g} dBm: met"
        assert line in text, line
    assert "Duty cycle 1 % (sub-band of 868.3125 MHz)" in text
    for raw in ("max eirp dbm", "eirp ok", "duty cycle 0.01", "Rate [kHz]", "smooth surface height a m"):
        assert raw not in text, raw
    # units in the heads; the data-rate cell says what it is
    assert {"Data rate", "Sensitivity [dBm]", "Margin [dB]", "Time on air [ms]"} <= set(texts)
    assert f"DR{up['dr']} SF{up['sf']}/{up['bw_khz']:g} kHz" in text
    # the numbers are the JSON's, as formatted on the page
    for value in (num(up["margin_db"], "+.2f", " dB"), num(down["margin_db"], "+.2f", " dB"),
                  num(up["rx_power_dbm"], ".2f", " dBm"), num(up["path_loss_db"], ".2f", " dB"),
                  num(report["loss_db"]["free_space"], ".2f", " dB")):
        assert value in texts, value
    for row in report["lora"]["uplink"]["per_dr"]:
        assert num(row["margin_db"], "+.1f") in texts and num(row["time_on_air_ms"], ".1f") in texts
    # the RX2 window (LoRaWAN RP002 EU868: 869.525 MHz at DR0)
    rx2 = report["lora"]["downlink"]["rx2"]
    assert rx2["frequency_mhz"] == 869.525 and "Downlink RX2 window (gateway \u2192 node)" in texts
    assert num(rx2["frequency_mhz"], ".4f") in texts and num(rx2["margin_db"], "+.1f") in texts


def _record_rows(pages):
    """(option, value, set by) rows of the record pages' option tables, read back from the figures."""
    rows = []
    for fig in _page(pages, "Record"):
        texts = _texts(fig)
        for i, t in enumerate(texts):
            if t.startswith("--") and i + 2 < len(texts) and texts[i + 2] in ("given", "default"):
                rows.append((t, texts[i + 1], texts[i + 2]))
    return rows


def test_record_page_options_as_on_the_command_line(link_case):
    case, report, pages, _ = link_case
    rows = _record_rows(pages)
    typed = {p.opts[0] for p in link_command.params if isinstance(p, click.Option) and not p.hidden}
    flags = {o for p in link_command.params if isinstance(p, click.Option) for o in p.secondary_opts}
    shown = {opt for opt, _, _ in rows}
    assert shown <= typed | flags and len(shown) == len(typed), case
    assert not {"k-text", "dem-paths", "sheet-date", "--k-text", "--band-name"} & shown
    values = {opt: (value, by) for opt, value, by in rows}
    assert values["--site-a"] == (_ll(GATEWAY), "given")          # no spreadsheet guard, as typed
    assert values["--band"] == (f"{report['band']} (as used)", "default")
    assert values["--k"][1] == "given" and values["--date"] == (f"{report['sheet']['date']} (as used)", "default")
    record = " ".join(_flat(fig) for fig in _page(pages, "Record"))
    assert "'-" not in record and "'" + _ll(GATEWAY) not in record
    assert "Band (as used) EU868" in record


def test_record_text_is_shown_as_given():
    """The sheet-text cleaner keeps a leading ``= - + @`` (the guard is for CSV only) and makes one line."""
    from profiler.textsafe import csv_cell, figure_text

    assert figure_text("-29.9125,-19.955") == "-29.9125,-19.955"
    assert figure_text('=HYPERLINK("x")\tpump\nhouse') == '=HYPERLINK("x") pump house'
    assert csv_cell("-29.9125,-19.955") == "'-29.9125,-19.955"      # OWASP CSV injection guard stays in CSV


@pytest.fixture(scope="module")
def mast_pages(tmp_path_factory):
    """A long height table: 2..100 m at B in 1 m steps (99 rows), as the CLI writes it."""
    folder = tmp_path_factory.mktemp("mast")
    args = ["--dem", str(DEM[0]), "--site-a", _ll(GATEWAY), "--site-b", _ll(PUMP), "--solve", "b",
            "--max-mast-m", "100", "--json", str(folder / "m.json")]
    res = CliRunner().invoke(main, ["mast", *args], catch_exceptions=False)
    assert res.exit_code in (0, 3), res.output
    report = json.loads((folder / "m.json").read_text(encoding="utf-8"))
    from profiler.cli.mast import mast_command

    pages = build_mast_report_pages(report, "letter", 100, _record(mast_command, args))
    return report, pages, [[]] + _audited(pages[1:])     # page 1, the mast sheet, is tested in its own file


def test_mast_report_lists_every_table_row(mast_pages):
    report, pages, problems = mast_pages
    table = _page(pages, "Mast table")
    assert len(table) >= 2 and len(report["table"]) > 90
    shown = []
    for fig in table:
        texts = _texts(fig)
        heads = [i for i, t in enumerate(texts) if t == "Mast A [m]"]
        for i in heads:   # rows follow each head: mast A, mast B, ... 7 cells a row
            j = i + 7
            while j + 1 < len(texts) and texts[j] == num(report["table"][0]["mast_a_m"], ".2f"):
                shown.append(texts[j + 1])
                j += 7
    assert shown == [num(r["mast_b_m"], ".2f") for r in report["table"]]
    assert any("(continued)" in t for t in _texts(table[1]))
    n = len(pages)
    for i, fig in enumerate(pages[1:], start=2):
        assert f"page {i} of {n}" in _texts(fig)
        assert problems[i - 1] == [], i


def test_unbroken_long_values_wrap_inside_their_cells_and_continue():
    """A path with no spaces, a 200-character word and more rows than a page holds: wrapped (between
    characters when needed), continued on a second page, every character still there."""
    from profiler.plot.report_layout import Measure, Table, draw_placed, paginate
    from profiler.plot.sheet import inch_axes, new_sheet, style

    path = "/srv/vellmoor/elevation/" + "tiles/" * 40 + "vellmoor_synthetic_1s.tif"
    word = "Osterby" * 29                                        # 203 characters, no break
    rows = tuple((f"row {i}", f"value {i} " * 3) for i in range(60))
    groups = [[Table("Command line", None, ((path,),))], [Table("Names", ("", "Name"), (("B", word),)),
                                                           Table("Long", None, rows)]]
    with style():
        fig, renderer, width_in, height_in = new_sheet("letter", 100)
        measure = Measure(renderer)
        pages = paginate(groups, measure, 6.0, 4.0)
        assert len(pages) >= 2 and all(page[0].table.title == "Long (continued)" for page in pages[1:])
        figs = []
        for placed in pages:
            fig, _, width_in, height_in = new_sheet("letter", 100)
            draw_placed(inch_axes(fig, (1.0, 2.0, 6.0, 4.0), width_in, height_in), measure, placed)
            figs.append(fig)
        assert [[str(p) for p in layout_problems(f)] for f in figs] == [[]] * len(figs)
    cells = [str(t.get_text()) for f in figs for t in f.texts]
    assert path in [c.replace("\n", "") for c in cells] and word in [c.replace("\n", "") for c in cells]
    assert any("\n" in c and c.replace("\n", "") == path for c in cells)            # it did wrap
    assert [c for c in cells if c.startswith("row ")] == [r[0] for r in rows]       # every row, in order


def test_page_headings_name_the_link_when_it_fits(link_case):
    """'Link budget: A – B' on a page; the bare heading only when the names do not fit beside the badge."""
    case, report, pages, _ = link_case
    budget = _page(pages, "Link budget")[0]
    names = f"{report['site_a']['name']} \u2013 {report['site_b']['name']}"
    heading = next(t for t in _texts(budget) if t.startswith("Link budget"))
    if len(names) < 60:
        assert heading == f"Link budget: {names}", case
    else:
        assert heading == "Link budget", case
