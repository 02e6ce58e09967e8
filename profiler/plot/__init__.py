"""Sheets (figures) drawn from the JSON reports: one module per sheet, the shared style in one place.

* :mod:`profiler.plot.sheet`: paper sizes, fonts, frame, title block,
  tables, legend style, provenance footer and caution line, text helpers;
* :mod:`profiler.plot.basemap`: map extent, hillshade, north arrow, scale
  bar, degree ticks, label geometry;
* :mod:`profiler.plot.link` (+ :mod:`profiler.plot.profile_panel`): the
  link sheet; :mod:`profiler.plot.mast`: the mast sheet;
  :mod:`profiler.plot.network`: the network map; :mod:`profiler.plot.siting`:
  the gateway siting sheet (over the network map's drawing);
  :mod:`profiler.plot.coverage`: the coverage map;
* :mod:`profiler.plot.continuation`: continuation sheets for the list
  entries a sheet has no room for (``build_*_sheets`` return them all).

Importing this package does not import matplotlib: the modules import it
inside the functions that draw, so ``profiler link --json -`` starts fast.
"""

from .coverage import build_coverage_figure, build_coverage_sheets, write_coverage_figure
from .link import build_link_figure, write_link_figure
from .mast import write_mast_figure
from .network import build_network_figure, build_network_sheets, link_status, write_network_figure
from .sheet import FIGURE_FORMATS, PAPER_SIZES_IN, figure_format, paper_size_in
from .siting import build_siting_figure, build_siting_sheets, write_siting_figure

__all__ = ["PAPER_SIZES_IN", "FIGURE_FORMATS", "figure_format", "paper_size_in", "write_mast_figure",
           "build_link_figure", "write_link_figure", "build_network_figure", "write_network_figure",
           "link_status", "build_coverage_figure", "write_coverage_figure", "build_siting_figure",
           "write_siting_figure", "build_coverage_sheets", "build_network_sheets", "build_siting_sheets"]
