"""Every regional plan's labels fit the sheets (issue 17's audit matrix: "every regional plan's longest labels").

The link sheet and the report's budget pages of a blocked link on letter paper (the narrower
sheet) are built for each plan of LoRaWAN RP002-1.0.4 that ``profiler bands`` lists, and checked
with matplotlib's own renderer extents (``profiler.plot.audit``): nothing cut, nothing overlapping,
nothing outside its cell or the frame.
"""

import pytest

from profiler import link
from profiler.lora.bands import BANDS
from profiler.plot.audit import layout_problems

DEM = ["dem_samples"]
GATEWAY, NODE = (-29.9125, -19.955), (-30.0, -19.845)     # invented Vellmoor sites, the ridge between


@pytest.fixture(autouse=True)
def _root(monkeypatch):
    from pathlib import Path

    monkeypatch.chdir(Path(__file__).resolve().parents[2])


def test_every_band_is_in_the_matrix():
    assert {"EU868", "US915", "AU915", "AS923", "KR920", "IN865", "CN470", "RU864", "EU433"} <= set(BANDS)


@pytest.mark.parametrize("band", sorted(BANDS))
def test_link_sheet_and_budget_pages_fit_for_every_regional_plan(band):
    from profiler.plot.report_pdf import build_link_report_pages

    report = link(GATEWAY, NODE, dem=DEM, band=band, name_a="Cairnfell Beacon",
                  name_b="Osterby Farm pump, north field").to_dict()
    pages = build_link_report_pages(report, "letter", 100, DEM, None)
    for number, fig in enumerate(pages[:-1], start=1):          # the record page does not depend on the plan
        problems = layout_problems(fig)
        assert problems == [], (band, number, [str(p) for p in problems])
