"""The demo's report as each renderer prints it: terminal table (150 and 100 columns), Markdown, JSON.

Every check reads the printed text back and compares it with the JSON report of the same results
file (the session's scan of the demo corpus, tests/conftest.py), or with the generator's truth:
every change row with its counts, every call-pattern table, the Python 2 table, the reasons files
were not analysed, the totals line and the headings. The renderers are reached through the public
entry points only: the CLI (`report --format table|markdown|json`) and, for a width other than the
CLI's, `build_report` and `to_table`.

What the counts mean is docs/report-json.md (a change's `projects`): `projects.resolved` counts
projects with a resolved finding for the change, `projects.inferred` those with one at inferred or
stronger, `projects.possible` at any level.
"""

from __future__ import annotations

import json
from collections import defaultdict
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pytest
from typer.testing import CliRunner

from impactscope.cli import app
from impactscope.demo import GroundTruth

LEVELS = ("resolved", "inferred", "possible")
PATTERN_ROWS = 8  # the terminal table lists this many call patterns per change, then "... N more"


def _cli_report(results: Path, fmt: str) -> str:
    reported = CliRunner().invoke(app, ["report", str(results), "--format", fmt])
    assert reported.exit_code == 0, f"report --format {fmt} failed ({reported.exit_code}):\n{reported.output}"
    return reported.stdout


@pytest.fixture(scope="module")
def report(scanned_demo_corpus) -> dict[str, Any]:
    return scanned_demo_corpus.report


@pytest.fixture(scope="module")
def truth(scanned_demo_corpus) -> GroundTruth:
    return scanned_demo_corpus.truth


# ---------------------------------------------------------------------------------------------
# What every renderer must show, from the JSON report (and the truth for the Python 2 sites).


def _bounds(change: dict[str, Any]) -> str:
    return " / ".join(str(change["projects"][level]) for level in LEVELS)


def _exposure(change: dict[str, Any]) -> str:
    return " / ".join(str(change["exposure"][key]) for key in ("exposed", "shielded", "unconstrained"))


def _share_start(change: dict[str, Any]) -> str:
    """The proven share, as the renderers print it first in the share column (one decimal place)."""
    return f"{change['share']['resolved']['estimate']:.1%}"


def _legacy_counts(truth: GroundTruth) -> dict[str, tuple[int, int]]:
    """change -> (projects, sites) of the Python 2 sites the generator wrote."""
    sites: dict[str, list[str]] = defaultdict(list)
    for site in truth.legacy:
        sites[site.change].append(site.project)
    return {change: (len(set(projects)), len(projects)) for change, projects in sorted(sites.items())}


def _totals_line(report: dict[str, Any]) -> str:
    t = report["totals"]
    return (f"{t['projects']} projects scanned, {t['projects_using_library']} use the library; files {t['files']} = "
            f"{t['files_parsed']} parsed + {t['files_skipped']} skipped + {t['files_unparsed']} unparsed")


# ---------------------------------------------------------------------------------------------
# Reading a rich table back.


@dataclass
class Drawn:
    """One table as drawn: the text printed above it since the previous table (whitespace collapsed),
    its column headings and its body rows, each cell with its wrapped lines joined by a space."""

    above: str
    header: list[str] = field(default_factory=list)
    rows: list[list[str]] = field(default_factory=list)


def _cells(line: str, bar: str) -> list[str]:
    return [cell.strip() for cell in line.strip()[1:-1].split(bar)]


def _join(row: list[str], more: list[str]) -> None:
    for index, fragment in enumerate(more):
        if fragment:
            row[index] = f"{row[index]} {fragment}".strip()


def drawn_tables(text: str) -> list[Drawn]:
    tables: list[Drawn] = []
    above: list[str] = []
    current: Drawn | None = None
    for line in text.splitlines():
        if line.startswith("┏"):
            current = Drawn(" ".join(" ".join(above).split()))
            above = []
        elif line.startswith("┃"):
            assert current is not None
            cells = _cells(line, "┃")
            if not current.header:
                current.header = [""] * len(cells)
            _join(current.header, cells)  # a heading too wide for its column goes on over lines
        elif line.startswith("│"):
            assert current is not None
            cells = _cells(line, "│")
            if cells[0] or not current.rows:
                current.rows.append(cells)
            else:  # a row's later lines leave the first column empty
                _join(current.rows[-1], cells)
        elif line.startswith("└"):
            assert current is not None
            tables.append(current)
            current = None
        elif not line.startswith(("┡", "┣", "├")):
            above.append(line)
    assert current is None, "a table was not closed"
    return tables


def _shows(cell: str, value: object) -> bool:
    """The cell shows `value`, in full or cut short with an ellipsis where the column is too narrow."""
    text = str(value)
    if cell.endswith("…"):
        return len(cell) > 1 and text.startswith(cell[:-1])
    return cell == text


def _table_text(scanned_demo_corpus, width: int) -> str:
    if width == 150:  # the CLI's width
        return _cli_report(scanned_demo_corpus.results, "table")
    from impactscope.report.aggregate import build_report
    from impactscope.report.render import to_table
    from impactscope.store import ResultStore

    store = ResultStore.open(scanned_demo_corpus.results)
    try:
        return to_table(build_report(store), width=width)
    finally:
        store.close()


# ---------------------------------------------------------------------------------------------
# The terminal table.


@pytest.fixture(scope="module", params=[150, 100], ids=["150-columns", "100-columns"])
def table(request, scanned_demo_corpus) -> tuple[int, list[Drawn], str]:
    text = _table_text(scanned_demo_corpus, request.param)
    return request.param, drawn_tables(text), text


def test_table_keeps_within_its_width(table) -> None:
    width, _, text = table
    assert max(len(line) for line in text.splitlines()) <= width


def test_table_totals_and_headings(table, report: dict[str, Any]) -> None:
    _, tables, _ = table
    summary = tables[0]
    assert summary.above.startswith(f"{report['library']} {report['release']}: {_totals_line(report)}"), summary.above
    assert "Projects hit per planned change (proven / likely / at most)" in summary.above
    assert f"share of the {report['totals']['projects_using_library']} projects that use heronframe" in summary.above
    assert summary.header == ["change", "member", "kind", "projects hit", "share of users", "exp / shield / none", "sites"]
    titles = [t.above for t in tables[1:]]
    assert titles[0] == "Python 2 files (token-level reading, all at possible)"
    assert titles[1:-1] == [f"{c['id']} {c['member']}: call patterns" for c in report["changes"] if c["patterns"]]
    assert titles[-1] == "Files not analysed"


def test_table_has_every_change_row_with_the_json_counts(table, report: dict[str, Any]) -> None:
    width, tables, _ = table
    rows = tables[0].rows
    assert [row[0] for row in rows] == [c["id"] for c in report["changes"]]
    for row, change in zip(rows, report["changes"]):
        _, member, kind, bounds, share, exposure, sites = row
        assert _shows(member, change["member"]) and _shows(kind, change["kind"]), row
        if width == 150:  # wide enough for every name in full
            assert (member, kind) == (change["member"], change["kind"])
        assert bounds == _bounds(change), row
        assert share.startswith(_share_start(change) + " ("), row
        assert exposure == _exposure(change), row
        assert sites == str(change["sites"]), row


def test_table_python2_rows_are_the_generated_python2_sites(table, truth: GroundTruth) -> None:
    _, tables, _ = table
    drawn = next(t for t in tables if t.above.startswith("Python 2 files"))
    assert drawn.header == ["change", "projects", "sites"]
    assert {row[0]: (int(row[1]), int(row[2])) for row in drawn.rows} == _legacy_counts(truth)


def test_table_lists_the_first_call_patterns_of_each_change(table, report: dict[str, Any]) -> None:
    _, tables, _ = table
    by_title = {t.above: t for t in tables}
    for change in report["changes"]:
        drawn = by_title[f"{change['id']} {change['member']}: call patterns"]
        assert drawn.header == ["pattern", "how sure", "projects", "sites"]
        shown = [[p["pattern"], p["confidence"], str(p["projects"]), str(p["sites"])] for p in change["patterns"][:PATTERN_ROWS]]
        hidden = len(change["patterns"]) - PATTERN_ROWS
        if hidden > 0:
            shown.append([f"... {hidden} more", "", "", ""])
        assert drawn.rows == shown, change["id"]


def test_table_reasons_files_were_not_analysed(table, report: dict[str, Any]) -> None:
    _, tables, _ = table
    drawn = tables[-1]
    assert drawn.header == ["status", "reason", "files"]
    assert drawn.rows == [[r["status"], r["reason"], str(r["files"])] for r in report["file_reasons"]]
    t = report["totals"]
    assert sum(r["files"] for r in report["file_reasons"]) == t["files_skipped"] + t["files_unparsed"]


# ---------------------------------------------------------------------------------------------
# Markdown.


@pytest.fixture(scope="module")
def markdown(scanned_demo_corpus) -> dict[str, list[str]]:
    """Section heading ("" for the text before the first `##`) -> its lines."""
    sections: dict[str, list[str]] = {"": []}
    heading = ""
    for line in _cli_report(scanned_demo_corpus.results, "markdown").splitlines():
        if line.startswith("## "):
            heading = line[3:]
            assert heading not in sections, f"heading twice: {heading}"
            sections[heading] = []
        else:
            sections[heading].append(line)
    return sections


def _md_rows(lines: list[str]) -> tuple[list[str], list[list[str]]]:
    """The first table among `lines`: its header cells and body rows."""
    table = [line for line in lines if line.startswith("|")]
    assert len(table) >= 2 and set(table[1]) <= set("|-"), table[:2]
    split = [line[2:-2].split(" | ") for line in table]
    return split[0], split[2:]


def test_markdown_title_totals_and_summary(markdown: dict[str, list[str]], report: dict[str, Any]) -> None:
    intro = markdown[""]
    t = report["totals"]
    assert intro[0] == "# Impact of heronframe 3.0"
    assert (f"Scanned {t['projects']} projects ({t['projects_using_library']} use heronframe); {t['files']} files: "
            f"{t['files_parsed']} parsed, {t['files_skipped']} skipped, {t['files_unparsed']} unparsed") in intro[2]
    header, rows = _md_rows(intro)
    assert header == ["change", "member", "kind", "projects hit", "share of users", "exposed / shielded / unconstrained", "sites"]
    assert len(rows) == len(report["changes"])
    for row, change in zip(rows, report["changes"]):
        assert row[:3] == [change["id"], f"`{change['member']}`", change["kind"]], row
        assert row[3] == _bounds(change) and row[5] == _exposure(change) and row[6] == str(change["sites"]), row
        assert row[4].startswith(_share_start(change) + " ("), row


def test_markdown_sections_in_order(markdown: dict[str, list[str]], report: dict[str, Any]) -> None:
    assert list(markdown) == [
        "",
        "Python 2 files (token-level reading, all at possible)",
        *[f"{c['id']}: `{c['member']}` ({c['kind']})" for c in report["changes"] if c["patterns"]],
        "Files not analysed",
    ]


def test_markdown_python2_table(markdown: dict[str, list[str]], truth: GroundTruth) -> None:
    header, rows = _md_rows(markdown["Python 2 files (token-level reading, all at possible)"])
    assert header == ["change", "projects", "sites"]
    assert {row[0]: (int(row[1]), int(row[2])) for row in rows} == _legacy_counts(truth)


def test_markdown_lists_every_call_pattern_and_the_note(markdown: dict[str, list[str]], report: dict[str, Any]) -> None:
    for change in report["changes"]:
        lines = markdown[f"{change['id']}: `{change['member']}` ({change['kind']})"]
        assert change["note"] and change["note"] in lines
        header, rows = _md_rows(lines)
        assert header == ["call pattern", "how sure", "projects", "sites"]
        assert rows == [[f"`{p['pattern']}`", p["confidence"], str(p["projects"]), str(p["sites"])] for p in change["patterns"]]


def test_markdown_reasons_files_were_not_analysed(markdown: dict[str, list[str]], report: dict[str, Any]) -> None:
    header, rows = _md_rows(markdown["Files not analysed"])
    assert header == ["status", "reason", "files"]
    assert rows == [[r["status"], r["reason"], str(r["files"])] for r in report["file_reasons"]]


# ---------------------------------------------------------------------------------------------
# JSON: the numbers the other renderers print are the findings'.


def test_json_from_the_cli_is_the_fixture_report(scanned_demo_corpus) -> None:
    assert json.loads(_cli_report(scanned_demo_corpus.results, "json")) == scanned_demo_corpus.report


def test_json_change_counts_are_the_findings_counts(report: dict[str, Any]) -> None:
    """docs/report-json.md, a change's `projects`: resolved <= inferred-or-stronger <= any level."""
    hit: dict[tuple[str, str], set[str]] = defaultdict(set)
    sites: dict[str, int] = defaultdict(int)
    for finding in report["findings"]:
        rank = LEVELS.index(finding["confidence"])
        for level in LEVELS[rank:]:
            hit[(finding["change"], level)].add(finding["project"])
        sites[finding["change"]] += 1
    assert report["changes"]
    for change in report["changes"]:
        assert change["projects"] == {level: len(hit[(change["id"], level)]) for level in LEVELS}, change["id"]
        assert change["sites"] == sites[change["id"]] == sum(p["sites"] for p in change["patterns"]), change["id"]
        assert change["exposure"] and sum(change["exposure"].values()) == change["projects"]["resolved"]


def test_json_totals_add_up(report: dict[str, Any], truth: GroundTruth) -> None:
    t = report["totals"]
    assert t["files"] == t["files_parsed"] + t["files_skipped"] + t["files_unparsed"] == truth.total_files
    assert t["projects"] == len(report["projects"]) == len(truth.projects)
    assert t["projects_using_library"] == sum(info.uses_library for info in truth.projects.values())
