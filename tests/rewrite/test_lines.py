"""Changed lines put back into the original text: line ends and the final newline kept."""

from __future__ import annotations

import pytest

from impactscope.rewrite.lines import Lines, apply, hunks


@pytest.mark.parametrize(
    ("text", "bodies"),
    [
        ("a\nb\n", ("a", "b", "")),
        ("a\r\nb", ("a", "b")),
        ("a\rb\r\n", ("a", "b", "")),
        # A form feed is no line end for the interpreter (Language Reference, "Physical lines").
        ("a\x0cb\n", ("a\x0cb", "")),
    ],
)
def test_lines_split_at_the_interpreters_line_ends(text: str, bodies: tuple[str, ...]) -> None:
    lines = Lines.of(text)
    assert lines.bodies == bodies
    assert lines.text == text


@pytest.mark.parametrize(
    ("original", "expected"),
    [
        ("x = 1\r\ny = old\r\nz = 3\r\n", "x = 1\r\ny = new\r\nz = 3\r\n"),
        ("x = 1\ny = old", "x = 1\ny = new"),
        ("x = 1\ry = old\rz\r", "x = 1\ry = new\rz\r"),
        ("x = 1\r\ny = old\nz\r\n", "x = 1\r\ny = new\nz\r\n"),
    ],
)
def test_only_edited_lines_change(original: str, expected: str) -> None:
    lines = Lines.of(original)
    new = lines.normalised.replace("old", "new")
    assert apply(lines, hunks(lines.normalised, new)) == expected


def test_a_longer_replacement_takes_the_line_end_of_the_file() -> None:
    lines = Lines.of("f(a)\r\nrest\r\n")
    new = lines.normalised.replace("f(a)", "f(\n    a,\n)")
    assert apply(lines, hunks(lines.normalised, new)) == "f(\r\n    a,\r\n)\r\nrest\r\n"
