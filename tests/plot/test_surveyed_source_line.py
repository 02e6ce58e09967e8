"""The sheets say truthfully where a surveyed profile's coordinates are: none, or only at its ends.

Check values: the report's own site blocks (``site_a.lat_deg`` given with
--site-a/--site-b) and the texts matplotlib draws (profiler.plot.audit).
"""

import json

import pytest
from click.testing import CliRunner

from profiler.cli import main
from profiler.plot.audit import drawn_texts

PROFILE = "examples/surveyed_profile.csv"
SITES = ["--site-a", "-29.9125,-19.955", "--site-b", "-29.9,-19.825"]


@pytest.mark.parametrize("command", ["link", "mast"])
@pytest.mark.parametrize("with_sites", [False, True])
def test_surveyed_source_line(tmp_path, command, with_sites):
    import matplotlib.pyplot as plt

    from profiler.plot.link import build_link_figure
    from profiler.plot.mast import build_mast_figure

    args = [command, "--profile", PROFILE, "--json", str(tmp_path / "r.json"), *(SITES if with_sites else [])]
    result = CliRunner().invoke(main, args)
    assert result.exit_code == 0, result.output
    report = json.loads((tmp_path / "r.json").read_text())
    assert (report["site_a"]["lat_deg"] is not None) is with_sites
    fig = build_link_figure(report) if command == "link" else build_mast_figure(report)
    texts = " ".join(t.get_text() for t in drawn_texts(fig))
    plt.close(fig)
    want, not_want = ("only the ends have coordinates", "(no coordinates") if with_sites else \
        ("no coordinates", "only the ends have coordinates")
    assert want in texts and not_want not in texts
