"""Published validation data, read where the project keeps it: ``../shared/reference/`` beside the checkout.

Each folder there has a README saying what its columns mean and how to cite
it (ITU-R SG3 validation examples for P.452-18, P.1812, P.2109).  The data
are not copied into the repository; ``PROFILER_REFERENCE_DIR`` points the
tests at another copy.  Tests that need a folder that is not there skip with
that reason (a fresh clone without the reference data runs everything else).
"""

import csv
import os
from pathlib import Path

from sample_sites import ROOT

REFERENCE_DIR = Path(os.environ.get("PROFILER_REFERENCE_DIR") or ROOT.parent / "shared" / "reference")


def reference_folder(name: str) -> Path | None:
    """``REFERENCE_DIR / name`` when it holds data, else None."""
    path = REFERENCE_DIR / name
    return path if (path / "README.md").is_file() else None


def missing_reason(name: str) -> str:
    return (f"published validation data {name!r} not found under {REFERENCE_DIR} "
            "(set PROFILER_REFERENCE_DIR to its folder)")


def expected_rows(folder: Path | None) -> list[dict]:
    """The rows of ``folder / "expected.csv"`` as dicts of strings; [] when the folder is missing."""
    if folder is None:
        return []
    with open(folder / "expected.csv", newline="") as fh:
        return list(csv.DictReader(fh))
