"""Fuzzing change lists: TOML-ish documents made of the pieces a change list has, and mutations of
a valid one (characters dropped, doubled or replaced, lines swapped, values of the wrong type).

The contract (docs/command-line.md, "Input errors and bugs"): a change list is accepted, or refused with one line that
names the file, which the command line prints with exit code 2; never a traceback. So
`parse_change_list` returns or raises an InputError with a one-line message, and nothing else.
"""

from __future__ import annotations

import tempfile
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

from impactscope.changes import parse_change_list
from impactscope.cli import app
from impactscope.errors import InputError

from .helpers import CHANGES, USES

FUZZ = settings(max_examples=200, deadline=None, suppress_health_check=list(HealthCheck))
WHERE = Path("fuzzed.toml")

key = st.sampled_from(["library", "name", "release", "requires_python", "types", "change", "id", "member", "kind",
                       "replacement", "parameter", "new_parameter", "position", "deprecated_in", "note", "default",
                       "certainty", "source", "modules", "\"heronframe.read_table\"", "x", "a.b", "'q'"])
value = st.recursive(
    st.one_of(
        st.sampled_from(['"heronframe"', '"heronframe.stack"', '"removed"', '"renamed"', '"parameter-removed"',
                         '"3.0"', '">=3.9"', '"not a version"', '"high"', "2", "-1", "1e400", "true", "nan",
                         "1979-05-27", '""', '"\\u0000"', "'''multi\nline'''", '"\\ud800"', "0x10"]),
        st.text(alphabet="\"'[]{}=,.#\\\n abc0", max_size=6),
    ),
    lambda inner: st.one_of(st.lists(inner, max_size=3).map(lambda v: "[" + ", ".join(v) + "]"),
                            st.lists(st.tuples(key, inner), max_size=3).map(
                                lambda kv: "{" + ", ".join(f"{k} = {v}" for k, v in kv) + "}")),
    max_leaves=8,
)
line = st.one_of(
    st.tuples(key, value).map(lambda kv: f"{kv[0]} = {kv[1]}"),
    st.sampled_from(["[library]", "[[change]]", "[types]", "[change]", "[[library]]", "[library.x]", "# note", ""]),
)
document = st.lists(line, max_size=14).map("\n".join)


def _check(text: str | bytes) -> None:
    raw = text.encode("utf-8", "surrogatepass") if isinstance(text, str) else text
    try:
        parse_change_list(raw, WHERE)
    except InputError as exc:
        message = str(exc)
        assert "\n" not in message and message.startswith(str(WHERE)), message


@FUZZ
@given(text=document)
def test_documents_of_change_list_pieces(text: str) -> None:
    _check(text)


@FUZZ
@given(
    edits=st.lists(st.tuples(st.sampled_from(["drop", "double", "replace", "swap"]), st.integers(0, 10**6),
                             st.sampled_from(list("\"'[]{}=#\n\\ .,0aé\x00\x7f") + ["\ud800", "\r"])),
                   min_size=1, max_size=4),
)
def test_mutations_of_a_valid_change_list(edits: list[tuple[str, int, str]]) -> None:
    text = CHANGES
    for action, at, char in edits:
        at %= len(text) + 1
        if action == "drop":
            text = text[:at] + text[at + 1 :]
        elif action == "double":
            text = text[:at] + text[at : at + 1] * 2 + text[at + 1 :]
        elif action == "replace":
            text = text[:at] + char + text[at + 1 :]
        else:
            lines = text.split("\n")
            i, j = at % len(lines), (at // 7) % len(lines)
            lines[i], lines[j] = lines[j], lines[i]
            text = "\n".join(lines)
    _check(text)


@FUZZ
@given(raw=st.binary(max_size=200), depth=st.sampled_from([0, 10, 1_000, 100_000]), opener=st.sampled_from(["[", "{a="]))
def test_bytes_and_deep_nesting(raw: bytes, depth: int, opener: str) -> None:
    _check(raw)
    _check(CHANGES + f"\n[types]\nx = {opener * depth}")


@settings(max_examples=12, deadline=None, suppress_health_check=list(HealthCheck))
@given(text=document)
def test_the_command_line_accepts_or_refuses_in_one_line(text: str) -> None:
    with tempfile.TemporaryDirectory(prefix="fuzz-changes-") as folder:
        base = Path(folder)
        (base / "corpus" / "p").mkdir(parents=True)
        (base / "corpus" / "p" / "use.py").write_bytes(USES)
        (base / "changes.toml").write_text(text, encoding="utf-8", errors="surrogatepass")
        result = CliRunner().invoke(app, ["scan", str(base / "changes.toml"), str(base / "corpus"),
                                          "--out", str(base / "r.sqlite"), "--quiet"])
    assert result.exit_code in (0, 2), (result.exit_code, result.output, result.exception)
    assert "Traceback" not in result.output
    if result.exit_code == 2:
        assert len([ln for ln in result.stderr.splitlines() if ln.strip()]) == 1, result.stderr
