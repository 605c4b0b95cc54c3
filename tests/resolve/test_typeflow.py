"""Type flow: return types from the change list's [types], assignments, annotations, context
managers, user subclasses, and the parameter rules of docs/change-list.md.

The expected results follow docs/change-list.md (the kinds and what each matches) and docs/findings.md (the confidence levels)
and the Python Language Reference where the semantics of the code matter (cited per check).
"""

from __future__ import annotations

import textwrap

import pytest

from impactscope.findings import Confidence

from .conftest import at, findings, line_of


def src(text: str) -> str:
    return textwrap.dedent(text).lstrip("\n")


HEAD = "import heronframe as hf\n"


# ---------------------------------------------------------------------------- [types]
def test_constructor_and_return_type() -> None:
    code = HEAD + src(
        """
        t = hf.Table()
        t.stack_rows()
        u = hf.read_table("p")
        u.stack_rows()
        v = hf.stack()
        v.stack_rows()
        """
    )
    found = findings(code)
    # docs/change-list.md [types]: a class maps to itself; "heronframe.read_table" = "heronframe.Table".
    assert at(found, 3, "HF-1") == "resolved"
    assert at(found, 5, "HF-1") == "resolved"
    # heronframe.stack has no entry in [types]: its result is unknown, only a guess remains.
    assert at(found, 7, "HF-1") == "inferred"


def test_chained_calls() -> None:
    code = HEAD + 'hf.read_table(p).filter_rows(f).stack_rows(o)\n'
    found = findings(code)
    # [types]: read_table -> Table, Table.filter_rows -> Table; so stack_rows is on a Table.
    assert at(found, 2, "HF-1") == "resolved"
    # read_table is called without `sep`: docs/change-list.md, default-changed matches calls that
    # do not pass it at all.
    assert at(found, 2, "HF-5") == "resolved"


def test_assignment_chain_and_annotated_assignment() -> None:
    code = HEAD + src(
        """
        t = hf.Table()
        u = t
        u.stack_rows()
        w: hf.Table = make()
        w.stack_rows()
        x: hf.Table
        x.stack_rows()
        y: int = hf.Table()
        y.stack_rows()
        """
    )
    found = findings(code)
    # Language Reference §7.2: assignment binds the same object to the new name.
    assert at(found, 4, "HF-1") == "resolved"
    # §7.2.2 annotated assignment: the annotation declares the type of the target.
    assert at(found, 6, "HF-1") == "resolved"
    assert at(found, 8, "HF-1") == "resolved"
    # The value wins over a (wrong) annotation: the object is a Table whatever the hint says.
    assert at(found, 10, "HF-1") == "resolved"


@pytest.mark.parametrize(
    "annotation, extra_import",
    [
        ("hf.Table", ""),
        ('"hf.Table"', ""),  # PEP 484: forward references as string literals
        ("'hf.Table'", ""),
        ("Optional[hf.Table]", "from typing import Optional\n"),
        ("typing.Optional[hf.Table]", "import typing\n"),
        ("Union[hf.Table, None]", "from typing import Union\n"),
        ("hf.Table | None", ""),  # PEP 604
        ("None | hf.Table", ""),
        ('Optional["hf.Table"]', "from typing import Optional\n"),
    ],
)
def test_parameter_annotations(annotation: str, extra_import: str) -> None:
    code = HEAD + extra_import + f"def f(t: {annotation}):\n    t.stack_rows()\n"
    line = line_of(code, "t.stack_rows()")
    # PEP 484 (type hints: Optional/Union, string forward references) and PEP 604 (X | None):
    # inside f, t is declared a heronframe.Table (or None, which has no stack_rows).
    assert at(findings(code), line, "HF-1") == "resolved"


def test_annotation_on_unimported_optional_is_not_proof() -> None:
    code = HEAD + "def f(t: Optional[hf.Table]):\n    t.stack_rows()\n"
    # Optional is not bound in this module (NameError at definition time, §4.2.2); the
    # resolver cannot know what it is, so the declared type is not proven.
    assert at(findings(code), 3, "HF-1") != "resolved"


def test_return_annotation_of_a_user_function() -> None:
    code = HEAD + src(
        """
        def load(p) -> hf.Table:
            return unknown(p)
        load("x").stack_rows()
        """
    )
    # PEP 484: the return annotation declares the type of the call's result.
    assert at(findings(code), 4, "HF-1") == "resolved"


def test_user_function_returning_a_library_object() -> None:
    code = HEAD + src(
        """
        def make():
            return hf.read_table("x")
        make().stack_rows()
        t = make()
        t.stack_rows()
        """
    )
    found = findings(code)
    # Language Reference §7.6: the call's value is the returned object, a Table by [types].
    assert at(found, 4, "HF-1") == "resolved"
    assert at(found, 6, "HF-1") == "resolved"


def test_with_statement_binds_the_entered_object() -> None:
    code = HEAD + src(
        """
        with hf.open_store(p) as s:
            s.flush_all()
        with hf.open_store(p) as s, hf.read_table(q) as t:
            t.stack_rows()
        """
    )
    found = findings(code)
    # §8.5: `as` binds the value of __enter__(); library context managers conventionally return
    # self (common practice), so s is the Store from [types].
    assert at(found, 3, "HF-7") == "resolved"
    assert at(found, 5, "HF-1") == "resolved"


# ---------------------------------------------------------------------------- user subclasses
def test_subclass_self_cls_and_super() -> None:
    code = HEAD + src(
        """
        class MyTable(hf.Table):
            def go(self):
                self.stack_rows()
                super().stack_rows()
            @classmethod
            def build(cls):
                cls.stack_rows(None)
        MyTable().stack_rows()
        """
    )
    found = findings(code)
    # §3.3 / data model: attribute lookup on a subclass instance falls back to the base class
    # (the MRO); self, cls and super() all reach heronframe.Table.stack_rows.
    assert at(found, 4, "HF-1") == "resolved"
    assert at(found, 5, "HF-1") == "resolved"
    assert at(found, 8, "HF-1") == "resolved"
    assert at(found, 9, "HF-1") == "resolved"


def test_override_of_a_changed_member_is_a_finding_at_the_def_line() -> None:
    code = HEAD + src(
        """
        class MyTable(hf.Table):
            def stack_rows(self, other):
                return super().stack_rows(other)
            def go(self):
                self.stack_rows(1)
        class Plain:
            def stack_rows(self):
                pass
        """
    )
    found = findings(code)
    # docs/change-list.md: a method of a downstream subclass of a library class, named like a
    # changed member, is a finding (an override).
    assert at(found, 3, "HF-1") == "resolved"
    overrides = [f for f in found if f.line == 3 and f.change == "HF-1"]
    assert overrides and "override" in overrides[0].pattern
    assert at(found, 4, "HF-1") == "resolved"  # super() reaches the library method
    # self.stack_rows() calls the user's own override (§3.3 MRO): not the library member.
    assert at(found, 6, "HF-1") is None
    # A class with no library ancestor is not an override.
    assert at(found, 9, "HF-1") is None


def test_override_through_an_intermediate_user_class() -> None:
    code = HEAD + src(
        """
        class Base(hf.Table):
            pass
        class Leaf(Base):
            def stack_rows(self):
                pass
        """
    )
    # The data model's MRO: heronframe.Table is an ancestor of Leaf through Base.
    assert at(findings(code), 5, "HF-1") == "resolved"


def test_attribute_set_in_init_is_known_in_other_methods() -> None:
    code = HEAD + src(
        """
        class Report:
            def render(self):
                self.table.stack_rows()
            def __init__(self, path):
                self.table = hf.read_table(path)
        """
    )
    # Instance attributes set in __init__ exist before any other method runs (data model,
    # object.__init__; common practice).
    assert at(findings(code), 4, "HF-1") == "resolved"


# ---------------------------------------------------------------------------- parameter kinds
def test_parameter_removed_by_keyword_and_position() -> None:
    code = HEAD + src(
        """
        t = hf.Table()
        t.sort_by("a", inplace=True)
        t.sort_by("a", True)
        t.sort_by("a")
        t.sort_by(by="a")
        hf.Table.sort_by(t, "a", True)
        hf.Table.sort_by(t, "a")
        """
    )
    found = findings(code)
    # docs/change-list.md: parameter-removed matches calls that pass the parameter (by keyword,
    # or at `position`); position is 0-based with self excluded, so inplace is the second argument.
    assert at(found, 3, "HF-4") == "resolved"
    assert at(found, 4, "HF-4") == "resolved"
    assert at(found, 5, "HF-4") is None
    assert at(found, 6, "HF-4") is None
    # Called through the class, self is passed explicitly (Language Reference §3.2, instance
    # methods): the parameter is then the third positional argument.
    assert at(found, 7, "HF-4") == "resolved"
    assert at(found, 8, "HF-4") is None


def test_star_arguments_make_parameter_findings_possible() -> None:
    code = HEAD + src(
        """
        t = hf.Table()
        t.sort_by("a", **options)
        t.sort_by(*args)
        hf.read_table(p, **options)
        t.rename_cols(**options)
        """
    )
    found = findings(code)
    # docs/findings.md, possible: the call may or may not pass the parameter; the receiver is proven
    # but the match is not, so the finding is `possible`.
    assert at(found, 3, "HF-4") == "possible"
    assert at(found, 4, "HF-4") == "possible"
    assert at(found, 5, "HF-5") == "possible"
    assert at(found, 6, "HF-8") == "possible"


def test_default_changed_matches_calls_that_omit_the_parameter() -> None:
    code = HEAD + src(
        """
        hf.read_table(p)
        hf.read_table(p, sep=",")
        hf.read_table
        """
    )
    found = findings(code)
    # docs/change-list.md: default-changed matches calls that do not pass it at all (and only calls).
    assert at(found, 2, "HF-5") == "resolved"
    assert at(found, 3, "HF-5") is None
    assert at(found, 4, "HF-5") is None


def test_parameter_renamed() -> None:
    code = HEAD + src(
        """
        t = hf.Table()
        t.rename_cols({"a": "b"})
        t.rename_cols(mapping={"a": "b"})
        t.rename_cols()
        t.rename_cols(columns={})
        """
    )
    found = findings(code)
    # docs/change-list.md: parameter-renamed matches calls that pass the parameter by keyword or at its
    # position (position = 0 in the test change list).
    assert at(found, 3, "HF-8") == "resolved"
    assert at(found, 4, "HF-8") == "resolved"
    assert at(found, 5, "HF-8") is None
    assert at(found, 6, "HF-8") is None


# ---------------------------------------------------------------------------- unknown receivers
def test_unknown_receiver_confidence_depends_on_how_common_the_name_is() -> None:
    code = HEAD + src(
        """
        x.stack_rows()
        x.copy()
        x.append(1)
        x.sort_by("a", inplace=True)
        t = hf.Table()
        t.copy()
        t.append(1)
        """
    )
    found = findings(code)
    # docs/findings.md: `inferred` when the name is specific to the library ...
    assert at(found, 2, "HF-1") == "inferred"
    assert at(found, 5, "HF-4") == "inferred"
    # ... `possible` when builtin types have it too (common practice: dict.copy, list.copy,
    # list.append; the resolver reads the names from the running interpreter's builtin types).
    assert hasattr(dict, "copy") and hasattr(list, "append")  # the interpreter agrees
    assert at(found, 3, "HF-6") == "possible"
    assert at(found, 4, "HF-9") == "possible"
    # A proven Table receiver is resolved whatever the name.
    assert at(found, 7, "HF-6") == "resolved"
    assert at(found, 8, "HF-9") == "resolved"


def test_common_names_come_from_builtin_types(q) -> None:
    # Common practice: these attribute names exist on builtin types of every CPython 3.
    for name, owner in (("copy", dict), ("append", list), ("stack_rows", None)):
        cc = next(c for c in q.compiled if c.change.name == name)
        assert q.is_specific(cc) is (owner is None)
        if owner is not None:
            assert hasattr(owner, name)


def test_known_foreign_receiver_gives_no_finding() -> None:
    code = HEAD + src(
        """
        items = []
        items.append(1)
        d = {}
        d.copy()
        "text".copy()
        """
    )
    found = findings(code)
    # §6.2.5 (displays) / §2.4 (literals): these objects are a list, a dict and a str, not
    # the library.
    assert found == []


def test_pattern_names_the_receiver() -> None:
    code = HEAD + "t = hf.Table()\nt.stack_rows(1, key=2)\nx.stack_rows()\n"
    by_line = {f.line: f for f in findings(code) if f.change == "HF-1"}
    # docs/findings.md: every finding carries a pattern (a normalised shape of the use).
    assert by_line[3].confidence is Confidence.RESOLVED
    assert "stack_rows" in by_line[3].pattern and "key" in by_line[3].pattern
    assert by_line[4].confidence is Confidence.INFERRED


def test_findings_report_the_attribute_name_position() -> None:
    code = HEAD + "t = hf.Table()\nresult = t.stack_rows()\n"
    (f,) = [f for f in findings(code) if f.change == "HF-1"]
    # docs/findings.md: line is 1-based; columns count from 0 (libcst PositionProvider convention).
    assert (f.line, f.column) == (3, len("result = t."))
    assert f.file == "main.py" and f.cell is None and f.project == "demo"



# ---------------------------------------------------------------------------- more flows
def test_tuple_unpacking_assignment() -> None:
    code = HEAD + src(
        """
        a, b = hf.Table(), hf.read_table(p)
        a.stack_rows()
        b.stack_rows()
        (c, d) = [hf.Table(), 1]
        c.stack_rows()
        """
    )
    found = findings(code)
    # Language Reference §7.2: for a target list, the items of the right-hand iterable are
    # "assigned, from left to right, to the corresponding targets".
    assert at(found, 3, "HF-1") == "resolved"
    assert at(found, 4, "HF-1") == "resolved"
    assert at(found, 6, "HF-1") == "resolved"


def test_class_pattern_with_as_binds_an_instance() -> None:
    code = HEAD + src(
        """
        match value:
            case hf.Table() as t:
                t.stack_rows()
        """
    )
    # §8.6.4.9 "Class patterns": the pattern succeeds only if isinstance(subject, hf.Table);
    # §8.6.4.3 "AS patterns" then bind the subject to t.
    assert at(findings(code), 4, "HF-1") == "resolved"


def test_star_parameters_annotations_describe_the_elements() -> None:
    code = HEAD + src(
        """
        def f(*ts: hf.Table, **named: hf.Table):
            ts.stack_rows()
            named.stack_rows()
        """
    )
    found = findings(code)
    # PEP 484 "Arbitrary argument lists and default argument values": `*args: str` means each
    # positional argument is a str, so args itself is a tuple (and **kwds a dict): neither is a
    # Table.
    assert at(found, 3, "HF-1") != "resolved"
    assert at(found, 4, "HF-1") != "resolved"


def test_user_context_manager_binds_what_enter_returns() -> None:
    code = HEAD + src(
        """
        class Opened:
            def __enter__(self):
                return hf.read_table("p")
            def __exit__(self, *exc):
                return False
        with Opened() as t:
            t.stack_rows()
        """
    )
    # §8.5 "The with statement": "The return value from __enter__() is assigned to the target".
    assert at(findings(code), 8, "HF-1") == "resolved"


def test_override_defined_under_a_condition_in_the_class_body() -> None:
    code = HEAD + src(
        """
        import sys
        class MyTable(hf.Table):
            if sys.version_info >= (3, 9):
                def stack_rows(self):
                    pass
            else:
                def stack_rows(self, other):
                    pass
        """
    )
    found = findings(code)
    # §8.8: an `if` in a class body runs in the class scope, so either def binds a method of
    # MyTable; docs/change-list.md counts a method named like a changed member as an override.
    assert at(found, 5, "HF-1") == "resolved"
    assert at(found, 8, "HF-1") == "resolved"


def test_type_of_self_is_the_class() -> None:
    code = HEAD + src(
        """
        class MyTable(hf.Table):
            def go(self):
                return type(self).stack_rows(self)
        """
    )
    # Library reference, type(object): "With one argument, return the type of an object";
    # MyTable's attribute lookup reaches heronframe.Table.stack_rows (MRO).
    assert at(findings(code), 4, "HF-1") == "resolved"


def test_override_kinds() -> None:
    code = HEAD + src(
        """
        class MyTable(hf.Table):
            def sort_by(self, by, inplace=False):
                pass
            async def stack_rows(self):
                pass
        class MyStore(hf.Store):
            def stack_rows(self):
                pass
        """
    )
    found = findings(code)
    # docs/change-list.md: an override is a finding for every kind, parameter kinds included ...
    assert at(found, 3, "HF-4") == "resolved"
    # ... async def defines a method too (§8.9.1 coroutine function definition) ...
    assert at(found, 5, "HF-1") == "resolved"
    # ... but a method of a subclass of a class that has no such member is no override.
    assert at(found, 8, "HF-1") is None


def test_self_in_nested_function_cls_call_and_two_argument_super() -> None:
    code = HEAD + src(
        """
        class MyTable(hf.Table):
            def go(self):
                def inner():
                    return self.stack_rows()
                return inner()
            @classmethod
            def make(cls):
                return cls()
            def again(self):
                super(MyTable, self).stack_rows()
        MyTable.make().stack_rows()
        """
    )
    found = findings(code)
    # §4.2.2: inner() sees go's `self` (free variable of an enclosing function).
    assert at(found, 5, "HF-1") == "resolved"
    # §3.2 classmethod: cls is the class, cls() an instance.
    assert at(found, 12, "HF-1") == "resolved"
    # Library reference, super(type, object_or_type): lookup starts after MyTable in the MRO.
    assert at(found, 11, "HF-1") == "resolved"


def test_instance_attribute_from_class_annotation_and_other_methods() -> None:
    code = HEAD + src(
        """
        class Holder:
            table: hf.Table
            def load(self):
                self.other = hf.read_table("p")
            def go(self):
                self.table.stack_rows()
                self.other.stack_rows()
        """
    )
    found = findings(code)
    # PEP 526: a class-level annotation declares the type of instance attribute `table`.
    assert at(found, 7, "HF-1") == "resolved"
    # An attribute set in any method of the class (common practice: the value flows to
    # every method that reads it).
    assert at(found, 8, "HF-1") == "resolved"


def test_keyword_names_and_parameter_names_are_not_references() -> None:
    code = HEAD + src(
        """
        print(stack_rows=1, copy=2)
        def f(stack_rows, copy=2):
            return stack_rows
        """
    )
    # §6.3.4 (calls): a keyword is the name of a parameter, not a reference to an object.
    assert findings(code) == []
