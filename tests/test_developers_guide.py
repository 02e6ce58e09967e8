"""Every module DEVELOPERS.md names exists (the contributor guide follows the code)."""

from __future__ import annotations

import importlib
import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
GUIDE = (ROOT / "DEVELOPERS.md").read_text(encoding="utf-8")
FOLDERS = ("profiler", "tests", "benchmarks", "examples", "dem_samples")


def code_spans(text: str) -> list[str]:
    return re.findall(r"`([^`\n]+)`", text)


def dotted_names(text: str) -> list[str]:
    """``profiler.a.b`` names in code spans (call parentheses and trailing dots dropped)."""
    names = set()
    for span in code_spans(text):
        for m in re.finditer(r"\bprofiler(?:\.\w+)+", span):
            if not re.match(r"profiler\.\w+/\d", span[m.start():]):       # a schema name: profiler.link/4
                names.add(m.group(0))
    return sorted(names)


def file_paths(text: str) -> list[str]:
    return sorted({m for span in code_spans(text) for m in re.findall(r"(?<![\w./-])[\w/]+\.py\b", span)})


def resolve(name: str):
    """The longest importable module prefix of ``name``, then the rest as attributes."""
    parts = name.split(".")
    for i in range(len(parts), 0, -1):
        try:
            obj = importlib.import_module(".".join(parts[:i]))
        except ModuleNotFoundError:
            continue
        for attr in parts[i:]:
            obj = getattr(obj, attr)
        return obj
    raise ModuleNotFoundError(name)


def file_exists(path: str) -> bool:
    if "/" in path:
        return (ROOT / path).is_file() or (ROOT / "profiler" / path).is_file()
    return any(any((ROOT / folder).rglob(path)) for folder in FOLDERS)


def test_the_guide_names_modules():
    assert "`terrain/elevation.py`" in GUIDE and len(file_paths(GUIDE)) > 40


@pytest.mark.parametrize("name", dotted_names(GUIDE))
def test_every_dotted_name_exists(name):
    resolve(name)          # old paths warn, and the suite turns that warning into an error


@pytest.mark.parametrize("path", file_paths(GUIDE))
def test_every_file_exists(path):
    assert file_exists(path), path


def test_the_checks_fail_on_a_missing_module():
    assert file_paths("see `terrain/dem_sources.py` and `dem.py`") == ["dem.py", "terrain/dem_sources.py"]
    assert not file_exists("terrain/dem_sources.py") and not file_exists("dem.py")
    with pytest.raises((ModuleNotFoundError, AttributeError)):
        resolve("profiler.terrain.no_such_module")
