"""Time profiler.propagation.diffraction.delta_bullington on a 3,000-sample synthetic profile.

Run:  python3 benchmarks/bench_diffraction.py [--samples N] [--repeat R]

Prints the best-of-R wall time per call in milliseconds and the profile
samples processed per second.  The project target is under 2 ms per call for
3,000 samples; this script reports, it does not assert.
"""

import argparse
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from _timing import best_of  # noqa: E402

from profiler.propagation.diffraction import bullington, delta_bullington, knife_edge  # noqa: E402


def synthetic_profile(samples, length_m=30_000.0, seed=7):
    """Rolling hills with a ridge near mid-path, invented terrain [m amsl]."""
    rng = np.random.default_rng(seed)
    d = np.linspace(0.0, length_m, samples)
    h = (250.0 + 60.0 * np.sin(d / 3_500.0) + 40.0 * np.exp(-((d - 0.55 * length_m) / 1_500.0) ** 2)
         + rng.normal(0.0, 2.0, samples))
    return d, h


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", type=int, default=3000)
    parser.add_argument("--repeat", type=int, default=500)
    args = parser.parse_args(argv)

    d, h = synthetic_profile(args.samples)
    h_a, h_b = h[0] + 15.0, h[-1] + 10.0
    f_mhz, ae_m = 868.0, 8_500_000.0

    cases = {
        "delta_bullington": lambda: delta_bullington(d, h, h_a, h_b, f_mhz, ae_m, "vertical", 0.0),
        "bullington": lambda: bullington(d, h, h_a, h_b, f_mhz, ae_m),
        "knife_edge": lambda: knife_edge(d, h, h_a, h_b, f_mhz, ae_m),
    }
    result = cases["delta_bullington"]()
    print(f"profile: {args.samples} samples over {d[-1] / 1000:.1f} km, {f_mhz:g} MHz, "
          f"Ld = {result.loss_db:.2f} dB (best of {args.repeat})")
    for name, func in cases.items():
        func()  # warm-up
        t = best_of(func, args.repeat)
        print(f"{name:17s} {t * 1e3:8.3f} ms   {args.samples / t:14,.0f} samples/s")


if __name__ == "__main__":
    main()
