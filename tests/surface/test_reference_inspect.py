"""Outside check: surfaces read from real source files agree with the running interpreter.

Reference: the `inspect` module (`inspect.signature`, `inspect.isfunction`) and the Python
Language Reference, "The import statement" (what `from M import *` binds: `__all__` when it is
defined, else every name in the module's namespace that does not begin with an underscore).
The modules are imported here, in the test, only to compute the reference; the surface itself
is built from their source text. Nothing is stored: every expectation is computed on the spot.
"""

from __future__ import annotations

import importlib
import importlib.util
import inspect
from functools import lru_cache
from pathlib import Path

import pytest

from impactscope.surface import Surface, build_surface

STDLIB = ["json", "textwrap", "shlex", "fractions", "difflib", "string", "calendar", "statistics"]
PACKAGING = ["packaging.version", "packaging.specifiers", "packaging.requirements", "packaging.markers", "packaging.utils"]

_KINDS = {
    inspect.Parameter.POSITIONAL_ONLY: "positional-only",
    inspect.Parameter.POSITIONAL_OR_KEYWORD: "positional-or-keyword",
    inspect.Parameter.VAR_POSITIONAL: "var-positional",
    inspect.Parameter.KEYWORD_ONLY: "keyword-only",
    inspect.Parameter.VAR_KEYWORD: "var-keyword",
}


@lru_cache(maxsize=None)
def surface_of(top: str) -> Surface:
    """The surface of a top-level module or package, read from the file the import system would load."""
    spec = importlib.util.find_spec(top)
    assert spec is not None and spec.origin is not None
    origin = Path(spec.origin)
    source = origin.parent if spec.submodule_search_locations else origin
    return build_surface(source, top)


def reference_names(module) -> tuple[str, ...]:
    if hasattr(module, "__all__"):
        return tuple(module.__all__)
    return tuple(n for n in dir(module) if not n.startswith("_"))


def runtime_signature(func, drop_first: bool) -> list[tuple[str, str, bool]]:
    params = list(inspect.signature(func).parameters.values())
    if drop_first:
        params = params[1:]
    return [(p.name, _KINDS[p.kind], p.default is not inspect.Parameter.empty) for p in params]


def static_signature(surface: Surface, dotted: str) -> list[tuple[str, str, bool]] | None:
    params = surface.parameters(dotted)
    return None if params is None else [(p.name, p.kind, p.default is not None) for p in params]


def callables(module, surface_name: str):
    """(dotted name, runtime function, drop self/cls) for public functions and methods defined in the module."""
    for name in reference_names(module):
        obj = getattr(module, name, None)
        if inspect.isfunction(obj):
            yield f"{surface_name}.{name}", obj, False
        elif inspect.isclass(obj) and obj.__module__ == module.__name__:
            for attr, raw in vars(obj).items():
                if attr.startswith("_"):
                    continue
                if isinstance(raw, staticmethod) and inspect.isfunction(raw.__func__):
                    yield f"{surface_name}.{name}.{attr}", raw.__func__, False
                elif isinstance(raw, classmethod) and inspect.isfunction(raw.__func__):
                    yield f"{surface_name}.{name}.{attr}", raw.__func__, True
                elif inspect.isfunction(raw):
                    yield f"{surface_name}.{name}.{attr}", raw, True


@pytest.mark.parametrize("name", STDLIB + PACKAGING)
def test_public_names_match_the_running_module(name):
    module = importlib.import_module(name)
    surface = surface_of(name.partition(".")[0])
    expected = reference_names(module)
    if hasattr(module, "__all__"):
        assert surface.star_names(name) == expected
    else:
        assert set(expected) <= set(surface.star_names(name) or ())
    for attr in expected:
        obj = getattr(module, attr)
        member = surface.member(f"{name}.{attr}")
        assert member is not None, f"{name}.{attr} is not in the surface"
        if inspect.isclass(obj):
            assert member.kind == "class", f"{name}.{attr}"
        elif inspect.isfunction(obj):
            assert member.kind in ("function", "method", "staticmethod", "classmethod"), f"{name}.{attr}"


@pytest.mark.parametrize("name", STDLIB + PACKAGING)
def test_signatures_match_inspect(name):
    module = importlib.import_module(name)
    surface = surface_of(name.partition(".")[0])
    for dotted, func, drop_first in callables(module, name):
        assert static_signature(surface, dotted) == runtime_signature(func, drop_first), dotted


def test_the_signature_check_is_not_vacuous():
    found = [d for name in STDLIB + PACKAGING for d, _, _ in callables(importlib.import_module(name), name)]
    assert len(found) >= 100  # 150 functions and methods on CPython 3.11 with packaging 26


@pytest.mark.parametrize("name", STDLIB + PACKAGING)
def test_classes_construct_with_their_init(name):
    # inspect.signature(cls) reads the user-defined __init__ / __new__ found through the MRO.
    module = importlib.import_module(name)
    surface = surface_of(name.partition(".")[0])
    for attr in reference_names(module):
        cls = getattr(module, attr)
        if not (inspect.isclass(cls) and cls.__module__.partition(".")[0] == name.partition(".")[0]):
            continue
        defining = [k for k in cls.__mro__ if "__init__" in vars(k) or "__new__" in vars(k)]
        if not defining or not all(inspect.isfunction(vars(defining[0]).get(m, lambda: 0)) or
                                   isinstance(vars(defining[0]).get(m), staticmethod)
                                   for m in ("__init__", "__new__") if m in vars(defining[0])):
            continue  # a builtin or C constructor: no source to compare with
        if getattr(type(cls), "__call__", type.__call__) is not type.__call__:
            continue  # a metaclass __call__ (enum) decides the signature
        try:
            expected = [(p.name, _KINDS[p.kind], p.default is not inspect.Parameter.empty)
                        for p in inspect.signature(cls).parameters.values()]
        except ValueError:
            continue
        assert static_signature(surface, f"{name}.{attr}") == expected, f"{name}.{attr}"
