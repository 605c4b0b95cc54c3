"""The terminal report on the demo corpus at 80, 100 and 150 columns, read back against the JSON
report of the same results file (the session's scan, tests/conftest.py).

What the counts mean is docs/report-json.md: a change's `projects.resolved` counts projects with
a resolved finding, `projects.inferred` those at inferred or stronger, `projects.possible` any
level; `sites_by_level` counts sites the same way.
"""

from __future__ import annotations

import dataclasses
import re
from dataclasses import dataclass, field
from typing import Any

import pytest
from typer.testing import CliRunner

from impactscope.cli import app
from impactscope.report.model import Report
from impactscope.report.terminal import FALLBACK_WIDTH, PATTERN_ROWS, PROJECT_NAMES, terminal_width, to_table

LEVELS = ("resolved", "inferred", "possible")
WIDTHS = (80, 100, 150)


@pytest.fixture(scope="module")
def model(demo_model: Report) -> Report:
    return demo_model


@pytest.fixture(scope="module")
def report(scanned_demo_corpus) -> dict[str, Any]:
    return scanned_demo_corpus.report


@dataclass
class Block:
    """One table as laid out: the lines above its rule (headings), and its rows; a row's
    continuation lines (a wrapped or moved flexible cell) are joined into `more`."""

    title: str
    headings: list[str]
    rows: list[list[str]] = field(default_factory=list)
    more: list[str] = field(default_factory=list)


def blocks(text: str) -> list[Block]:
    lines = text.splitlines()
    out: list[Block] = []
    for index, line in enumerate(lines):
        if not line.lstrip().startswith("─"):
            continue
        top = index
        while top > 0 and lines[top - 1].strip() and not lines[top - 1].lstrip().startswith("─"):
            top -= 1
        # Headings are the one or two lines right above the rule; what is above them is the title.
        headings = lines[max(top, index - 2):index]
        if len(headings) == 2 and not re.search(r"\S {2,}\S", headings[0]) and headings[0] == headings[0].lstrip():
            headings = headings[1:]
        title = " ".join(line.strip() for line in lines[top:index - len(headings)])
        block = Block(title, headings)
        indent = len(line) - len(line.lstrip())
        for row in lines[index + 1:]:
            if not row.strip():
                break
            body = row[indent:]
            if body[:1] != " ":
                block.rows.append(re.split(r" {2,}", body.strip()))
                block.more.append("")
            else:
                block.more[-1] = (block.more[-1] + " " + body.strip()).strip()
        out.append(block)
    return out


def _unwrap(first: str, more: str) -> str:
    """A flexible cell wrapped over lines: after a dot, a slash or a comma the parts join bare."""
    text = first
    for part in more.split(" ") if more else []:
        text += part if text.endswith((".", "/")) else " " + part
    return text


@pytest.fixture(scope="module", params=WIDTHS, ids=[f"{w}-columns" for w in WIDTHS])
def table(request, model: Report) -> tuple[int, str]:
    return request.param, to_table(model, width=request.param)


def test_every_line_fits_the_width(table) -> None:
    width, text = table
    assert max(len(line) for line in text.splitlines()) <= width


def test_first_line_counts_the_projects_any_change_hits(table, report: dict[str, Any]) -> None:
    _, text = table
    hit = {level: len({f["project"] for f in report["findings"]
                       if LEVELS.index(f["confidence"]) <= LEVELS.index(level)}) for level in LEVELS}
    t = report["totals"]
    head = " ".join(text.split("\n\n")[0].split())
    assert head.startswith(
        f"heronframe 3.0: the planned changes hit {hit['resolved']} projects proven, {hit['inferred']} likely, "
        f"{hit['possible']} at most, of the {t['projects_using_library']} projects that use heronframe "
        f"({t['projects']} projects scanned)"), head
    assert "warning" not in head  # the demo's scan finished and no file hit an analysis error


def _by_proven(report: dict[str, Any]) -> list[dict[str, Any]]:
    order = {c["id"]: i for i, c in enumerate(report["changes"])}
    return sorted(report["changes"], key=lambda c: (-c["projects"]["resolved"], -c["projects"]["possible"], order[c["id"]]))


def test_hits_table_rows_are_sorted_by_proven_impact_with_the_json_counts(table, report: dict[str, Any]) -> None:
    width, text = table
    hits = blocks(text)[0]
    assert hits.title.startswith("Projects hit by each change, most proven first.")
    assert "projects hit" in hits.headings[0] and "share of users" in hits.headings[0]
    names = re.split(r" {2,}", hits.headings[-1].strip())
    expected = _by_proven(report)
    assert [row[0] for row in hits.rows] == [c["id"] for c in expected]
    assert [c["projects"]["resolved"] for c in expected] == sorted((c["projects"]["resolved"] for c in expected), reverse=True)
    for row, more, change in zip(hits.rows, hits.more, expected):
        if len(row) == 6:  # too narrow: the member goes on its own line under the row
            assert names == ["change", "kind", "proven", "likely", "at most", "proven (95% interval)"]
            cid, kind, proven, likely, most, share = row
            member = more
        else:
            assert names == ["change", "member", "kind", "proven", "likely", "at most", "proven (95% interval)"]
            cid, member, kind, proven, likely, most, share = row
            member = _unwrap(member, more)
        assert member == change["member"] and kind == change["kind"], row
        assert [proven, likely, most] == [str(change["projects"][level]) for level in LEVELS], row
        estimate = change["share"]["resolved"]
        assert share == f"{estimate['estimate']:.1%} ({estimate['low']:.1%}–{estimate['high']:.1%})", row
    if width == 150:  # wide enough for every member on its row
        assert not any(hits.more)


def test_exposure_and_sites_table_has_plain_headings_and_sites_by_level(table, report: dict[str, Any]) -> None:
    _, text = table
    exposure = blocks(text)[1]
    assert "exp / shield" not in text
    assert exposure.headings[0].split() == ["proven", "projects", "whose", "requirement", "sites"]
    assert re.split(r" {2,}", exposure.headings[1].strip()) == [
        "change", "admits 3.0", "excludes it", "states none", "proven", "likely", "at most", "files"]
    for row, change in zip(exposure.rows, _by_proven(report)):
        e = change["exposure"]
        assert row == [change["id"], str(e["exposed"]), str(e["shielded"]), str(e["unconstrained"]),
                       *(str(change["sites_by_level"][level]) for level in LEVELS), str(change["files"])]
        assert change["sites_by_level"]["possible"] == change["sites"]


def test_each_change_lists_hit_projects_example_sites_and_patterns(table, report: dict[str, Any]) -> None:
    width, text = table
    for change in report["changes"]:
        start = text.index(f"\n{change['id']} {change['member']} ({change['kind']})")
        part = text[start:text.index("\n\n", start + 1)]
        flat = " ".join(part.split())
        mine = [f for f in report["findings"] if f["change"] == change["id"]]
        strongest: dict[str, int] = {}
        for f in mine:
            strongest[f["project"]] = min(strongest.get(f["project"], 9), LEVELS.index(f["confidence"]))
        sites = {p: sum(1 for f in mine if f["project"] == p) for p in strongest}
        ordered = sorted(strongest, key=lambda p: (strongest[p], -sites[p], p))
        words = {"resolved": "proven", "inferred": "likely", "possible": "at most"}
        first = ordered[0]
        assert f"projects {first} ({words[LEVELS[strongest[first]]]}, {sites[first]} site" in flat, flat[:300]
        if len(ordered) > PROJECT_NAMES:
            assert f"and {len(ordered) - PROJECT_NAMES} more" in flat
        # Three example sites by default, from three projects, the strongest first.
        site_lines = re.findall(r"^(?:  sites     |            )(\S+): (\S+):(\d+):(\d+)  ", part, re.M)
        assert len(site_lines) == 3, part
        assert len({s[0] for s in site_lines}) == 3
        found = {(f["project"], f["file"], f["line"], f["column"] + 1) for f in mine}
        assert {(p, file, int(line), int(col)) for p, file, line, col in site_lines} <= found
        patterns = [b for b in blocks(part) if b.headings and b.headings[-1].strip().startswith("call pattern")][0]
        shown = change["patterns"][:PATTERN_ROWS]
        assert [row[-3:] for row in patterns.rows[:len(shown)]] == [
            [p["confidence"], str(p["projects"]), str(p["sites"])] for p in shown]
        assert [_unwrap(row[0], more) for row, more in zip(patterns.rows, patterns.more)][:len(shown)] == [
            p["pattern"] for p in shown]


def test_sites_option_and_summary(model: Report) -> None:
    one = to_table(model, width=100, sites=1)
    assert len(re.findall(r"^  sites     ", one, re.M)) == len(model.changes)
    assert not re.search(r"^            \S+: \S+:\d+:\d+  ", one, re.M)  # no second site
    none = to_table(model, width=100, sites=0)
    assert "  sites     " not in none
    summary = to_table(model, width=100, summary=True)
    assert len(blocks(summary)) == 2  # the hits table and the exposure table, nothing per change
    assert "call pattern" not in summary and "Files not analysed" not in summary
    full = to_table(model, width=100)
    assert full.startswith(summary.rstrip("\n"))


def test_width_comes_from_the_terminal(monkeypatch: pytest.MonkeyPatch, model: Report) -> None:
    monkeypatch.setenv("COLUMNS", "80")
    assert terminal_width() == 80
    assert max(len(line) for line in to_table(model).splitlines()) <= 80
    monkeypatch.delenv("COLUMNS")
    # Under pytest standard output is no terminal: the fallback width.
    assert terminal_width() == FALLBACK_WIDTH


def test_warnings_for_an_interrupted_scan_and_failed_files(model: Report) -> None:
    from impactscope.report.model import FailedFile

    broken = dataclasses.replace(
        model, complete=False,
        totals=dataclasses.replace(model.totals, files_analysis_error=2),
        failed_files=(FailedFile("p", "a.py", "analysis error", "ValueError | x"),
                      FailedFile("p", "b.py", "analysis error", "ValueError | y")),
    )
    text = to_table(broken, width=100, summary=True)
    flat = " ".join(text.split())
    assert "warning: the scan was interrupted" in flat
    assert "warning: impactscope failed on 2 files (analysis error" in flat
    assert "warning" not in to_table(model, width=100, summary=True)


def test_the_cli_prints_the_table_at_the_fallback_width(scanned_demo_corpus, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("COLUMNS", raising=False)
    printed = CliRunner().invoke(app, ["report", str(scanned_demo_corpus.results)])
    assert printed.exit_code == 0, printed.output
    assert max(len(line) for line in printed.stdout.splitlines()) <= FALLBACK_WIDTH
    summary = CliRunner().invoke(app, ["report", str(scanned_demo_corpus.results), "--summary", "--sites", "1"])
    assert summary.exit_code == 0 and "call pattern" not in summary.stdout
    bad = CliRunner().invoke(app, ["report", str(scanned_demo_corpus.results), "--sites", "-1"])
    assert bad.exit_code == 2 and "--sites must be 0 or more" in bad.output
