"""Ground truth: on the demo corpus, every line the generator expects a rewrite of becomes the
text it recorded, and every other line of every file stays byte for byte as it was."""

from __future__ import annotations

import pickle
from collections import defaultdict
from collections.abc import Callable
from pathlib import Path

import pytest

from impactscope.changes import load_change_list
from impactscope.corpus import discover
from impactscope.demo import load_truth, truth_path
from impactscope.demo.generate import GroundTruth, generate_corpus
from impactscope.rewrite.lines import Lines
from impactscope.rewrite.notebook import cell_sources
from impactscope.rewrite.project import ProjectRewrite, rewrite_project
from impactscope.rewrite.pyfile import PyFile
from impactscope.scan.library import prepare_library
from tests.rewrite.helpers import rewrite_changes


@pytest.fixture(scope="module")
def rewritten(made_once: Callable[[str, Callable[[Path], None]], Path]) -> tuple[GroundTruth, dict[str, ProjectRewrite]]:
    def make(base: Path) -> None:
        generate_corpus(base / "corpus", projects=80, seed=7)
        changes = load_change_list(rewrite_changes(base))
        query = prepare_library(changes, base / "lib").query
        done = {p.name: rewrite_project(p, query) for p in discover([base / "corpus"], library="heronframe")}
        (base / "rewritten.pickle").write_bytes(pickle.dumps(done))

    # Made once for every xdist worker that runs a test of this module (a few seconds each).
    base = made_once("rewrite-groundtruth", make)
    return load_truth(truth_path(base / "corpus")), pickle.loads((base / "rewritten.pickle").read_bytes())


def _expected(old: Lines, replaced: dict[int, str]) -> str:
    bodies = [replaced.get(number, body) for number, body in enumerate(old.bodies, start=1)]
    return "".join(b + e for b, e in zip(bodies, old.ends))


def _differing(key: object, cell: object, got: str | bytes, want: str | bytes) -> tuple[object, ...]:
    got_lines = (got.decode("latin-1") if isinstance(got, bytes) else got).splitlines()
    want_lines = (want.decode("latin-1") if isinstance(want, bytes) else want).splitlines()
    return key, cell, [(g, w) for g, w in zip(got_lines, want_lines) if g != w][:2], len(got_lines) - len(want_lines)


def test_every_expected_rewrite_and_nothing_else(rewritten: tuple[GroundTruth, dict[str, ProjectRewrite]]) -> None:
    truth, done = rewritten
    assert truth.rewrites, "the generator records rewrites"
    expected: dict[tuple[str, str], dict[int | None, dict[int, str]]] = defaultdict(lambda: defaultdict(dict))
    for item in truth.rewrites:
        expected[(item.project, item.file)][item.cell][item.line] = item.text
    actual = {(name, f.path): f for name, result in done.items() for f in result.files}
    assert sorted(actual) == sorted(expected), "files rewritten (left) vs files the generator expects rewritten"
    mismatches = []
    for key, by_cell in sorted(expected.items()):
        change = actual[key]
        if key[1].endswith(".ipynb"):
            old_nb, new_nb = change.old.decode("utf-8"), change.new.decode("utf-8")
            old_cells, new_cells = cell_sources(old_nb), cell_sources(new_nb)
            for index in old_cells:
                want = _expected(Lines.of(old_cells[index].text(old_nb)), by_cell.get(index, {}))
                if new_cells[index].text(new_nb) != want:
                    mismatches.append((key, index, new_cells[index].text(new_nb), want))
        else:
            file = PyFile.read(change.old)
            want = file.encode(_expected(file.lines, by_cell[None]))
            if change.new != want:
                mismatches.append((key, None, change.new, want))
    assert not mismatches, [_differing(*m) for m in mismatches[:5]]


def test_resolved_sites_of_mechanical_changes_are_rewritten_or_reviewed(
    rewritten: tuple[GroundTruth, dict[str, ProjectRewrite]],
) -> None:
    """No resolved site of a mechanical change is silently dropped: each is rewritten, needs no
    edit (a positional use of a renamed parameter, a name bound elsewhere) or is reviewed."""
    _, done = rewritten
    for result in done.values():
        reviewed = {r.finding for r in result.review}
        assert not set(result.rewritten) & reviewed
