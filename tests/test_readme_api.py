"""Every Python name README and the docs pages show exists: dotted ``profiler.`` names and ``from profiler...
import`` lines.

Check value: README and ``docs/*.md`` themselves (issue 17: README pointed at ``profiler.siting.solve_siting``,
which did not exist; issue 18 moved README's manual into ``docs/``).
Names are resolved by importing the longest importable module prefix and getting the rest as attributes.
Report schemas (``profiler.link/3``) and command lines (``profiler link ...``) are not Python names.
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

#: A dotted Python name starting with ``profiler.``, not a schema (``profiler.link/3``) nor part of a path.
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
    """Import the longest module prefix of ``name`` and get the rest as attributes (AttributeError if missing)."""
    parts = name.split(".")
    for i in range(len(parts), 0, -1):
        module_name = ".".join(parts[:i])
        try:
            obj = importlib.import_module(module_name)
        except ModuleNotFoundError as exc:
            if exc.name is not None and not module_name.startswith(exc.name) and exc.name != module_name:
                raise                       # the module exists but one of its imports is missing
            continue
        for attr in parts[i:]:
            obj = getattr(obj, attr)
        return obj
    raise ModuleNotFoundError(name)


def test_readme_shows_python_names():
    assert len(PAGES) > 10                      # README and the docs pages
    names = readme_names()
    assert ("profiler.products.siting.setcover.solve_siting" in names
            and "profiler.products.siting.report.siting_from_network" in names)
    assert not any("/" in n for n in names)


@pytest.mark.parametrize("name", readme_names())
def test_readme_python_name_exists(name):
    resolve(name)


def test_resolve_refuses_a_missing_name():
    with pytest.raises(AttributeError):
        resolve("profiler.siting.solve_siting")       # the name README showed before issue 17
    assert resolve("profiler.products.siting.setcover.solve_siting").__name__ == "solve_siting"


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
