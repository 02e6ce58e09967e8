"""Every Python name README and the docs pages show exists: dotted ``profiler.`` names and ``from profiler...
import`` lines.

Check value: README and ``docs/*.md`` themselves (issue 17: README pointed at ``profiler.siting.solve_siting``,
which did not exist; issue 18 moved README's manual into ``docs/``).
Names are resolved as code reads them after ``import profiler`` (attributes first, then submodules).
Report schemas (``profiler.link/4``) and command lines (``profiler link ...``) are not Python names.
"""

from __future__ import annotations

import importlib
import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
README = ROOT / "README.md"
#: The Markdown pages a reader sees: README and the manual in docs/.
PAGES = [README, *sorted((ROOT / "docs").glob("*.md"))]

#: A dotted Python name starting with ``profiler.``, not a schema (``profiler.link/4``) nor part of a path.
DOTTED = re.compile(r"(?<![\w/.-])profiler(?:\.[A-Za-z_]\w*)+(?![\w/])")
FROM_IMPORT = re.compile(r"^[ \t]*from[ \t]+(profiler(?:\.\w+)*)[ \t]+import[ \t]+([\w \t,]+)", re.M)


def code_texts(text: str) -> list[str]:
    """The fenced code blocks and the inline code spans of a Markdown text."""
    blocks = re.findall(r"^```[^\n]*\n(.*?)^```", text, flags=re.M | re.S)
    rest = re.sub(r"^```[^\n]*\n.*?^```", "", text, flags=re.M | re.S)
    spans = re.findall(r"`([^`]+)`", rest)              # a span may wrap onto the next line of its paragraph
    return blocks + [span for span in spans if "\n\n" not in span]


def readme_names() -> list[str]:
    names = []
    texts = [page.read_text(encoding="utf-8") for page in PAGES]
    for code in (code for text in texts for code in code_texts(text)):
        names += [m.rstrip(".") for m in DOTTED.findall(code)]
        for module, items in FROM_IMPORT.findall(code):
            names += [f"{module}.{item.strip()}" for item in items.split(",") if item.strip()]
    return sorted(set(names))


def resolve(name: str):
    """``name`` as code reads it after ``import profiler``: attributes first, a submodule imported where no
    attribute has the name (AttributeError or ModuleNotFoundError if missing).

    Attributes first, so that ``profiler.mast`` is the API function, not the old module path of that name
    (which imports only for one release, with a DeprecationWarning).
    """
    import inspect

    parts = name.split(".")
    obj = importlib.import_module(parts[0])
    for i, attr in enumerate(parts[1:], start=2):
        try:
            obj = getattr(obj, attr)
        except AttributeError:
            if not inspect.ismodule(obj):
                raise
            obj = importlib.import_module(".".join(parts[:i]))
    return obj


def test_readme_shows_python_names():
    assert len(PAGES) > 10                      # README and the docs pages
    names = readme_names()
    assert "profiler.products.siting.setcover.solve_siting" in names
    assert "profiler.products.siting.report.siting_from_network" in names
    assert not any("/" in n for n in names)


@pytest.mark.parametrize("name", readme_names())
def test_readme_python_name_exists(name):
    resolve(name)


def test_resolve_refuses_a_missing_name():
    with pytest.raises(AttributeError):
        resolve("profiler.siting.solve_siting")       # the name README showed before issue 17
    assert resolve("profiler.products.siting.setcover.solve_siting").__name__ == "solve_siting"
    with pytest.raises(ModuleNotFoundError):
        resolve("profiler.no_such_module.name")


def test_resolve_reads_an_api_function_named_like_an_old_module():
    import profiler.api

    assert resolve("profiler.mast") is profiler.api.mast    # not the deprecated module path profiler.mast


def readme_example(command: str) -> list[str]:
    """The arguments of the worked example of ``profiler COMMAND`` on its docs page (the line after "# for
    example")."""
    text = (ROOT / "docs" / f"{command}.md").read_text(encoding="utf-8")
    section = text[text.index(f"# `profiler {command}`"):]
    block = re.search(r"^```sh\n(.*?)^```", section, flags=re.M | re.S).group(1)
    example = block[block.index("# for example"):].split("\n", 1)[1]
    import shlex

    args = shlex.split(example.replace("\\\n", " "), comments=True)
    assert args[:2] == ["profiler", command]
    return args[1:]


def test_readme_siting_example_runs_as_written(tmp_path, monkeypatch):
    # Issue 17: the example wrote to out/, a folder a clean checkout does not have. Run it in a folder
    # holding only what a checkout has (the sample terrain and the examples).
    from click.testing import CliRunner

    from profiler.cli import main

    root = README.parent
    for name in ("dem_samples", "examples"):
        (tmp_path / name).symlink_to(root / name)
    monkeypatch.chdir(tmp_path)
    args = readme_example("siting")
    res = CliRunner().invoke(main, args, catch_exceptions=False)
    assert res.exit_code == 0, res.output
    written = [args[i + 1] for i, a in enumerate(args) if a in ("--json", "--csv", "--geojson", "--kml", "--plot")]
    assert written and all((tmp_path / path).stat().st_size > 0 for path in written)


#: A relative Markdown link or image target: ``[text](path#anchor)``, not a web address nor an in-page anchor.
LINK = re.compile(r"!?\[[^\]]*\]\((?!https?:|mailto:|#)([^)#\s]+)(?:#[^)]*)?\)")


@pytest.mark.parametrize("page", PAGES, ids=lambda p: p.name)
def test_relative_links_point_at_files(page):
    # Check value: the checkout itself. README links into docs/ so the manual reads on a code host
    # without a build; a moved or renamed page must not leave a dead link.
    targets = LINK.findall(page.read_text(encoding="utf-8"))
    missing = [t for t in targets if not (page.parent / t).exists()]
    assert missing == []
    assert page != README or len(targets) > 10          # README's tour links into docs/


def test_readme_is_short_and_starts_with_the_setup():
    # Issue 18: README under 300 lines, the two set-up commands at the top (CI runs the second as written).
    text = README.read_text(encoding="utf-8")
    lines = text.splitlines()
    assert len(lines) < 300
    blocks = re.findall(r"^```sh\n(.*?)^```", text, flags=re.M | re.S)
    assert blocks[0].startswith("python3 -m venv .venv && . .venv/bin/activate && pip install -e . && profiler link")
    assert blocks[1] == ('python3 -m venv .venv && . .venv/bin/activate && pip install -e ".[test]" '
                         "&& python -m pytest -q\n")
    assert "> **Caution.** This is a planning aid only." in text
