"""Sphinx configuration: the user guide (Markdown, MyST) and the API reference (numpydoc).

Build: ``sphinx-build -W -b html docs docs/_build/html`` (the ``docs`` extra of pyproject.toml).

The reference is driven from the lists below (one place to update when modules move):
``API_FUNCTIONS`` and ``API_CLASSES`` are the public API, found wherever the package defines them
(written to ``_generated/public.inc``, included by ``api.rst``); the module reference is the
``autosummary`` list in ``api.rst``.
"""

from __future__ import annotations

import importlib
import inspect
import pkgutil
import sys
import warnings
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

import profiler  # noqa: E402

#: Public functions, as ``profiler.NAME``; a name not (yet) at the top level is documented where it is
#: defined, and one listed in ``API_OPTIONAL`` that does not exist at all is left out.
API_FUNCTIONS = ["link", "mast", "network", "coverage", "siting", "load_profile",
                 "analyze_link", "profile_from_dem", "read_profile_csv"]
API_OPTIONAL: set[str] = set()
#: Public classes (the result objects keep these names), found by name in the package.
API_CLASSES = ["LinkResult", "NetworkResult", "CoverageResult", "SitingResult", "MastResult",
               "RadioSettings", "ElevationModel", "TerrainProfile", "SheetInfo", "ProfilerError"]

project = "profiler"
author = "the profiler developers"
copyright = "the profiler developers"
release = version = profiler.__version__

extensions = ["myst_parser", "numpydoc", "sphinx.ext.autodoc", "sphinx.ext.autosummary",
              "sphinx.ext.mathjax"]
source_suffix = {".rst": "restructuredtext", ".md": "markdown"}
exclude_patterns = ["_build"]
root_doc = "index"

myst_heading_anchors = 3
myst_enable_extensions = ["colon_fence"]
# numpydoc References list sources the text need not cite with [1]_.
suppress_warnings = ["myst.header", "ref.citation"]

autosummary_generate = True
autodoc_default_options = {"members": True, "undoc-members": False}
autodoc_typehints = "none"
numpydoc_show_class_members = False
numpydoc_class_members_toctree = False
numpydoc_xref_param_type = False

html_theme = "pydata_sphinx_theme"
html_title = f"profiler {release}"
html_theme_options = {"navigation_with_keys": False, "show_toc_level": 2}
html_static_path: list[str] = []


def _package_modules():
    """Every importable module of the package (deprecated shims quietly included)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for info in pkgutil.walk_packages(profiler.__path__, "profiler."):
            if info.name.endswith("__main__"):       # running it would start the command line
                continue
            try:
                yield importlib.import_module(info.name)
            except Exception:                       # an optional dependency missing: not public API
                continue


def _defined_in(name, kind):
    """The dotted name of the object ``name`` where the package defines it, or None."""
    top = getattr(profiler, name, None)
    if top is not None and kind(top):
        return f"profiler.{name}"
    for module in _package_modules():
        obj = module.__dict__.get(name)
        if obj is not None and kind(obj) and getattr(obj, "__module__", None) == module.__name__:
            return f"{module.__name__}.{name}"
    return None


def write_public_api(app):
    """Write ``_generated/public.inc`` (the public functions and result classes) from the lists above."""
    from sphinx.util import logging

    log = logging.getLogger(__name__)
    lines = []
    for title, names, kind, directive in (
            ("Functions", API_FUNCTIONS, inspect.isfunction, "autofunction"),
            ("Classes", API_CLASSES, inspect.isclass, "autoclass")):
        lines += [title, "-" * len(title), ""]
        for name in names:
            where = _defined_in(name, kind)
            if where is None:
                if name not in API_OPTIONAL:
                    log.warning("docs/conf.py lists %s, which the package does not define", name)
                continue
            # A class is also on its module's page: the entry here is a copy (not indexed twice).
            lines += [f".. {directive}:: {where}"] + (["   :members:", "   :no-index:"]
                                                     if kind is inspect.isclass else []) + [""]
    out = Path(app.srcdir) / "_generated" / "public.inc"
    out.parent.mkdir(exist_ok=True)
    text = "\n".join(lines)
    if not out.exists() or out.read_text() != text:
        out.write_text(text)


def write_moves(app):
    """Write ``_generated/moves.md``: every old module path and where it lives now, from
    ``profiler._deprecated.MOVED`` (the table the deprecation finder itself uses)."""
    from profiler._deprecated import MOVED

    rows = ["| old module (deprecated) | new module |", "| --- | --- |"]
    rows += [f"| `{old}` | `{new}` |" for old, new in sorted(MOVED.items())]
    out = Path(app.srcdir) / "_generated" / "moves.md"
    out.parent.mkdir(exist_ok=True)
    text = "\n".join(rows) + "\n"
    if not out.exists() or out.read_text() != text:
        out.write_text(text)


def setup(app):
    app.connect("builder-inited", write_public_api, priority=100)
    app.connect("builder-inited", write_moves, priority=100)
