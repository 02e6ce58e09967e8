"""Bad input, faults and injection: every refusal clean, every output all-or-nothing.

The property-based tests draw option values for ``link``, ``mast`` and
``bands`` from valid and invalid sets (numbers near the float limits, hostile
names, unwritable and missing output folders, outputs a surveyed profile
cannot have) and check the promise stated in docs/outputs.md ("Exit codes and the
output promise"): no traceback, exit 0 (or 3 for an infeasible mast) with an
empty standard error for valid input, exit 2 with exactly one
``profiler: error:`` line for invalid input, no changed or leftover files
after a refusal, CSV that no spreadsheet reads as a formula, KML and SVG that
an XML parser (``xml.etree``, outside the project) accepts.

Default: about 100 examples (under a minute); ``@pytest.mark.slow`` runs more.
"""

from __future__ import annotations

import contextlib
import csv
import hashlib
import io
import json
import math
import tempfile
import warnings
import xml.etree.ElementTree as ET
from pathlib import Path
from unittest import mock

import numpy as np
import pytest
from click.testing import CliRunner
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st
from sample_sites import DEM, GATEWAY, PUMP

from profiler.cli import main

GW = f"{GATEWAY[0]},{GATEWAY[1]}"
PU = f"{PUMP[0]},{PUMP[1]}"
FORMULA_START = ("=", "+", "-", "@")            # OWASP "CSV injection" trigger characters
XML_FORBIDDEN = [chr(c) for c in range(0x20) if chr(c) not in "\t\n\r"] + ["\ufffe", "\uffff"]  # XML 1.0 [2] Char

# ---------------------------------------------------------------- value pools: (text, valid?)
NUMBERS = {
    "--mast-a": (["0", "10", "1000", "2.5", "1e-300"], ["-1", "1e308", "1000.001", "nan", "inf", "abc"]),
    "--mast-b": (["0", "2", "999.9"], ["-0.5", "-1e308", "1e309", "2 m"]),
    "--freq-mhz": (["868.1", "1", "100000", "433.5"], ["0", "1e-300", "1e308", "-5", "100000.1", "nan", "0x10"]),
    "--k": (["4/3", "0.1", "1e6", "2/3", "1.5"],
            ["0", "-1", "1/0", "1e-300", "1e308", "4//3", "__import__('os')", "1/1e300"]),
    "--step-m": (["30", "10000", "5"], ["0", "1e-300", "0.0005", "1e308", "-3", "0.02"]),
    "--tx-power-dbm": (["14", "-30", "60"], ["61", "1e308", "-1e308", "nan"]),
    "--extra-loss-db": (["0", "300", "12.5"], ["-1", "301", "1e308"]),
    "--sf": (["7", "12"], ["6", "13", "7.5", "1e400", "x"]),
    "--payload-bytes": (["1", "255", "12"], ["0", "256", "-1", "99999999999999999999"]),
    # --sea-fraction is the terrain model's: under the default --model p1812 anything but 0 is refused
    "--sea-fraction": (["0"], ["1.1", "-0.1", "nan", "0.3"]),
    "--time-percent": (["50", "1", "10.5"], ["0", "50.1", "nan", "-1"]),
    "--location-percent": (["50", "95", "1", "99"], ["0", "100", "99.5", "inf"]),
    "--location-sigma-db": (["0", "5.5", "30"], ["-1", "31", "nan"]),
    "--area-width-m": (["100", "1", "500"], ["0", "-5", "1e308"]),
    "--delta-n": (["40", "-50", "100"], ["157", "nan", "1e308"]),
    "--n0": (["315", "200", "500"], ["0", "600", "nan"]),
    "--coast-distance-b-km": (["500", "0", "12.5"], ["-1", "1e308"]),
    "--clearance-ratio": (["0.6", "0", "10"], ["11", "-1", "inf"]),
}
MAST_NUMBERS = {
    "--mast-a": (["0", "2", "5"], ["-1", "1e308", "nan"]),
    "--mast-b": (["0", "2", "5"], ["-1", "1e-300x"]),
    "--max-mast-m": (["60", "5", "200"], ["0", "-1", "1001", "1e308"]),
    "--mast-step-m": (["1", "0.5", "100"], ["0", "0.001", "101", "nan"]),
    "--min-margin-db": (["0", "-100", "100"], ["101", "nan", "1e308"]),
    "--low-k": (["2/3", "0.1"], ["0", "1e-300", "-2/3"]),
    "--low-k-clearance": (["0", "0.3"], ["-0.1", "1e308"]),
    "--freq-mhz": (["868.1", "2400"], ["1e-300", "0"]),
}
NAMES = ["Cairnfell Beacon", "\r=1+1", "=HYPERLINK(\"x\")", "  -2+3", "\x1b[31mred\x1b[0m", "a\x00b\x07c",
         "\u202eevil", "x\x85y", "line\nbreak", "Zürich \ufffe\uffff", "\udcff\udcfe bytes", "$x^2$ <b>&amp;",
         "@SUM(A1)", "\t+tab", ""]
SUFFIX = {"--json": ".json", "--csv": ".csv", "--geojson": ".geojson", "--kml": ".kml", "--plot": ".svg"}
# Where an output goes: (kind, valid?).  "locked" is a folder whose temporary files cannot be created.
TARGETS = [("ok", True), ("ok", True), ("ok", True), ("stdout", True), ("missing", False), ("locked", False),
           ("is_dir", False)]


def value_pool(pools):
    """One (option, text, valid) drawn from valid and invalid values (valid ones more often)."""
    def values(opt):
        good = st.sampled_from(pools[opt][0]).map(lambda v: (opt, v, True))
        return st.one_of(good, good, st.sampled_from(pools[opt][1]).map(lambda v: (opt, v, False)))

    return st.sampled_from(sorted(pools)).flatmap(values)


# ---------------------------------------------------------------- running and checking
@contextlib.contextmanager
def output_folder():
    """A folder with an old file per output (must survive a refusal), a locked sub-folder and a sub-folder."""
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        for opt, suffix in SUFFIX.items():
            (root / f"out{suffix}").write_text(f"old {opt}\n")
        (root / "locked").mkdir()
        (root / "adir.json").mkdir()
        real_mkstemp = tempfile.mkstemp

        def mkstemp(*args, dir=None, **kw):
            if dir is not None and Path(dir).name == "locked":
                raise PermissionError(13, "Permission denied")
            return real_mkstemp(*args, dir=dir, **kw)

        with mock.patch("tempfile.mkstemp", mkstemp):
            yield root


def snapshot(root: Path) -> dict:
    return {str(p.relative_to(root)): (hashlib.sha256(p.read_bytes()).hexdigest() if p.is_file() else "dir")
            for p in sorted(root.rglob("*"))}


def target_path(root: Path, option: str, kind: str) -> str:
    suffix = SUFFIX[option]
    return {"ok": str(root / f"out{suffix}"), "stdout": "-", "missing": str(root / "nowhere" / f"x{suffix}"),
            "locked": str(root / "locked" / f"x{suffix}"), "is_dir": str(root / "adir.json")}[kind]


def invoke(args):
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        result = CliRunner().invoke(main, args, catch_exceptions=True)
    numeric = [w for w in caught if issubclass(w.category, RuntimeWarning)]
    return result, numeric


def check_result(result, numeric, valid: bool, allowed=(0,)):
    err = result.stderr
    event(f"exit {result.exit_code}")
    assert "Traceback" not in result.output + err
    assert result.exception is None or isinstance(result.exception, SystemExit), repr(result.exception)
    assert not numeric, [str(w.message) for w in numeric]
    lines = err.splitlines()
    if valid:
        assert result.exit_code in allowed, err
        if result.exit_code == 0:
            assert err == ""
    else:
        assert result.exit_code == 2, (result.exit_code, err, result.stdout[:200])
    if result.exit_code != 0:
        assert len(lines) == 1 and lines[0].startswith("profiler: error: "), err
        assert lines[0].count("profiler: error:") == 1


def check_outputs_written(root: Path, before: dict, after: dict, written: dict):
    leftovers = [name for name in after if Path(name).name.startswith(".")]
    assert not leftovers, leftovers
    for name, digest in before.items():
        if name not in {Path(p).name for p in written.values()}:
            assert after.get(name) == digest, f"{name} changed"
    for option, path in written.items():
        text = Path(path).read_text(encoding="utf-8")
        if option == "--csv":
            check_csv(text)
        elif option in ("--kml", "--plot"):
            ET.fromstring(text.encode("utf-8"))   # raises on anything XML 1.0 forbids
        elif option in ("--json", "--geojson"):
            json.loads(text)


def check_csv(text: str):
    assert "\r" not in text                      # no reader that ends records at CR sees a new cell
    for row in csv.reader(io.StringIO(text)):
        for cell in row:
            assert not any(ord(c) < 0x20 or 0x7f <= ord(c) <= 0x9f for c in cell), repr(cell)
            stripped = cell.lstrip(" \u00a0")
            if stripped.startswith(FORMULA_START):
                with contextlib.suppress(ValueError):
                    float(stripped)
                    continue                     # a plain negative number, not a formula
                pytest.fail(f"formula-like CSV cell {cell!r}")


def surveyed_csv(root: Path, kind: str) -> tuple[str, bool]:
    """A surveyed profile: a good one, or one of the bad variants (values near the float limits)."""
    d = np.linspace(0.0, 5000.0, 41)
    h = 100.0 + 30.0 * np.sin(d / 700.0)
    if kind == "huge_height":
        h[7] = 1e308
    elif kind == "tiny_spacing":
        d[5] = d[4] + 1e-300
    elif kind == "huge_distance":
        d[-1] = 1e308
    elif kind == "nan":
        h[3] = math.nan
    path = root / f"profile_{kind}.csv"
    path.write_text("distance_m,elevation_m\n" + "".join(f"{float(a)!r},{float(b)!r}\n" for a, b in zip(d, h)))
    return str(path), kind == "good"


@st.composite
def link_case(draw):
    base = draw(st.sampled_from(["dem", "dem", "dem", "profile"]))
    profile_kind = draw(st.sampled_from(["good", "good", "good", "huge_height", "tiny_spacing", "huge_distance",
                                         "nan"])) if base == "profile" else None
    numbers = draw(st.lists(value_pool(NUMBERS), max_size=3, unique_by=lambda t: t[0]))
    if base == "profile":
        numbers = [n for n in numbers if n[0] != "--step-m"]
    names = draw(st.tuples(st.sampled_from(NAMES), st.sampled_from(NAMES)))
    site_b = draw(st.sampled_from([(PU, True)] * 6 + [("91,0", False), ("abc", False), ("0,181", False),
                                                     ("nan,0", False), ("0,0", False)]))
    wanted = draw(st.lists(st.sampled_from(["--json", "--csv", "--geojson", "--kml"]), max_size=3, unique=True))
    targets = {opt: draw(st.sampled_from(TARGETS)) for opt in wanted}
    plot = draw(st.integers(0, 11))               # a figure is slow: draw it rarely
    if plot == 0:
        targets["--plot"] = ("ok", True)
    elif plot == 1:
        targets["--plot"] = draw(st.sampled_from([("stdout", False), ("missing", False), ("bad_suffix", False)]))
    return base, profile_kind, numbers, names, site_b, targets


def run_link(case, root: Path):
    base, profile_kind, numbers, (name_a, name_b), (site_b, site_ok), targets = case
    args, valid = ["link", "--name-a", name_a, "--name-b", name_b], True
    if base == "dem":
        args += ["--dem", str(DEM[0]), "--site-a", GW, "--site-b", site_b]
        valid &= site_ok
    else:
        path, ok = surveyed_csv(root, profile_kind)
        args += ["--profile", path]
        valid &= ok and not ({"--kml", "--geojson"} & set(targets))   # a surveyed profile has no coordinates
    for opt, value, ok in numbers:
        args += [opt, value]
        valid &= ok
    written = {}
    for opt, (kind, ok) in targets.items():
        path = str(root / "out.txt") if kind == "bad_suffix" else target_path(root, opt, kind)
        args += [opt, path]
        valid &= ok
        if kind == "ok":
            written[opt] = path
    if sum(kind == "stdout" for kind, _ in targets.values()) > 1:
        valid = False                              # two outputs cannot share standard output
    if "--plot" in targets:
        args += ["--dpi", "50"]
    return args, valid, written


def property_link(case):
    with output_folder() as root:
        args, valid, written = run_link(case, root)
        before = snapshot(root)
        result, numeric = invoke(args)
        check_result(result, numeric, valid)
        after = snapshot(root)
        if result.exit_code != 0:
            assert after == before                 # a refusal changes no file and leaves none behind
        else:
            check_outputs_written(root, before, after, written)
            if any(kind == "stdout" for kind, _ in case[5].values()):
                assert result.stdout                # the one output sent to standard output
            else:
                assert "\x1b" not in result.stdout and "\r" not in result.stdout  # terminal text escaped


@st.composite
def mast_case(draw):
    numbers = draw(st.lists(value_pool(MAST_NUMBERS), max_size=3, unique_by=lambda t: t[0]))
    names = draw(st.tuples(st.sampled_from(NAMES), st.sampled_from(NAMES)))
    solve = draw(st.sampled_from(["a", "b", "both"]))
    json_target = draw(st.sampled_from(TARGETS + [(None, True)]))
    base = draw(st.sampled_from(["dem", "profile"]))
    return numbers, names, solve, json_target, base


def property_mast(case):
    numbers, (name_a, name_b), solve, (kind, ok), base = case
    with output_folder() as root:
        # Masts of at most 5 m (the lowest --max-mast-m drawn); a drawn value comes later and wins.
        args, valid = ["mast", "--name-a", name_a, "--name-b", name_b, "--solve", solve, "--mast-a", "2"], ok
        if base == "dem":
            args += ["--dem", str(DEM[0]), "--site-a", GW, "--site-b", PU]
        else:
            args += ["--profile", surveyed_csv(root, "good")[0]]
        for opt, value, good in numbers:
            args += [opt, value]
            valid &= good
        written = {}
        if kind is not None:
            path = target_path(root, "--json", kind)
            args += ["--json", path]
            if kind == "ok":
                written["--json"] = path
        before = snapshot(root)
        result, numeric = invoke(args)
        check_result(result, numeric, valid, allowed=(0, 3))
        after = snapshot(root)
        if result.exit_code == 2:
            assert after == before
        else:                                      # exit 0, or 3 (infeasible): the report is still written
            check_outputs_written(root, before, after, written)
            if kind == "stdout":
                assert json.loads(result.stdout)["schema"].startswith("profiler.mast/")


BANDS_ARGS = st.lists(st.sampled_from(["--json", "--bogus", "x", "--json=1", "-h", "\x1b[2J", "--freq-mhz"]),
                      max_size=2)


def property_bands(args):
    result, numeric = invoke(["bands", *args])
    if "-h" in args:   # help is eager: click shows it or refuses an unknown option first, by position
        check_result(result, numeric, True, allowed=(0, 2))
    else:
        check_result(result, numeric, set(args) <= {"--json"})
    if result.exit_code == 0 and args == ["--json"]:
        assert {row["band"] for row in json.loads(result.stdout)} >= {"EU868", "US915"}
    assert "\x1b" not in result.stderr


FAST = settings(max_examples=150, deadline=None, derandomize=True,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
SLOW = settings(max_examples=400, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@FAST
@given(link_case())
def test_link_promise(case):
    property_link(case)


@FAST
@given(mast_case())
def test_mast_promise(case):
    property_mast(case)


@settings(max_examples=25, deadline=None, derandomize=True)
@given(BANDS_ARGS)
def test_bands_promise(args):
    property_bands(args)


@pytest.mark.slow
@SLOW
@given(link_case())
def test_link_promise_many(case):
    property_link(case)


@pytest.mark.slow
@SLOW
@given(mast_case())
def test_mast_promise_many(case):
    property_mast(case)
