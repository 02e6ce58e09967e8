"""The forked drawing process of `profiler link --plot` (profiler.figure_worker).

The reference is the same drawing done in one process: the sheet a
`profiler link` process draws through its worker must be pixel for pixel
the sheet :func:`profiler.plot.write_link_figure` draws in-process from the
report that process wrote, and a refusal raised in the worker must reach
the parent with the message the function gives in-process.  Both run in
fresh interpreters (the worker forks only where matplotlib is not imported
yet and no other thread runs).
"""

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from profiler.errors import ProfilerError
from profiler.plot.sheet import check_dpi

ROOT = Path(__file__).resolve().parents[1]
DEM = ROOT / "dem_samples"
ENV = {**os.environ, "PYTHONPATH": f"{ROOT}{os.pathsep}{os.environ.get('PYTHONPATH', '')}"}

pytestmark = pytest.mark.skipif(not hasattr(os, "fork"), reason="the drawing process needs os.fork")


def test_worker_sheet_matches_the_in_process_sheet(tmp_path):
    from PIL import Image

    from profiler.plot import write_link_figure

    forked, again, report_path = tmp_path / "forked.png", tmp_path / "again.png", tmp_path / "r.json"
    subprocess.run([sys.executable, "-m", "profiler", "link", "--dem", str(DEM), "--site-a", "-29.9125,-19.955",
                    "--site-b", "-29.9,-19.825", "--name-a", "Cairnfell Beacon", "--name-b", "Osterby Farm pump",
                    "--band", "EU868", "--date", "2026-03-01", "--json", str(report_path), "--plot", str(forked),
                    "--dpi", "60"], check=True, env=ENV, cwd=ROOT, capture_output=True, timeout=120)
    report = json.loads(report_path.read_text())
    write_link_figure(report, again, dpi=60, dem_paths=[DEM], date_text=report["sheet"]["date"])
    a, b = np.asarray(Image.open(forked)), np.asarray(Image.open(again))
    assert a.shape == b.shape == (int(210 / 25.4 * 60), int(297 / 25.4 * 60), 4)   # A4 at 60 dpi, truncated
    assert np.array_equal(a, b)


SCRIPT = """
import sys
from profiler.errors import ProfilerError
from profiler.figure_worker import drawing_process
with drawing_process() as worker:
    assert worker is not None and "matplotlib" not in sys.modules
    worker.call("profiler.plot.sheet:check_dpi", 150)          # returns: no error
    try:
        worker.call("profiler.plot.sheet:check_dpi", "many")
    except ProfilerError as exc:
        print(exc)
"""


def test_worker_passes_a_refusal_on_unchanged():
    out = subprocess.run([sys.executable, "-c", SCRIPT], check=True, env=ENV, capture_output=True, text=True,
                         timeout=60)
    with pytest.raises(ProfilerError) as in_process:
        check_dpi("many")
    assert out.stdout.strip() == str(in_process.value)
