"""Release notes (a Markdown section per change) and towncrier fragments, on the demo's results,
checked against the JSON report of the same results file."""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

import pytest
from typer.testing import CliRunner

from impactscope.cli import app
from impactscope.report.model import Report
from impactscope.report.release_notes import FRAGMENT_TYPE, fragment_name, to_release_notes

runner = CliRunner()


@pytest.fixture(scope="module")
def model(demo_model: Report) -> Report:
    return demo_model


def _sections(text: str) -> dict[str, list[str]]:
    out: dict[str, list[str]] = {}
    heading = ""
    for line in text.splitlines():
        if line.startswith("### "):
            heading = line
            out[heading] = []
        elif heading:
            out[heading].append(line)
    return out


def test_a_section_per_change_with_its_measured_share(scanned_demo_corpus) -> None:
    done = runner.invoke(app, ["report", str(scanned_demo_corpus.results), "--format", "release-notes"])
    assert done.exit_code == 0, done.output
    report: dict[str, Any] = scanned_demo_corpus.report
    assert done.stdout.startswith("## Changes that can break code using heronframe 3.0\n")
    sections = _sections(done.stdout)
    assert len(sections) == len(report["changes"])
    order = [re.search(r"\((\S+)\)$", h).group(1) for h in sections]  # type: ignore[union-attr]
    by_id = {c["id"]: c for c in report["changes"]}
    assert [by_id[i]["projects"]["resolved"] for i in order] == sorted(
        (c["projects"]["resolved"] for c in report["changes"]), reverse=True)
    for heading, lines in sections.items():
        change = by_id[order[list(sections).index(heading)]]
        facts = dict(line[2:].split(": ", 1) for line in lines if line.startswith("- "))
        assert facts["Member"] == f"`{change['member']}`"
        if change["replacement"]:
            assert facts["Replacement"] == f"`{change['replacement']}`"
        elif change["new_parameter"]:
            assert facts["Replacement"] == f"the parameter `{change['new_parameter']}` for `{change['parameter']}`"
        else:
            assert facts["Replacement"] == "none"
        assert facts.get("Parameter") == (f"`{change['parameter']}`" if change["parameter"] else None)
        assert facts["Deprecated since"] == (change["deprecated_in"] or "not deprecated before this release")
        share = change["share"]
        proven = share["resolved"]
        assert facts["Measured"].startswith(
            f"{change['projects']['resolved']} of the {share['denominator']} projects that use heronframe in a corpus "
            f"of {report['totals']['projects']} use it for certain: {proven['estimate']:.1%} (95% interval "
            f"{proven['low']:.1%}–{proven['high']:.1%}, n = {share['denominator']}); at most "
            f"{change['projects']['possible']} ({share['possible']['estimate']:.1%}")
        e = change["exposure"]
        assert facts["Exposure"] == (
            f"of the {change['projects']['resolved']} projects proven, {e['exposed']} declare a requirement that "
            f"admits heronframe 3.0, {e['shielded']} one that excludes it, {e['unconstrained']} none")
        if change["kind"] == "behaviour-changed":
            assert facts["Rewrite"].startswith("no automatic rewrite")
        else:
            assert facts["Rewrite"].startswith("`impactscope rewrite CHANGES.toml PATH/TO/YOUR/PROJECT --output rewrite/`")
    # The demo's removal says since when it has warned (changes.toml: deprecated_in = "2.4").
    assert "- Deprecated since: 2.4" in done.stdout


def test_the_rewrite_command_it_prints_parses(scanned_demo_corpus, tmp_path: Path) -> None:
    """The command in the notes is one `rewrite` accepts: run with the demo's list on a folder."""
    from impactscope.demo.run import demo_changes_path

    project = tmp_path / "project"
    project.mkdir()
    (project / "a.py").write_text("import heronframe\nheronframe.stack([])\n", encoding="utf-8")
    done = runner.invoke(app, ["rewrite", str(demo_changes_path()), str(project), "--single", "--quiet",
                               "--output", str(tmp_path / "rewrite")])
    assert done.exit_code == 0, done.output
    assert (tmp_path / "rewrite").is_dir()


def test_towncrier_fragments_one_file_per_change(scanned_demo_corpus, model: Report, tmp_path: Path) -> None:
    out = tmp_path / "newsfragments"
    done = runner.invoke(app, ["report", str(scanned_demo_corpus.results), "--format", "towncrier", "--output", str(out)])
    assert done.exit_code == 0, done.output
    names = sorted(p.name for p in out.iterdir())
    # towncrier's fragment names are `<id>.<type>` (common practice).
    assert names == sorted(f"{c.id}.{FRAGMENT_TYPE[c.kind]}" for c in model.changes)
    assert "HF-2.removal" in names and "HF-7.deprecation" in names
    text = (out / "HF-2.removal").read_text(encoding="utf-8")
    change = next(c for c in model.changes if c.id == "HF-2")
    assert text.startswith(f"`{change.member}` is removed; use `{change.replacement}` instead. Deprecated since 2.4. "
                           f"Measured: {change.projects.resolved} of the ")
    assert text.endswith(".\n") and text.count("\n") == 1
    # The demo's HF-5 renames pivot's `fill` to `fill_value` (src/impactscope/demo/changes.toml).
    assert (out / "HF-5.removal").read_text(encoding="utf-8").startswith(
        "`heronframe.Table.pivot`, parameter `fill`, is renamed; use the parameter `fill_value` for `fill` instead. ")
    again = runner.invoke(app, ["report", str(scanned_demo_corpus.results), "--format", "towncrier", "--output", str(out)])
    assert again.exit_code == 0 and sorted(p.name for p in out.iterdir()) == names  # rewritten in place


def test_towncrier_needs_a_folder(scanned_demo_corpus, tmp_path: Path) -> None:
    missing = runner.invoke(app, ["report", str(scanned_demo_corpus.results), "--format", "towncrier"])
    assert missing.exit_code == 2 and "--output DIR" in missing.output
    a_file = tmp_path / "f"
    a_file.write_text("x")
    refused = runner.invoke(app, ["report", str(scanned_demo_corpus.results), "--format", "towncrier",
                                  "--output", str(a_file)])
    assert refused.exit_code == 2 and "is a file" in refused.output and "Traceback" not in refused.output


def test_fragment_names_are_safe_file_names(model: Report) -> None:
    import dataclasses

    odd = dataclasses.replace(model.changes[0], id="../x y")
    assert fragment_name(odd) == f"x-y.{FRAGMENT_TYPE[odd.kind]}"


def test_release_notes_say_when_the_scan_was_interrupted(model: Report) -> None:
    import dataclasses

    assert "interrupted" not in to_release_notes(model)
    assert "> The scan behind these figures was interrupted" in to_release_notes(dataclasses.replace(model, complete=False))
