"""The drafting commands end to end on small libraries: stubs beside sources, deprecation shims,
run-time shims; each draft loads and is checked against the surface a scan reads, unedited."""

from __future__ import annotations

import tomllib
from pathlib import Path

from impactscope.changes import parse_change_list
from impactscope.surface import build_surface
from impactscope.surface.check import check_members
from impactscope.surface.drafting import draft_compare, draft_harvest

from .helpers import write_tree

SHIM = """
    import warnings
    from functools import wraps

    def deprecate_kwarg(old_arg_name, new_arg_name):
        def decorate(func):
            @wraps(func)
            def wrapper(*args, **kwargs):
                value = kwargs.pop(old_arg_name, None)
                if value is not None:
                    warnings.warn(f"{old_arg_name} is deprecated, use {new_arg_name}", FutureWarning)
                    kwargs[new_arg_name] = value
                return func(*args, **kwargs)
            return wrapper
        return decorate
    """


def _scannable(text: str, source: Path) -> None:
    """The draft loads and every member is in the surface a scan builds (stubs first), or is marked dynamic."""
    changes = parse_change_list(text.encode(), Path("draft.toml"))
    check_members(changes, build_surface(source))


def test_a_name_the_stubs_dropped_is_drafted_and_marked_dynamic(tmp_path):
    # PEP 484: a stub beside a module wins for a type checker (and for a scan); the source still
    # defines what the stub has dropped, which is what a draft is about.
    old = write_tree(tmp_path / "a" / "lib", {
        "__init__.py": "def keep(x):\n    return x\ndef gone(x):\n    return x\n",
        "__init__.pyi": "def keep(x: int) -> int: ...\n",
    })
    new = write_tree(tmp_path / "b" / "lib", {"__init__.py": "def keep(x):\n    return x\n", "__init__.pyi": "def keep(x: int) -> int: ...\n"})
    draft = draft_compare(old, new, release="2.0")
    entries = {c["member"]: c for c in tomllib.loads(draft.text)["change"]}
    assert entries["lib.gone"]["kind"] == "removed" and entries["lib.gone"]["dynamic"] is True
    assert "stubs leave lib.gone out" in entries["lib.gone"]["note"]
    _scannable(draft.text, old)


def test_a_keyword_taken_only_by_a_shim_and_then_dropped(tmp_path):
    old = write_tree(tmp_path / "a" / "lib", {
        "__init__.py": "from ._deco import deprecate_kwarg as _deprecate_kwarg\n"
                       "@_deprecate_kwarg(old_arg_name='line_terminator', new_arg_name='lineterminator')\n"
                       "def to_csv(path, lineterminator=None):\n    return path\n",
        "_deco.py": SHIM,
    })
    new = write_tree(tmp_path / "b" / "lib", {"__init__.py": "def to_csv(path, lineterminator=None):\n    return path\n"})
    draft = draft_compare(old, new, release="2.0")
    entry = next(c for c in tomllib.loads(draft.text)["change"] if c["member"] == "lib.to_csv")
    assert (entry["kind"], entry["parameter"], entry["new_parameter"], entry["certainty"]) == (
        "parameter-renamed", "line_terminator", "lineterminator", "high")
    assert draft.summary.startswith("1 entries (1 parameter-renamed")
    # While the new version keeps the shim, the keyword still works: nothing is drafted.
    kept = write_tree(tmp_path / "c" / "lib", {
        "__init__.py": (old / "__init__.py").read_text(), "_deco.py": (old / "_deco.py").read_text(),
    })
    assert "[[change]]" not in draft_compare(old, kept).text


def test_many_names_gone_from_a_run_time_shim_fold_into_one_low_entry(tmp_path):
    names = ["a", "b", "c", "d"]
    old = write_tree(tmp_path / "a" / "lib", {
        "__init__.py": "", "core/__init__.py": "", "core/numeric.py": "".join(f"def {n}(x):\n    return x\n" for n in names),
    })
    new = write_tree(tmp_path / "b" / "lib", {
        "__init__.py": "", "_core.py": "".join(f"def {n}(x):\n    return x\n" for n in names), "core/__init__.py": "",
        "core/numeric.py": "def __getattr__(name):\n    from lib import _core\n    return getattr(_core, name)\n",
    })
    entries = tomllib.loads(draft_compare(old, new).text)["change"]
    assert [(c["member"], c["kind"], c["certainty"]) for c in entries] == [("lib.core.numeric", "behaviour-changed", "low")]
    assert "4 names under lib.core.numeric" in entries[0]["note"]


def test_harvest_draft_counts_and_loads(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": "import warnings\ndef old():\n    warnings.warn('old is deprecated and will be removed in 2.0', FutureWarning)\n",
    })
    draft = draft_harvest(root, release="2.0")
    assert draft.summary == "1 entries (1 removed; certainty: 1 high)"
    _scannable(draft.text, root)
