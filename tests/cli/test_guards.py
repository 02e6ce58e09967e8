"""The guards behind the promise: numeric ranges, safe text per format, all-or-nothing outputs, global models."""

from __future__ import annotations

import csv
import io
import json
import math
import xml.etree.ElementTree as ET
from pathlib import Path
from unittest import mock

import click
import numpy as np
import pytest
from click.testing import CliRunner
from geographiclib.geodesic import Geodesic
from rasterio.transform import from_origin

from profiler import limits, textsafe
from profiler.cli import main
from profiler.errors import ProfilerError
from profiler.io.outputs import Output, check_outputs, write_outputs

XML_FORBIDDEN = [chr(c) for c in range(0x20) if chr(c) not in "\t\n\r"] + ["\ufffe", "\uffff", "\ud800"]
# W3C XML 1.0 (Fifth Edition) section 2.2, production [2] Char: these code points are not characters.


# ----------------------------------------------------------------------------- limits
def test_message_names_option_value_and_range():
    with pytest.raises(ProfilerError) as exc:
        limits.check("--mast-a", "1e308")
    assert str(exc.value).startswith("--mast-a 1e308 m is out of range; use 0 to 1000 m")
    with pytest.raises(ProfilerError, match=r"^--sf 7.5 is not a whole number; use 7 to 12"):
        limits.check("--sf", 7.5)
    with pytest.raises(ProfilerError, match=r"^--freq-mhz nan is not a finite number"):
        limits.check("--freq-mhz", "nan")
    with pytest.raises(ProfilerError, match=r"--max-mast-m 0 m is out of range; use more than 0 to 1000 m"):
        limits.check("--max-mast-m", 0.0)
    assert limits.check("--mast-a", "1000") == 1000.0 and limits.check("--sf", "12") == 12


def test_every_numeric_option_of_every_command_has_a_range():
    # New commands get the range check by using the shared types: this keeps the table complete.
    from profiler.cli.options import FiniteFloat, KFactor

    missing = []
    names = main.list_commands(None)
    assert {"link", "mast", "bands", "network", "siting", "coverage"} <= set(names)
    for name in names:
        command = main.get_command(None, name)
        for param in command.params:
            numeric = isinstance(param.type, (FiniteFloat, KFactor, click.types.IntParamType,
                                              click.types.FloatParamType))
            if isinstance(param, click.Option) and numeric and not set(param.opts) & set(limits.LIMITS):
                missing.append(f"{name} {param.opts[0]}")
    assert not missing, missing


def test_api_entry_points_use_the_same_ranges():
    from profiler.engine.radio import RadioSettings
    from profiler.products.link import analyze_link
    from profiler.terrain.profile import TerrainProfile

    prof = TerrainProfile(distance_m=np.array([0.0, 500.0, 1000.0]), terrain_m=np.zeros(3), kind="surveyed")
    with pytest.raises(ProfilerError, match="^--mast-a 1e"):
        analyze_link(prof, mast_a_m=1e308, frequency_mhz=868.0)
    with pytest.raises(ProfilerError, match="^--k 1e-300 is out of range"):
        analyze_link(prof, frequency_mhz=868.0, k_factor=1e-300)
    with pytest.raises(ProfilerError, match="^--tx-power-dbm 1e"):
        RadioSettings(tx_power_dbm=1e308).validate()


def test_sample_count_refused_before_any_allocation():
    from profiler.terrain.geodesic import geodesic_path

    with mock.patch("pyproj.Geod.inv_intermediate") as allocate:
        with pytest.raises(ProfilerError, match=r"more than 500000 samples .* coarser --step-m \(at least"):
            geodesic_path(0.0, 0.0, 1.0, 1.0, step_m=1e-300)
        allocate.assert_not_called()
    # ceil(L / step) + 1 points, at least 3 (the two sites and one between).
    assert limits.sample_count(1000.0, 10.0) == 101 and limits.sample_count(1.0, 10.0) == 3


def test_quiet_numerics_and_require_finite():
    with limits.quiet_numerics():
        x = np.float64(1e308) * 10.0            # overflow: no RuntimeWarning escapes
    assert math.isinf(x)
    with pytest.raises(ProfilerError, match="no finite value for loss_db.total"):
        limits.require_finite({"loss_db": {"total": None}}, ["loss_db.total"])
    limits.require_finite({"a": {"b": 1.5}}, ["a.b"])


# ----------------------------------------------------------------------------- text per format
def test_csv_cell_rules():
    # OWASP "CSV injection": = + - @ start a formula, also after leading spaces; tab and CR are triggers too.
    assert textsafe.csv_cell("=1+1") == "'=1+1"
    assert textsafe.csv_cell("  @SUM(A1)") == "'  @SUM(A1)"
    out = textsafe.csv_cell("\r=1+1")
    assert "\r" not in out and not out.lstrip().startswith(("=", "+", "-", "@"))
    assert textsafe.csv_cell(textsafe.csv_cell("-2+3")) == "'-2+3"          # idempotent
    assert textsafe.csv_cell("Osterby Farm pump") == "Osterby Farm pump"
    # A reader that ends records at CR sees no new cell: the written text holds no CR or LF at all.
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerow([textsafe.csv_cell("a\r=2\nb")])
    assert buf.getvalue().count("\n") == 1 and "\r" not in buf.getvalue()


@pytest.mark.parametrize("ch", XML_FORBIDDEN)
def test_xml_text_parses(ch):
    # The reference parser (expat via xml.etree) rejects these code points; after xml_text it accepts the text.
    root = ET.Element("name")
    root.text = textsafe.xml_text(f"a{ch}b")
    raw = ET.tostring(root, encoding="unicode")
    assert ET.fromstring(raw.encode("utf-8")).text == "a\ufffdb"


def test_terminal_text_escapes_controls_and_bad_unicode():
    assert textsafe.terminal_text("\x1b[31mred\r") == "\\x1b[31mred\\r"
    assert textsafe.terminal_text("\u202eevil") == "\\u202eevil"        # bidirectional override (UAX #9)
    assert textsafe.terminal_text("\udcff") == "\ufffd"                # lone surrogate from non-UTF-8 bytes
    assert textsafe.unicode_text("Zürich").encode("utf-8")


def test_safe_strings_walks_reports_and_keeps_numbers():
    report = {"site_a": {"name": "\udcff=x", "mast_m": 2.0}, "profile": {"d": [0.0, 1.0, None]}, "ok": True}
    safe = textsafe.safe_strings(report, "csv")
    assert safe["site_a"] == {"name": "\ufffd=x", "mast_m": 2.0} and safe["profile"] is not None
    assert safe["profile"]["d"] is report["profile"]["d"]               # numeric columns are not copied
    with pytest.raises(ValueError):
        textsafe.safe_strings(report, "html")


# ----------------------------------------------------------------------------- all-or-nothing outputs
def _text(content):
    return lambda report, path: content


def _fail(report, path):
    raise ProfilerError("this output cannot be made")


def test_write_outputs_all_or_nothing(tmp_path, capsys):
    a, b = tmp_path / "a.json", tmp_path / "b.kml"
    a.write_text("old a")
    outs = [Output("--json", a, _text("new a"), "json"), Output("summary", "-", _text("printed"), "terminal"),
            Output("--kml", b, _fail, "xml")]
    with pytest.raises(ProfilerError, match="cannot be made"):
        write_outputs(outs, {})
    assert a.read_text() == "old a" and not b.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.json"]      # no temporary file left
    assert capsys.readouterr().out == ""                                 # stdout only after all files
    write_outputs(outs[:2], {})
    assert a.read_text() == "new a" and capsys.readouterr().out == "printed"


def test_unwritable_folder_is_an_input_error_naming_the_option(tmp_path):
    real = __import__("tempfile").mkstemp

    def mkstemp(*args, dir=None, **kw):
        if Path(dir).name == "locked":
            raise PermissionError(13, "Permission denied")
        return real(*args, dir=dir, **kw)

    (tmp_path / "locked").mkdir()
    first = tmp_path / "r.json"
    outs = [Output("--json", first, _text("{}"), "json"), Output("--kml", tmp_path / "locked" / "p.kml", _text("x"))]
    with mock.patch("tempfile.mkstemp", mkstemp), pytest.raises(ProfilerError) as exc:
        write_outputs(outs, {})
    assert "(--kml)" in str(exc.value) and "Permission denied" in str(exc.value)
    assert not first.exists() and [p.name for p in tmp_path.iterdir()] == ["locked"]


def test_check_outputs_refusals(tmp_path):
    with pytest.raises(ProfilerError, match="only one output can go to standard output"):
        check_outputs([("-", "--json", _text("")), ("-", "--csv", _text(""))])
    with pytest.raises(ProfilerError, match="--json and --csv both write"):
        check_outputs([(tmp_path / "x", "--json", _text("")), (tmp_path / "x", "--csv", _text(""))])
    with pytest.raises(ProfilerError, match="--plot cannot go to standard output"):
        check_outputs([Output("--plot", "-", _text(""), stdout=False)])
    assert check_outputs([(None, "--json", _text(""))]) == []


def test_cli_refusal_after_rendering_changes_nothing(tmp_path):
    # A surveyed profile has no coordinates: the KML is refused after the JSON was rendered, and no file changes.
    prof = tmp_path / "p.csv"
    prof.write_text("distance_m,elevation_m\n0,10\n500,30\n1000,12\n")
    r = tmp_path / "r.json"
    r.write_text("old")
    result = CliRunner().invoke(main, ["link", "--profile", str(prof), "--json", str(r), "--kml",
                                       str(tmp_path / "p.kml")])
    assert result.exit_code == 2 and result.stderr.startswith("profiler: error: KML needs coordinates")
    assert r.read_text() == "old" and sorted(p.name for p in tmp_path.iterdir()) == ["p.csv", "r.json"]


# ----------------------------------------------------------------------------- poles and +-180 on a global model
@pytest.fixture
def global_dem(write_dem):
    """A 1-degree global grid, lon -180..180, lat -90..90; height = 10 * column + 1000 * (row % 3)."""
    rows, cols = np.mgrid[0:180, 0:360]
    heights = (10.0 * cols + 1000.0 * (rows % 3)).astype("float32")
    return write_dem("global.tif", heights, from_origin(-180.0, 90.0, 1.0, 1.0))


def test_global_model_covers_poles_and_antimeridian(global_dem):
    from profiler.terrain.elevation import ElevationModel

    with ElevationModel.open([global_dem]) as model:
        lon = np.array([180.0, -180.0, 0.5, 0.5, 179.5])
        lat = np.array([10.5, 10.5, 90.0, -90.0, -89.5])
        assert model.covers(lon, lat).all()
        z = model.sample(lon, lat)
        # lon 180 is lon -180 (same meridian): the edge pixel, column 0, on row 79 (79 % 3 = 1).
        assert z[0] == z[1] == pytest.approx(1000.0)
        # Poles: clamped to the edge rows 0 and 179 (179 % 3 = 2), column 180.
        assert z[2] == pytest.approx(1800.0) and z[3] == pytest.approx(3800.0)
        assert z[4] == pytest.approx(2000.0 + 10.0 * 359)                   # a pixel centre: row 179, column 359


@pytest.mark.parametrize("site_a,site_b", [((90.0, 0.0), (89.5, 0.0)), ((-90.0, 0.0), (-89.5, 10.0)),
                                           ((10.0, 180.0), (10.5, 179.5)), ((89.9, 0.0), (89.9, 180.0))])
def test_link_at_pole_and_antimeridian(global_dem, site_a, site_b):
    result = CliRunner().invoke(main, ["link", "--dem", str(global_dem), "--site-a", "%r,%r" % site_a,
                                       "--site-b", "%r,%r" % site_b, "--json", "-"])
    assert result.exit_code == 0, result.stderr
    report = json.loads(result.stdout)
    # Geodesic distance on WGS84 from an independent library (geographiclib, Karney 2013).
    expected = Geodesic.WGS84.Inverse(site_a[0], site_a[1], site_b[0], site_b[1])["s12"]
    assert report["distance_m"] == pytest.approx(expected, rel=1e-9)


def test_regional_model_refuses_with_a_true_message(write_dem):
    dem = write_dem("region.tif", np.zeros((10, 10), "float32"), from_origin(10.0, 50.0, 0.1, 0.1))
    result = CliRunner().invoke(main, ["link", "--dem", str(dem), "--site-a", "49.5,180", "--site-b", "49.5,10.5"])
    assert result.exit_code == 2
    assert "site A (49.50000, 180.00000) is outside the elevation data; coverage: lon 10.0000 to 11.0000" \
        in result.stderr


def test_docs_ranges_table_matches_the_limits_table():
    import re

    readme = (Path(__file__).resolve().parents[2] / "docs" / "outputs.md").read_text(encoding="utf-8")
    section = readme.split("## Exit codes and the output promise", 1)[1].split("\n## ", 1)[0]
    rows = dict(re.findall(r"^\| `(--[a-z0-9-]+)` \| ([^|]+?) \|", section, flags=re.M))
    assert len(rows) >= 25
    assert {opt: limits.range_text(opt) for opt in rows} == rows


def test_profiler_link_imports_no_other_command():
    # Commands load on demand (cli.COMMANDS): a one-link run imports neither the network,
    # coverage nor siting code, nor matplotlib, numba or dask (start-up time, issue 10).
    import subprocess
    import sys

    code = ("import sys; from click.testing import CliRunner; from profiler.cli import main; "
            "r = CliRunner().invoke(main, ['link', '--profile', 'examples/surveyed_profile.csv', '--json', '-']); "
            "assert r.exit_code == 0, r.output; "
            "print(' '.join(sorted(m for m in sys.modules if m.startswith(('profiler.cli.', 'matplotlib', "
            "'numba', 'dask', 'profiler.products.network', 'profiler.products.coverage')))))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120,
                         cwd=str(__import__("pathlib").Path(__file__).resolve().parents[2]))
    assert out.returncode == 0, out.stderr
    assert out.stdout.split() == ["profiler.cli.link", "profiler.cli.options"]
