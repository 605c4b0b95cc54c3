"""Tests of corpus.lexer: the one tokenizer of the Python 2 test and the token-level reading."""

from __future__ import annotations

import io
import sysconfig
import tokenize
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from impactscope.corpus import lexer

_KINDS = {tokenize.NAME: lexer.NAME, tokenize.NUMBER: lexer.NUMBER, tokenize.STRING: lexer.STRING, tokenize.OP: lexer.OP}


def reference(text: str) -> list[tuple[str, str, int, int]]:
    """The standard library's tokenizer: names, numbers, strings and operators with positions."""
    out = []
    for token in tokenize.generate_tokens(io.StringIO(text).readline):
        if token.type in _KINDS:
            out.append((_KINDS[token.type], token.string, *token.start))
    return out


def ours(text: str) -> list[tuple[str, str, int, int]]:
    return [(t.kind, t.text, t.line, t.column) for t in lexer.tokens(text) if t.kind != lexer.NEWLINE]


@pytest.mark.parametrize("module", ["textwrap.py", "json/decoder.py", "argparse.py", "dataclasses.py"])
def test_python3_source_is_split_as_tokenize_splits_it(module: str) -> None:
    # The outside source: CPython's own `tokenize`, on standard library modules (read as text).
    text = (Path(sysconfig.get_paths()["stdlib"]) / module).read_text(encoding="utf-8")
    assert ours(text) == reference(text)


def test_logical_lines_end_at_depth_zero_only() -> None:
    # The Language Reference, 2.1.5 and 2.1.6: brackets and a backslash join lines.
    found = [(t.kind, t.text, t.depth) for t in lexer.tokens("f(a,\n  b) \\\n + c\nd\n")]
    assert found == [
        ("name", "f", 0), ("op", "(", 0), ("name", "a", 1), ("op", ",", 1), ("name", "b", 1), ("op", ")", 1),
        ("op", "+", 0), ("name", "c", 0), ("newline", "\n", 0), ("name", "d", 0), ("newline", "\n", 0),
    ]


def test_python2_tokens_are_kept_whole() -> None:
    # Python 2's lexical forms (the Python 2.7 Language Reference, 2.4 Literals and 2.6
    # Delimiters, recalled from memory): ur'' strings, backticks, <>, long and octal literals.
    found = [(t.kind, t.text) for t in lexer.tokens("x = ur'a\\'b' <> `y` + 10L + 0777\n")]
    assert found == [
        ("name", "x"), ("op", "="), ("string", "ur'a\\'b'"), ("op", "<>"), ("op", "`"), ("name", "y"),
        ("op", "`"), ("op", "+"), ("number", "10L"), ("op", "+"), ("number", "0777"), ("newline", "\n"),
    ]


def test_strings_still_open_say_so() -> None:
    assert [t.kind for t in lexer.tokens("s = 'open\nt = '''also\n")] == [
        "name", "op", "open string", "newline", "name", "op", "open string"]
    assert [t.kind for t in lexer.tokens("s = 'shut'")] == ["name", "op", "string"]


@given(st.text(alphabet=st.sampled_from(list("ab1 \t\n\r\\'\"#()[]{}.,:;=<>`uUrRlL0x_é")), max_size=60))
def test_never_raises_and_positions_are_in_range(text: str) -> None:
    lines = text.replace("\r\n", "\n").replace("\r", "\n").split("\n")
    for token in lexer.tokens(text):
        assert 1 <= token.line <= len(lines)
        assert token.depth >= 0
