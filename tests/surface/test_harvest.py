"""harvest_deprecations on the interpreter's own unittest, on heronframe and on small packages."""

from __future__ import annotations

import importlib.util
import sys
import tomllib
from pathlib import Path

import pytest

from impactscope.surface import harvest_deprecations
from impactscope.surface.harvest import harvest, render_draft

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
    keys = {"id", "member", "kind", "replacement", "parameter", "new_parameter", "position", "note", "certainty"}
    assert all(set(c) <= keys for c in data["change"])
    assert "what the deprecation becomes is a guess" in text


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
    found = harvest(root)
    by_member = {c.member: c for c in found.changes}
    # A warning about some values of an argument is not a removal: listed for review, not drafted.
    assert "lib.Box.__eq__" not in by_member
    assert [u.member for u in found.unread] == ["lib.Box.__eq__"] and "isinstance(other, list)" in found.unread[0].condition
    pack = by_member["lib.Box.pack"]
    assert pack.note == "lib.Box.pack is deprecated (the message is built at run time: {how})"
    assert "message built at run time" in pack.evidence
    text = render_draft(found.changes, "lib", unread=found.unread)
    assert "# Left out: 1 deprecation warnings under a condition" in text and "#   lib.Box.__eq__ (line" in text


# The helpers below are written after the shapes real libraries use (common practice): a decorator
# that warns when more positional arguments are passed than it allows, one that warns when an old
# keyword is passed and hands its value on under a new name (or drops it), and a method that
# warns when a parameter is not left at its "no default" sentinel.
HELPERS = {
    "__init__.py": """
        from ._decorators import deprecate_kwarg, deprecate_nonkeyword_arguments
        from ._libs import no_default
        import warnings

        class Frame:
            @deprecate_nonkeyword_arguments(version=None, allowed_args=["self", "labels"])
            def drop(self, labels=None, axis=0, index=None):
                ...

            @deprecate_kwarg(old_arg_name="line_terminator", new_arg_name="lineterminator")
            def to_csv(self, path=None, lineterminator=None):
                ...

            @deprecate_kwarg(old_arg_name="errors", new_arg_name=None)
            def where(self, cond, other=None):
                ...

            def slice_locs(self, start=None, end=None, kind=no_default):
                self._deprecated_arg(kind, "kind", "slice_locs")

            def _deprecated_arg(self, value, name, methodname):
                if value is not no_default:
                    warnings.warn(f"'{name}' argument in {methodname} is deprecated", FutureWarning)

            def cov(self, numeric_only=no_default):
                if numeric_only is no_default:
                    warnings.warn("The default value of numeric_only will be False", FutureWarning)

            def get_loc(self, key, method=None):
                if method is None:
                    return key
                warnings.warn("Passing method to get_loc is deprecated, use get_indexer instead", FutureWarning)

            def ravel(self):
                warnings.warn("In a future version this will return a view", FutureWarning)

            def iteritems(self):
                warnings.warn("iteritems is deprecated and will be removed. Use .items instead.", FutureWarning)

            def items(self):
                ...

            def later(self):
                warnings.warn("later is deprecated and will be removed in 5.0", FutureWarning)
        """,
    "_libs.py": "no_default = object()\n",
    "_decorators.py": """
        import warnings
        from functools import wraps

        def deprecate_nonkeyword_arguments(version, allowed_args=None, stacklevel=2):
            def decorate(func):
                num_allow_args = len(allowed_args)
                msg = f"all arguments of {func.__qualname__} except {allowed_args} will be keyword-only"

                @wraps(func)
                def wrapper(*args, **kwargs):
                    if len(args) > num_allow_args:
                        warnings.warn(msg, FutureWarning, stacklevel=stacklevel)
                    return func(*args, **kwargs)
                return wrapper
            return decorate

        def deprecate_kwarg(old_arg_name, new_arg_name, stacklevel=2):
            def _deprecate_kwarg(func):
                @wraps(func)
                def wrapper(*args, **kwargs):
                    old_arg_value = kwargs.pop(old_arg_name, None)
                    if old_arg_value is not None:
                        if new_arg_name is None:
                            warnings.warn(f"the {old_arg_name!r} keyword is deprecated", FutureWarning)
                            kwargs[old_arg_name] = old_arg_value
                            return func(*args, **kwargs)
                        warnings.warn(f"{old_arg_name} is deprecated, use {new_arg_name}", FutureWarning)
                        kwargs[new_arg_name] = old_arg_value
                    return func(*args, **kwargs)
                return wrapper
            return _deprecate_kwarg
        """,
}


@pytest.fixture(scope="module")
def helpers_harvest(tmp_path_factory):
    root = write_tree(tmp_path_factory.mktemp("helpers") / "lib", HELPERS)
    return harvest(root, release="4.0")


def test_a_helper_is_read_from_how_it_is_called(helpers_harvest):
    got = {(c.member, c.kind, c.parameter): c for c in helpers_harvest.changes}
    drop = got[("lib.Frame.drop", "parameter-removed", "axis")]  # positional use goes, from `axis` on
    assert (drop.position, drop.announces) == (1, "keyword-only")
    csv = got[("lib.Frame.to_csv", "parameter-renamed", "line_terminator")]
    assert csv.new_parameter == "lineterminator"
    assert ("lib.Frame.where", "parameter-removed", "errors") in got
    locs = got[("lib.Frame.slice_locs", "parameter-removed", "kind")]  # the helper's `value` is the caller's `kind`
    assert locs.position == 2
    assert not any(m in ("lib.Frame.drop", "lib.Frame.to_csv", "lib.Frame.where", "lib.Frame.slice_locs")
                   and k == "removed" for m, k, _ in got)  # none of them is drafted as a removal


def test_what_a_condition_on_a_parameter_means(helpers_harvest):
    got = {(c.member, c.kind, c.parameter): c for c in helpers_harvest.changes}
    assert got[("lib.Frame.cov", "default-changed", "numeric_only")].announces == "default-changed"  # left at the sentinel
    # `if method is None: return ...` guards the warning: it fires when `method` is passed.
    assert ("lib.Frame.get_loc", "parameter-removed", "method") in got
    ravel = got[("lib.Frame.ravel", "behaviour-changed", None)]
    assert ravel.certainty == "low"


def test_successor_from_the_message_and_a_later_removal(helpers_harvest):
    got = {c.member: c for c in helpers_harvest.changes if c.kind == "removed"}
    assert got["lib.Frame.iteritems"].replacement == "lib.Frame.items"
    later = got["lib.Frame.later"]
    assert later.certainty == "low" and "goes in 5.0, after 4.0" in later.why


def test_private_names_and_scaffolding_only_when_asked(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": "import warnings\ndef _old():\n    warnings.warn('x', DeprecationWarning)\n",
        "conftest.py": "import warnings\ndef fixture():\n    warnings.warn('y', DeprecationWarning)\n",
    })
    assert harvest_deprecations(root) == []
    assert {c.member for c in harvest_deprecations(root, include_private=True)} == {"lib._old", "lib.conftest.fixture"}


def test_stub_modules_are_read_from_the_source_beside_them(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": "import warnings\ndef old():\n    warnings.warn('old is deprecated', DeprecationWarning)\n",
        "__init__.pyi": "def old() -> None: ...\n",
    })
    assert [c.member for c in harvest_deprecations(root)] == ["lib.old"]


def test_certainty_follows_what_the_message_says_of_when(tmp_path):
    # PEP 387: a deprecation warns for a while before the removal; a message that names the
    # release says when, a PendingDeprecationWarning says the deprecation itself is still to come.
    root = write_tree(tmp_path / "lib", {
        "__init__.py": """
            import warnings

            def now():
                msg = "now is deprecated and will be removed in 3.0"
                warnings.warn(msg, DeprecationWarning)

            def someday():
                warnings.warn("someday is deprecated", DeprecationWarning)

            def pending():
                warnings.warn("pending will be removed in 3.0", PendingDeprecationWarning)
            """,
    })
    got = {c.member: c for c in harvest(root, release="3.0").changes}
    assert got["lib.now"].certainty == "high" and got["lib.now"].note == "now is deprecated and will be removed in 3.0"
    assert got["lib.someday"].certainty == "medium" and "does not say when" in got["lib.someday"].why
    assert got["lib.pending"].certainty == "low" and "PendingDeprecationWarning" in got["lib.pending"].why
    assert {c.member: c.certainty for c in harvest(root).changes}["lib.someday"] == "high"  # no release: only the category


def test_a_module_getattr_that_warns_about_a_meaning_drafts_nothing(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": """
            import warnings
            def __getattr__(name):
                if name == "bool":
                    warnings.warn("In the future `lib.bool` will be defined as a scalar.", FutureWarning)
                raise AttributeError(name)
            """,
    })
    assert harvest_deprecations(root) == []


def test_a_guard_above_the_warning_and_a_test_with_more_in_it(tmp_path):
    root = write_tree(tmp_path / "lib", {
        "__init__.py": """
            import warnings

            class Series:
                def __init__(self, data=None, dtype=None, fastpath=False):
                    if fastpath:
                        return
                    if _is_empty(data) and dtype is None:
                        warnings.warn("The default dtype for empty Series will change", FutureWarning)

            def fast(x, fastpath=False):
                if fastpath:
                    return x
                warnings.warn("fast is deprecated", FutureWarning)
            """,
    })
    got = {(c.member, c.kind, c.parameter): c for c in harvest(root).changes}
    # The warning's own test names `dtype`; `fastpath` only guards the usual path.
    series = got[("lib.Series", "default-changed", "dtype")]
    assert series.certainty == "low" and "depends on the rest of its test" in series.why
    assert ("lib.fast", "removed", None) in got  # a guard that keeps a flag at its default: the member goes
