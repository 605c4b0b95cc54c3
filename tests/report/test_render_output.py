"""The demo's report as Markdown and JSON print it (the terminal report: tests/report/test_terminal.py).

Every check reads the printed text back and compares it with the JSON report of the same results
file (the session's scan of the demo corpus, tests/conftest.py), or with the generator's truth:
every change row with its counts, every call-pattern table, the Python 2 table, the reasons files
were not analysed, the totals line and the headings. The renderers are reached through the public
entry points only: the CLI (`report --format markdown|json`).

What the counts mean is docs/report-json.md (a change's `projects`): `projects.resolved` counts
projects with a resolved finding for the change, `projects.inferred` those with one at inferred or
stronger, `projects.possible` at any level.
"""

from __future__ import annotations

import json
from collections import defaultdict
from pathlib import Path
from typing import Any

import pytest
from typer.testing import CliRunner

from impactscope.cli import app
from impactscope.demo import GroundTruth

LEVELS = ("resolved", "inferred", "possible")


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
