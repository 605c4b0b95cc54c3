"""The change list loader (impactscope.changes): the format of docs/change-list.md.

Error messages must name the file, the [[change]] entry (1-based index and id) and the fix
(docs/change-list.md, "The file": every error names the file, the entry, what is wrong and what
to write instead; docs/command-line.md: one line, exit code 2).
"""

from __future__ import annotations

from pathlib import Path

import pytest
from packaging.version import Version

from impactscope.changes import ChangeList, ChangeListError, Kind, load_change_list, parse_change_list

HEAD = '[library]\nname = "heronframe"\nrelease = "3.0"\n'

FIRST = '[[change]]\nid = "HF-1"\nmember = "heronframe.Table.stack_rows"\nkind = "removed"\n'


def parse(text: str, name: str = "changes.toml") -> ChangeList:
    return parse_change_list(text.encode("utf-8"), Path(name))


def error(text: str, name: str = "changes.toml") -> str:
    with pytest.raises(ChangeListError) as info:
        parse(text, name)
    message = str(info.value)
    assert "\n" not in message  # one line
    return message


def second(body: str) -> str:
    """A list whose second [[change]] entry is `body` (the first one is valid)."""
    return HEAD + FIRST + "[[change]]\n" + body


# ---------------------------------------------------------------------------- valid lists
def test_valid_list_loads() -> None:
    text = HEAD + 'requires_python = ">=3.9"\n' + '''
[types]
"heronframe.read_table" = "heronframe.Table"
"heronframe.Table" = "heronframe.Table"

[[change]]
id = "HF-1"
member = "heronframe.Table.stack_rows"
kind = "renamed"
replacement = "heronframe.Table.append_rows"
deprecated_in = "2.4"
note = "free text"

[[change]]
member = "heronframe.Table.sort_by"
kind = "parameter-removed"
parameter = "inplace"
position = 1

[[change]]
id = "HF-3"
member = "heronframe.read_table"
kind = "parameter-renamed"
parameter = "sep"
new_parameter = "delimiter"
'''
    cl = parse(text)
    assert cl.library == "heronframe" and cl.import_name == "heronframe"
    assert cl.release == Version("3.0")
    assert cl.requires_python is not None and "3.9" in cl.requires_python
    assert cl.types["heronframe.read_table"] == "heronframe.Table"
    first, second_, third = cl.changes
    assert (first.id, first.kind, first.replacement, first.deprecated_in, first.note) == (
        "HF-1", Kind.RENAMED, "heronframe.Table.append_rows", Version("2.4"), "free text",
    )
    # docs/change-list.md, `id`: optional, unique, default the member.
    assert second_.id and "sort_by" in second_.id
    assert (second_.parameter, second_.position) == ("inplace", 1)
    assert (third.parameter, third.new_parameter) == ("sep", "delimiter")
    assert cl.by_id("HF-3") is third
    assert cl.digest and cl.digest == parse(text).digest
    assert cl.digest != parse(text + "\n").digest


@pytest.mark.parametrize("kind", [k.value for k in Kind])
def test_every_documented_kind_is_accepted(kind: str) -> None:
    # docs/change-list.md lists the kinds: removed | renamed | moved | parameter-removed |
    # parameter-renamed | default-changed | behaviour-changed.
    extra = ""
    if kind in ("renamed", "moved"):
        extra += 'replacement = "heronframe.other"\n'
    if kind.startswith("parameter-") or kind == "default-changed":
        extra += 'parameter = "fill"\n'
    if kind == "parameter-renamed":
        extra += 'new_parameter = "fill_value"\n'
    cl = parse(HEAD + f'[[change]]\nmember = "heronframe.f"\nkind = "{kind}"\n' + extra)
    assert cl.changes[0].kind.value == kind


def test_documented_kind_names_are_exactly_these() -> None:
    # docs/change-list.md, "The kinds and what each one matches".
    assert {k.value for k in Kind} == {
        "removed", "renamed", "moved", "parameter-removed", "parameter-renamed",
        "default-changed", "behaviour-changed",
    }


# PEP 440 examples of valid versions (from the PEP's "Examples of compliant version schemes"
# and "Summary of permitted suffixes and relative ordering"; from memory).
@pytest.mark.parametrize("version", ["3.0", "1.0.dev456", "1.0a1", "1.0b2.post345.dev456", "1.0rc1", "1.0.post456", "1!2.0", "2012.10"])
def test_pep440_versions_load(version: str) -> None:
    cl = parse(HEAD.replace('"3.0"', f'"{version}"') + FIRST.replace('kind = "removed"', f'kind = "removed"\ndeprecated_in = "{version}"'))
    assert cl.release == Version(version) and cl.changes[0].deprecated_in == Version(version)


# ---------------------------------------------------------------------------- errors in [[change]]
def test_unknown_key_names_file_entry_and_allowed_keys() -> None:
    message = error(second('id = "HF-2"\nmember = "heronframe.stack"\nkind = "removed"\nsince = "2.0"\n'), "lists/planned.toml")
    assert "lists/planned.toml" in message
    assert "#2" in message and "'HF-2'" in message
    assert "since" in message
    assert "allowed" in message and "deprecated_in" in message  # the fix: the keys you can use


def test_unknown_kind_lists_the_kinds() -> None:
    message = error(second('id = "HF-2"\nmember = "heronframe.stack"\nkind = "deleted"\n'))
    assert "changes.toml" in message and "#2" in message and "'HF-2'" in message
    assert "'deleted'" in message
    for kind in Kind:
        assert kind.value in message


# PEP 440 "Public version identifiers": [N!]N(.N)*[{a|b|rc}N][.postN][.devN], plus an optional
# "+local". Strings outside that grammar (and its normalisation rules) are invalid. "3.0.*" is
# a wildcard, valid only inside a version-matching specifier (PEP 440 "Version matching");
# ">=3.0" is a specifier, not a version.
INVALID_VERSIONS = ["latest", "3.0.*", ">=3.0", "3.x", "1..0", "1.0+", "v", "3.0 final", "1.0-beta-2-extra"]


@pytest.mark.parametrize("bad", INVALID_VERSIONS)
def test_bad_release_version(bad: str) -> None:
    message = error(HEAD.replace('"3.0"', f'"{bad}"') + FIRST, "c.toml")
    assert "c.toml" in message and "release" in message and repr(bad) in message
    assert "PEP 440" in message and 'e.g. "3.0"' in message


@pytest.mark.parametrize("bad", INVALID_VERSIONS)
def test_bad_deprecated_in_version(bad: str) -> None:
    message = error(second(f'id = "HF-2"\nmember = "heronframe.stack"\nkind = "removed"\ndeprecated_in = "{bad}"\n'))
    assert "#2" in message and "'HF-2'" in message and "deprecated_in" in message
    assert repr(bad) in message and "PEP 440" in message


def test_duplicate_id_names_both_entries() -> None:
    message = error(second('id = "HF-1"\nmember = "heronframe.stack"\nkind = "removed"\n'))
    assert "changes.toml" in message and "#2" in message and "'HF-1'" in message
    assert "duplicate" in message and "#1" in message and "unique" in message


def test_default_ids_collide_when_the_member_repeats() -> None:
    body = '[[change]]\nmember = "heronframe.stack"\nkind = "removed"\n'
    message = error(HEAD + body + body)
    assert "duplicate" in message and "#2" in message


@pytest.mark.parametrize("kind", ["renamed", "moved"])
def test_renamed_or_moved_without_replacement(kind: str) -> None:
    message = error(second(f'id = "HF-2"\nmember = "heronframe.stack"\nkind = "{kind}"\n'))
    assert "#2" in message and "'HF-2'" in message
    assert "replacement" in message


def test_parameter_renamed_without_new_parameter() -> None:
    message = error(second('id = "HF-2"\nmember = "heronframe.stack"\nkind = "parameter-renamed"\nparameter = "fill"\n'))
    assert "#2" in message and "'HF-2'" in message and "new_parameter" in message


def test_parameter_kind_without_parameter() -> None:
    message = error(second('id = "HF-2"\nmember = "heronframe.stack"\nkind = "default-changed"\n'))
    assert "#2" in message and "parameter" in message


@pytest.mark.parametrize("position", ["-1", '"2"', "true", "1.5"])
def test_bad_position(position: str) -> None:
    message = error(second(f'id = "HF-2"\nmember = "heronframe.stack"\nkind = "parameter-removed"\nparameter = "fill"\nposition = {position}\n'))
    assert "#2" in message and "'HF-2'" in message and "position" in message
    assert ">= 0" in message  # the fix: a whole number from 0


def test_position_on_a_kind_without_parameter() -> None:
    message = error(second('id = "HF-2"\nmember = "heronframe.stack"\nkind = "removed"\nposition = 1\n'))
    assert "#2" in message and "position" in message


def test_member_must_be_dotted() -> None:
    message = error(second('id = "HF-2"\nmember = "heronframe..stack"\nkind = "removed"\n'))
    assert "#2" in message and "member" in message and "e.g." in message


# ---------------------------------------------------------------------------- errors elsewhere
def test_toml_syntax_error_names_the_line() -> None:
    text = HEAD + FIRST + "[[change]]\nid = HF-2\n"  # line 9: a bare word is not a TOML value
    assert text.splitlines()[8] == "id = HF-2"
    message = error(text, "broken.toml")
    # TOML v1.0.0: a value must be a string, number, boolean, date, array or table.
    assert "broken.toml" in message and "line 9" in message


def test_unknown_top_level_and_library_keys() -> None:
    assert "colour" in error(HEAD + "[colour]\nx = 1\n" + FIRST)
    message = error(HEAD + 'homepage = "x"\n' + FIRST)
    assert "homepage" in message and "[library]" in message and "allowed" in message


def test_missing_library_name_and_no_changes() -> None:
    assert "[library]" in error(FIRST)
    assert "[[change]]" in error(HEAD)


def test_bad_requires_python() -> None:
    # PEP 440 "Version specifiers": a specifier needs a comparison operator before the version.
    message = error(HEAD + 'requires_python = "python3"\n' + FIRST)
    assert "requires_python" in message and "'python3'" in message and "specifier" in message


def test_bad_types_entry() -> None:
    message = error(HEAD + '[types]\n"heronframe.read_table" = 3\n' + FIRST)
    assert "[types]" in message and "heronframe.read_table" in message


def test_not_utf8() -> None:
    with pytest.raises(ChangeListError) as info:
        parse_change_list(HEAD.encode() + b"# \xff\xfe\n" + FIRST.encode(), Path("latin.toml"))
    assert "latin.toml" in str(info.value) and "UTF-8" in str(info.value)


def test_missing_file(tmp_path: Path) -> None:
    missing = tmp_path / "nope.toml"
    with pytest.raises(ChangeListError) as info:
        load_change_list(missing)
    assert str(missing) in str(info.value)


def test_load_from_disk(tmp_path: Path) -> None:
    path = tmp_path / "c.toml"
    path.write_text(HEAD + FIRST, encoding="utf-8")
    assert load_change_list(path).changes[0].id == "HF-1"


def test_errors_are_value_errors() -> None:
    # docs/command-line.md: input errors subclass InputError, a ValueError (packaging's style).
    assert issubclass(ChangeListError, ValueError)


# ---------------------------------------------------------------------------- the library's modules
@pytest.mark.parametrize(("name", "expected"), [
    ("heronframe", "heronframe"),
    # PEP 503 "Normalized Names": runs of -, _ and . become one -, lowercase; then - -> _.
    ("Heron.Frame", "heron_frame"),
    ("heron--frame_tools", "heron_frame_tools"),
    ("HeronFrame", "heronframe"),
])
def test_the_top_module_defaults_to_the_normalised_name(name: str, expected: str) -> None:
    member = f'[[change]]\nmember = "{expected}.Table"\nkind = "removed"\n'
    cl = parse(f'[library]\nname = "{name}"\n' + member)
    assert cl.import_name == expected and cl.top_modules == frozenset({expected})


def test_a_member_outside_the_library_names_the_entry_and_the_fix() -> None:
    message = error(second('id = "HF-2"\nmember = "datetime.datetime"\nkind = "removed"\n'), "pd.toml")
    assert message.startswith("pd.toml: [[change]] #2 (id 'HF-2'): member 'datetime.datetime' is not under")
    assert "(heronframe)" in message and "heronframe.datetime.datetime" in message
    assert "[library] modules" in message


def test_modules_lists_every_top_level_module() -> None:
    text = '[library]\nname = "heronframe"\nmodules = ["heronframe", "heron_io"]\n' + FIRST + \
        '[[change]]\nmember = "heron_io.read"\nkind = "removed"\n'
    cl = parse(text)
    assert cl.modules == ("heronframe", "heron_io") and cl.import_name == "heronframe"
    assert cl.top_modules == frozenset({"heronframe", "heron_io"})
    # The import name defaults to the first module listed.
    only = parse('[library]\nname = "heron-frame-tools"\nmodules = ["hft"]\n[[change]]\nmember = "hft.x"\nkind = "removed"\n')
    assert only.import_name == "hft"
    assert "(heronframe, heron_io)" in error(text + '[[change]]\nmember = "numpy.x"\nkind = "removed"\n')


@pytest.mark.parametrize("value", ['"heronframe"', "[]", '["heron.frame"]', "[1]"])
def test_bad_modules(value: str) -> None:
    message = error(f'[library]\nname = "heronframe"\nmodules = {value}\n' + FIRST)
    assert "[library] modules" in message and 'e.g. modules = ["heronframe"]' in message


def test_import_name_must_be_one_of_the_modules() -> None:
    message = error('[library]\nname = "heronframe"\nmodules = ["heronframe"]\nimport_name = "hf"\n' + FIRST)
    assert "import_name 'hf'" in message and "modules" in message


def test_dynamic_flag() -> None:
    cl = parse(second('member = "heronframe.datetime"\nkind = "removed"\ndynamic = true\n'))
    assert [c.dynamic for c in cl.changes] == [False, True]
    message = error(second('id = "HF-2"\nmember = "heronframe.datetime"\nkind = "removed"\ndynamic = "yes"\n'))
    assert "#2" in message and "dynamic must be true or false" in message


def test_label_names_the_file_and_the_entry() -> None:
    cl = parse(HEAD + FIRST + '[[change]]\nid = "HF-2"\nmember = "heronframe.stack"\nkind = "removed"\n', "c.toml")
    assert cl.label(cl.changes[1]) == "c.toml: [[change]] #2 (id 'HF-2')"


def test_certainty_key() -> None:
    # docs/change-list.md, `certainty`: a change may carry certainty = "high"|"medium"|"low";
    # drafts write it, hand-written entries leave it out.
    cl = parse(second('member = "heronframe.stack"\nkind = "removed"\ncertainty = "low"\n'))
    assert [c.certainty for c in cl.changes] == [None, "low"]
    assert [c.uncertain for c in cl.changes] == [False, True]
    message = error(second('id = "HF-2"\nmember = "heronframe.stack"\nkind = "removed"\ncertainty = "sure"\n'))
    assert "#2" in message and "certainty 'sure'" in message and "'high', 'medium', 'low'" in message


def test_toml_nested_past_the_parser_is_an_input_error(tmp_path) -> None:
    """A hostile change list: tomllib recurses per nesting level (RecursionError, not its own error)."""
    from impactscope.changes import ChangeListError, load_change_list

    path = tmp_path / "deep.toml"
    path.write_text("x = " + "[" * 100_000 + "]" * 100_000 + "\n")
    with pytest.raises(ChangeListError, match="nested too deeply"):
        load_change_list(path)


# ---------------------------------------------------------------------------- default
@pytest.mark.parametrize(
    ("literal", "python"),
    [
        ('","', "','"),
        ("false", "False"),
        ("3", "3"),
        ("0.5", "0.5"),
        ('["a", 1]', "['a', 1]"),
        ('{ sep = ";" }', "{'sep': ';'}"),
    ],
)
def test_default_is_kept_as_python_source(literal: str, python: str) -> None:
    import ast

    body = f'member = "heronframe.read_table"\nkind = "default-changed"\nparameter = "sep"\ndefault = {literal}\n'
    change = parse(HEAD + "[[change]]\n" + body).changes[0]
    assert change.default == python
    # The text is a Python literal of the TOML value (the TOML spec's types map one to one).
    assert ast.literal_eval(change.default) == ast.literal_eval(python)


def test_default_is_absent_unless_given() -> None:
    assert parse(HEAD + FIRST).changes[0].default is None


def test_default_on_a_kind_without_an_old_default() -> None:
    message = error(second('member = "heronframe.Table.pivot"\nkind = "renamed"\nreplacement = "heronframe.Table.p"\ndefault = 1\n'))
    assert "[[change]] #2" in message and "default applies only to" in message


@pytest.mark.parametrize("literal", ["1979-05-27", "nan", "inf"])
def test_default_without_a_python_literal(literal: str) -> None:
    body = f'member = "heronframe.Table.sort_by"\nkind = "parameter-removed"\nparameter = "inplace"\ndefault = {literal}\n'
    message = error(second(body))
    assert "[[change]] #2" in message and "default" in message
