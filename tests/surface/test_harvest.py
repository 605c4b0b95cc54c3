"""harvest_deprecations on the interpreter's own unittest, on heronframe and on small packages."""

from __future__ import annotations

import importlib.util
import sys
import tomllib
from pathlib import Path

import pytest

from impactscope.surface import harvest_deprecations
from impactscope.surface.harvest import render_draft

from .helpers import OLD, write_tree

# Reference: "What's New In Python 3.12", section "Removed" / unittest: these TestCase aliases,
# deprecated since 3.2 (and assertDictContainsSubset since 3.2), were removed in 3.12.
UNITTEST_ALIASES = [
    "assertEquals", "failUnless", "failIf", "assertRegexpMatches", "assertNotRegexpMatches",
    "assertRaisesRegexp", "assertDictContainsSubset", "failUnlessEqual", "assertNotEquals",
    "assertAlmostEquals", "assertNotAlmostEquals", "failIfEqual", "failUnlessAlmostEqual",
    "failIfAlmostEqual", "failUnlessRaises", "assert_",
]


def unittest_source() -> Path:
    spec = importlib.util.find_spec("unittest")
    return Path(next(iter(spec.submodule_search_locations)))


@pytest.fixture(scope="module")
def unittest_harvest():
    return harvest_deprecations(unittest_source())


@pytest.mark.skipif(not (unittest_source() / "case.py").read_text().count("_deprecate(assertTrue)"),
                    reason=f"Python {sys.version_info[0]}.{sys.version_info[1]} unittest no longer has the "
                           "deprecated TestCase aliases (removed in 3.12)")
def test_unittest_deprecated_aliases_are_found(unittest_harvest):
    found = {c.member: c for c in unittest_harvest}
    for alias in UNITTEST_ALIASES:
        assert f"unittest.TestCase.{alias}" in found, alias
    failunless = found["unittest.TestCase.failUnless"]
    assert failunless.kind == "removed" and failunless.replacement == "unittest.TestCase.assertTrue"
    assert "Please use assertTrue instead." in failunless.note
    assert found["unittest.TestCase.assertDictContainsSubset"].mechanism == "warnings.warn"
    assert "unittest.TestCase.assertTrue" not in found  # the originals are not deprecated
    assert "unittest.TestCase._deprecate" not in found  # the helper itself is private


def test_unittest_draft_loads(unittest_harvest):
    text = render_draft(unittest_harvest, "unittest")
    data = tomllib.loads(text)
    assert all(set(c) <= {"id", "member", "kind", "replacement", "parameter", "position", "note"} for c in data["change"])
    assert "the kind is a guess" in text


def test_heronframe_old_deprecations():
    found = {c.member: c for c in harvest_deprecations(OLD)}
    assert set(found) == {"heronframe.stack", "heronframe.Table.to_records", "heronframe.write_table"}
    assert found["heronframe.stack"].note == "stack is deprecated, use Table.stack_rows"
    assert found["heronframe.stack"].certainty == "high"
    assert found["heronframe.Table.to_records"].mechanism == "@deprecated (PEP 702)"
    # A conditional call of the library's own helper: a parameter deprecation, with the message filled in.
    write = found["heronframe.write_table"]
    assert (write.kind, write.parameter, write.position) == ("parameter-removed", "index", 3)
    assert write.note == "write_table(index=...) is deprecated, use Table.copy() before writing"


def test_warn_forms_and_categories(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": """
            import warnings
            from warnings import warn
            from warnings import warn as _w

            class LibDeprecation(FutureWarning):
                pass

            def a():
                warnings.warn("a is going", DeprecationWarning)
            def b():
                warn("b is going", category=PendingDeprecationWarning)
            def c():
                _w(f"c is going in {VERSION}", LibDeprecation, stacklevel=2)
            def d():
                warnings.warn("d says hello")          # a UserWarning: not a deprecation
            def e():
                warnings.warn("e", RuntimeWarning)     # not a deprecation category
            VERSION = "3"
            """,
    })
    found = {c.member: c for c in harvest_deprecations(root)}
    assert set(found) == {"lib.a", "lib.b", "lib.c"}
    assert found["lib.c"].note == "c is going in {VERSION}"


def test_pep702_from_warnings_and_typing_extensions(tmp_path):
    # PEP 702: the decorator is warnings.deprecated (3.13+) or typing_extensions.deprecated.
    root = write_tree(tmp_path / "lib", {
        "__init__.py": """
            import typing_extensions
            from warnings import deprecated

            @deprecated("use g")
            def f(): ...

            @typing_extensions.deprecated("Old is old")
            class Old: ...

            def deprecated_lookalike(msg):  # a local function of another name is not PEP 702
                return lambda f: f
            """,
    })
    found = {c.member: c for c in harvest_deprecations(root)}
    assert found["lib.f"].note == "use g" and found["lib.Old"].note == "Old is old"
    assert all(c.mechanism == "@deprecated (PEP 702)" for c in found.values())


def test_helpers_decorators_and_aliases(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": """
            from ._deprecation import deprecated_since, renamed
            from ._util import _old

            class Frame:
                def head(self, n=5): ...
                first = renamed(head)            # a helper-made alias

                @deprecated_since("2.0", "use head")
                def top(self, n=5): ...

                def legacy(self, *args, **kwargs):
                    if "axis" in kwargs:
                        _old("axis")
            """,
        "_deprecation.py": """
            import functools
            import warnings

            def deprecated_since(version, instead):
                def wrap(func):
                    @functools.wraps(func)
                    def inner(*args, **kwargs):
                        warnings.warn(f"deprecated since {version}; {instead}", DeprecationWarning, 2)
                        return func(*args, **kwargs)
                    return inner
                return wrap

            def renamed(func):
                def inner(*args, **kwargs):
                    warnings.warn(f"{func.__name__} has a new name", FutureWarning)
                    return func(*args, **kwargs)
                return inner
            """,
        "_util.py": """
            from ._deprecation import renamed
            import warnings

            def _old(what):
                warnings.warn(f"{what} is deprecated", DeprecationWarning)
            """,
    })
    found = {(c.member, c.kind): c for c in harvest_deprecations(root)}
    top = found[("lib.Frame.top", "removed")]
    assert top.note == "deprecated since 2.0; use head" and top.mechanism.endswith("(decorator)")
    first = found[("lib.Frame.first", "removed")]
    assert first.replacement == "lib.Frame.head" and "head has a new name" in first.note
    legacy = found[("lib.Frame.legacy", "parameter-removed")]
    assert legacy.parameter == "axis" and legacy.note == "axis is deprecated"
    assert not any(m.startswith("lib._") for m, _ in found)  # helpers are not members


def test_module_getattr_and_import_time_warnings(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": """
            import warnings

            def __getattr__(name):
                if name in ("OldThing", "older"):
                    warnings.warn(f"lib.{name} is deprecated", DeprecationWarning, stacklevel=2)
                    return None
                raise AttributeError(name)
            """,
        "legacy.py": 'import warnings\nwarnings.warn("lib.legacy is deprecated", DeprecationWarning)\n',
    })
    found = {c.member: c for c in harvest_deprecations(root)}
    assert found["lib.OldThing"].note == "lib.OldThing is deprecated"
    assert "lib.older" in found
    assert found["lib.legacy"].note == "lib.legacy is deprecated"


def test_conditional_helpers_and_run_time_messages_are_flagged(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": """
            import warnings

            def _compare_op(op):
                def method(self, other):
                    if isinstance(other, list):
                        warnings.warn(f"comparing with {type(other).__name__} is deprecated", FutureWarning)
                    return op(self, other)
                return method

            def _deprecated_call(message):
                warnings.warn(message, DeprecationWarning, stacklevel=3)

            class Box:
                __eq__ = _compare_op(lambda a, b: a is b)

                def pack(self, how):
                    _deprecated_call(how)
            """,
    })
    found = {c.member: c for c in harvest_deprecations(root)}
    assert found["lib.Box.__eq__"].certainty == "low" and "only under a condition" in found["lib.Box.__eq__"].why
    assert found["lib.Box.pack"].note == "lib.Box.pack is deprecated (the message is built at run time: {how})"
