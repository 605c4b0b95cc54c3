"""The report model: built once from a results file, read by every renderer, serialised as JSON."""

from __future__ import annotations

import dataclasses
import json
import re
from pathlib import Path
from typing import Any, Iterator

import pytest

from impactscope.changes import Kind, parse_change_list
from impactscope.exposure import Exposure
from impactscope.findings import Confidence, Finding, Reading
from impactscope.outcomes import FileOutcome, FileStatus, ProjectResult
from impactscope.report.aggregate import build_report
from impactscope.report.model import FailedFile, PerLevel, Report
from impactscope.report.html import to_html
from impactscope.report.release_notes import to_release_notes
from impactscope.report.render import FAILED_ROWS, to_json, to_markdown, to_table
from impactscope.report.sizing import SizingOptions
from impactscope.store import ResultStore

CHANGES = """\
[library]
name = "heronframe"
release = "3.0"

[[change]]
id = "C-1"
member = "heronframe.stack"
kind = "removed"
note = "gone"

[[change]]
id = "C-2"
member = "heronframe.Table.copy"
kind = "behaviour-changed"
certainty = "low"
"""


def _store(tmp_path: Path) -> Path:
    """Three projects: one proven and exposed with a Python 2 file, one with an inferred use and a
    file the scan failed on, one that does not use the library."""
    tmp_path.mkdir(parents=True, exist_ok=True)
    out = tmp_path / "r.sqlite"
    store = ResultStore.create(out, parse_change_list(CHANGES.encode(), Path("changes.toml")), CHANGES, settings="s")
    store.add_project(ProjectResult(
        "p1", "/c/p1",
        [FileOutcome("a.py", FileStatus.PARSED, digest="a1", kind="module"),
         FileOutcome("old.py", FileStatus.UNPARSED, "python 2", digest="o1", kind="module")],
        [Finding("p1", "a.py", None, 3, 0, "C-1", Confidence.RESOLVED, "heronframe.stack(_)"),
         Finding("p1", "old.py", None, 2, 4, "C-1", Confidence.POSSIBLE, "stack", Reading.TOKEN_LEVEL),
         Finding("p1", "a.py", None, 5, 0, "C-2", Confidence.POSSIBLE, "?.copy()")],
        uses_library=True, manifests={"requirements.txt": b"heronframe>=2\n"},
    ), "k")
    store.add_project(ProjectResult(
        "p2", "/c/p2",
        [FileOutcome("a.py", FileStatus.PARSED, digest="a2", kind="module"),
         FileOutcome("b.py", FileStatus.UNPARSED, "analysis error", "ValueError | boom", "b2", "module")],
        [Finding("p2", "a.py", None, 7, 2, "C-1", Confidence.INFERRED, "?.stack(_)")],
        uses_library=True,
    ), "k")
    store.add_project(ProjectResult("p3", "/c/p3", [FileOutcome("notes.txt", FileStatus.SKIPPED, "not source")]), "k")
    store.set_meta(complete="1", not_projects=json.dumps([[".hidden", "hidden entry"]]))
    store.close()
    return out


def _report(results: Path, options: SizingOptions | None = None) -> Report:
    store = ResultStore.open(results)
    try:
        return build_report(store, options)
    finally:
        store.close()


def _round_trip(report: Report) -> Report:
    return Report.from_json(json.loads(to_json(report)))


def test_the_model_holds_values_not_text(tmp_path: Path) -> None:
    report = _report(_store(tmp_path))
    c1, c2 = report.changes
    assert c1.kind is Kind.REMOVED and c2.kind is Kind.BEHAVIOUR_CHANGED and c2.low_certainty
    # Counts per level are "at that level or stronger": p1 resolved, p2 inferred.
    assert c1.projects == PerLevel(resolved=1, inferred=2, possible=2)
    assert c1.projects[Confidence.INFERRED] == 2
    assert {p.project: p.exposure for p in report.projects} == {"p1": Exposure.EXPOSED, "p2": None, "p3": None}
    assert [(r.status, r.reason, r.files) for r in report.file_reasons] == [
        (FileStatus.SKIPPED, "not source", 1), (FileStatus.UNPARSED, "analysis error", 1),
        (FileStatus.UNPARSED, "python 2", 1),
    ]
    token = [p for p in c1.patterns if p.reading is Reading.TOKEN_LEVEL]
    assert [(p.pattern, p.label, p.confidence) for p in token] == [("stack", "legacy: stack", Confidence.POSSIBLE)]
    assert c1.legacy_sites == 1
    assert report.failed_files == (FailedFile("p2", "b.py", "analysis error", "ValueError | boom"),)
    assert (report.by_certainty.low.changes, report.by_certainty.low.projects_affected) == (1, 1)


def _leaves(value: Any) -> Iterator[Any]:
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        for f in dataclasses.fields(value):
            yield from _leaves(getattr(value, f.name))
    elif isinstance(value, (tuple, list)):
        for item in value:
            yield from _leaves(item)
    else:
        yield value


def test_no_pandas_or_numpy_value_leaks_out_of_aggregation(tmp_path: Path) -> None:
    report = _report(_store(tmp_path), SizingOptions(weights={"p1": 3.0, "p2": 1.0}))
    leaves = list(_leaves(report))
    assert len(leaves) > 100
    # Only plain Python values and our own enums: a numpy.int64 from a groupby would show here.
    foreign = {type(v).__module__ for v in leaves if type(v).__module__ != "builtins"}
    assert all(m.startswith("impactscope.") for m in foreign), foreign


def test_the_json_report_reads_back_into_the_same_model(tmp_path: Path) -> None:
    for options in (None, SizingOptions(confidence=0.9, population=50, weights={"p1": 3.0, "p2": 1.0})):
        report = _report(_store(tmp_path / str(options is None)), options)
        again = _round_trip(report)
        assert again == report
        assert to_json(again) == to_json(report)
    assert report.changes[0].weighted_share is not None and report.changes[0].share.population == 50


def test_the_demo_report_reads_back_into_the_same_model(scanned_demo_corpus) -> None:
    report = _report(scanned_demo_corpus.results)
    assert _round_trip(report) == report
    # docs/report-json.md: keys every JSON report has.
    document = json.loads(to_json(report))
    assert {"library", "release", "totals", "changes", "findings"} <= set(document)
    assert {"projects", "projects_using_library", "files", "files_parsed", "files_skipped",
            "files_unparsed"} <= set(document["totals"])
    assert {"id", "member", "kind", "projects", "patterns"} <= set(document["changes"][0])
    assert set(document["findings"][0]) == {"project", "file", "cell", "line", "column", "change", "confidence",
                                            "pattern"}


@pytest.mark.parametrize("render", [to_table, to_markdown, to_json, to_html, to_release_notes])
def test_every_renderer_reads_only_the_model(tmp_path: Path, render) -> None:
    report = _report(_store(tmp_path))
    assert render(_round_trip(report)) == render(report)
    # An edit of the model, and of nothing else, shows in the output.
    renamed = dataclasses.replace(report, changes=(dataclasses.replace(report.changes[0], member="heronframe.gone"),
                                                   *report.changes[1:]))
    assert "heronframe.gone" in render(renamed) and "heronframe.gone" not in render(report)


def test_the_table_shows_every_part_of_the_model(tmp_path: Path) -> None:
    report = _report(_store(tmp_path))
    text = to_table(report, width=100)
    assert text.startswith("heronframe 3.0: the planned changes hit 1 project proven, 2 likely, 2 at most, of the 2 "
                           "projects\nthat use heronframe (3 projects scanned)\nfiles: 5 = 2 parsed + 1 skipped + 2 "
                           "unparsed (1 with an analysis error)\nwarning: impactscope failed on 1 file")
    squeezed = re.sub(r" +", " ", text)  # columns are padded to their width
    # Wilson (1927) score interval of 1 in 2 at 95%, worked by hand: 0.0945 to 0.9055.
    for part in ("\nC-1 heronframe.stack removed 1 2 2 50.0% (9.5%–90.5%)\n",
                 "Low-certainty draft entries (1 change, 1 project hit at most)",
                 "\nC-2 heronframe.Table.copy behaviour-changed 0 0 1 0.0% (0.0%–65.8%)\n",
                 "\nC-1 1 0 0 1 2 3 3\n",  # exposure, then sites proven / likely / at most, then files
                 "Python 2 files (read at token level", "\nC-1 1 1\n",
                 "C-1 heronframe.stack (removed): 1 project proven, 2 likely, 2 at most",
                 " projects p1 (proven, 2 sites), p2 (likely, 1 site)\n",
                 " sites p1: a.py:3:1 heronframe.stack(_) (proven)\n", " legacy: stack possible 1 1\n",
                 "\nunparsed python 2 1\n", "\np2 analysis error b.py: ValueError | boom\n",
                 "In the roots but not projects", "\nhidden entry 1\n"):
        assert part in squeezed, part
    many = dataclasses.replace(report, failed_files=tuple(
        FailedFile("p2", f"f{n}.py", "analysis error", "boom") for n in range(FAILED_ROWS + 5)))
    assert "... 5 more (see --format json)" in to_table(many)
    assert len(json.loads(to_json(many))["failed_files"]) == FAILED_ROWS + 5


def test_markdown_shows_every_part_of_the_model(tmp_path: Path) -> None:
    lines = to_markdown(_report(_store(tmp_path))).splitlines()
    assert lines[0] == "# Impact of heronframe 3.0"
    # Wilson (1927) score interval of 1 in 2 at 95%, worked by hand: low end 0.0945; 2 in 2: high end 1.
    assert "| C-1 | `heronframe.stack` | removed | 1 / 2 / 2 | 50.0% (9.5%–100.0%) | 1 / 0 / 0 | 3 |" in lines
    assert "| C-1 | 1 | 1 |" in lines  # the Python 2 table: projects and sites read at token level
    assert "| `legacy: stack` | possible | 1 | 1 |" in lines
    assert "| p2 | `b.py` | analysis error | ValueError \\| boom |" in lines  # a pipe in a cell is escaped
    assert "| hidden entry | 1 |" in lines
