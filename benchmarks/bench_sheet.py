"""Time ``profiler link --plot x.png`` against the same run without a plot.

Run:  python3 benchmarks/bench_sheet.py [--repeat 3] [--dpi 150] [--format png]

Both runs are whole processes (``python -m profiler link ...`` over the
bundled Vellmoor sample terrain), so the ratio includes importing
matplotlib, building the sheet and saving it.  Target (issue 13):
ratio <= 2.  Also prints the in-process split of the plot: build and save.  The script
reports; it does not assert.
"""

import argparse
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from _timing import best_of  # noqa: E402

DEM = ROOT / "dem_samples" / "vellmoor_synthetic_1s.tif"
ARGS = ["link", "--dem", str(DEM), "--site-a", "-29.9125,-19.955", "--site-b", "-29.9,-19.825",
        "--name-a", "Cairnfell Beacon", "--name-b", "Osterby Farm pump", "--band", "EU868", "--date", "2026-03-01"]


def run(extra):
    subprocess.run([sys.executable, "-m", "profiler", *ARGS, *extra], check=True, cwd=ROOT,
                   stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--dpi", type=int, default=150)
    parser.add_argument("--format", default="png", choices=("png", "pdf", "svg"))
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        json_out = str(Path(tmp) / "r.json")
        plot_out = str(Path(tmp) / f"s.{args.format}")
        run(["--json", json_out])     # warm the file cache
        plain = best_of(lambda: run(["--json", json_out]), args.repeat)
        plotted = best_of(lambda: run(["--json", json_out, "--plot", plot_out, "--dpi", str(args.dpi)]), args.repeat)
        from profiler.api import link
        from profiler.plot import build_link_figure
        from profiler.plot.sheet import style

        report = link((-29.9125, -19.955), (-29.9, -19.825), dem=[DEM], band="EU868").to_dict()
        t_import = time.perf_counter()
        import matplotlib.backends.backend_agg  # noqa: F401
        import matplotlib.figure  # noqa: F401

        t0 = time.perf_counter()
        fig = build_link_figure(report, dem_paths=[DEM], dpi=args.dpi if args.format == "png" else 100)
        t1 = time.perf_counter()
        with style():
            fig.savefig(plot_out, dpi=args.dpi,
                        **({"pil_kwargs": {"compress_level": 1}} if args.format == "png" else {}))
        t2 = time.perf_counter()
    print(f"link run without plot   {plain:6.2f} s")
    print(f"link run with --plot    {plotted:6.2f} s  ({args.format}, {args.dpi} dpi)")
    print(f"ratio                   {plotted / plain:6.2f}  (target <= 2)")
    print(f"in process: import matplotlib {t0 - t_import:.2f} s, build {t1 - t0:.2f} s, save {t2 - t1:.2f} s")


if __name__ == "__main__":
    main()
