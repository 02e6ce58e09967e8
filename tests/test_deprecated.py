"""Old module paths (before the packages) still import for one release, warn, and give the same objects."""

from __future__ import annotations

import importlib
import sys
import warnings

import pytest

from profiler import _deprecated
from profiler._deprecated import MOVED, NAMES


def fresh_import(old: str):
    """Import ``old`` as a first import would, recording the warnings."""
    sys.modules.pop(old, None)
    parent, _, leaf = old.rpartition(".")
    vars(sys.modules[parent]).pop(leaf, None)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        module = importlib.import_module(old)
    return module, [w for w in caught if issubclass(w.category, DeprecationWarning)]


@pytest.fixture(autouse=True)
def forget_old_modules():
    """Unbind the old modules after each test: ``import profiler.mast`` binds the alias over the name of the
    API function ``profiler.mast``, which later tests (and users who never import old paths) get."""
    yield
    for old in MOVED:
        sys.modules.pop(old, None)
        parent, _, leaf = old.rpartition(".")
        if isinstance(vars(sys.modules[parent]).get(leaf), _deprecated._OldModule):
            vars(sys.modules[parent]).pop(leaf)


def public_names(module) -> list[str]:
    return [n for n, v in vars(module).items()
            if not n.startswith("_") and getattr(v, "__module__", None) == module.__name__]


@pytest.mark.parametrize("old", sorted(MOVED))
def test_old_path_warns_and_gives_the_same_objects(old):
    new = importlib.import_module(MOVED[old])
    module, caught = fresh_import(old)
    assert len(caught) == 1 and MOVED[old] in str(caught[0].message) and old in str(caught[0].message)
    names = public_names(new)
    assert names, f"{MOVED[old]} defines nothing"
    for name in names:
        assert getattr(module, name) is getattr(new, name)


@pytest.mark.parametrize("old, name", sorted((o, n) for o, d in NAMES.items() for n in d))
def test_former_reexports_resolve_where_they_live(old, name):
    module, _ = fresh_import(old)
    where = importlib.import_module(NAMES[old][name])
    new = importlib.import_module(MOVED[old])
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        value = getattr(module, name)
    assert value is getattr(where, name)
    if not hasattr(new, name):           # only a name that moved away warns again, naming its place
        assert any(f"{NAMES[old][name]}.{name}" in str(w.message) for w in caught)


def test_the_examples_of_the_moves():
    # the moves users are most likely to have imported (README and DEVELOPERS before the packages)
    from profiler.lora.modem import lora_table
    from profiler.propagation.free_space import free_space_loss_db
    from profiler.terrain.elevation import ElevationModel

    sys.modules.pop("profiler.dem", None)
    with pytest.warns(DeprecationWarning, match="profiler.terrain.elevation"):
        from profiler.dem import ElevationModel as old_model  # noqa: F401
    assert old_model is ElevationModel
    budget, _ = fresh_import("profiler.budget")
    with pytest.warns(DeprecationWarning, match="profiler.propagation.free_space.free_space_loss_db"):
        assert budget.free_space_loss_db is free_space_loss_db
    with pytest.warns(DeprecationWarning, match="profiler.lora.modem.lora_table"):
        assert budget.lora_table is lora_table


def test_unknown_names_still_fail():
    module, _ = fresh_import("profiler.budget")
    with pytest.raises(AttributeError):
        module.no_such_name
    with pytest.raises(ModuleNotFoundError):
        importlib.import_module("profiler.no_such_module")


def test_an_old_module_named_like_an_api_function_calls_it(monkeypatch):
    # ``import profiler.mast`` binds the alias to ``profiler.mast``: calling it calls profiler.api.mast
    import profiler.api

    monkeypatch.setattr(profiler.api, "mast", lambda *a, **k: ("api", a, k), raising=False)
    module, _ = fresh_import("profiler.mast")
    assert module(1, x=2) == ("api", (1,), {"x": 2})
    assert profiler.mast is module          # bound over the function name until forget_old_modules


def test_the_api_function_mast_is_not_the_old_module():
    import profiler
    import profiler.api

    with warnings.catch_warnings():
        warnings.simplefilter("error")
        from profiler import mast
    assert mast is profiler.mast is profiler.api.mast


def test_no_old_path_is_a_file_and_the_finder_is_installed_once():
    from pathlib import Path

    root = Path(_deprecated.__file__).parent
    assert not [old for old in MOVED if (root / (old.split(".", 1)[1].replace(".", "/") + ".py")).exists()]
    _deprecated.install()
    assert sum(isinstance(f, _deprecated._OldPathFinder) for f in sys.meta_path) == 1
