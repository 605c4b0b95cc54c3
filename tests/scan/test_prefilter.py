"""The prefilter and statement narrowing are sound: they skip nothing that holds a finding."""

from __future__ import annotations

from pathlib import Path

import pytest

from impactscope.changes import load_change_list
from impactscope.corpus.roots import discover
from impactscope.demo import generate_corpus
from impactscope.demo.run import demo_changes_path
from impactscope.resolve.query import Query
from impactscope.scan.prefilter import Prefilter
from impactscope.scan import project as project_module
from impactscope.scan import slicing
from impactscope.scan.project import scan_project

@pytest.fixture(scope="module")
def corpus(tmp_path_factory: pytest.TempPathFactory) -> Path:
    root = tmp_path_factory.mktemp("prefilter") / "corpus"
    generate_corpus(root, projects=120, seed=3, filler_files=2)
    return root


def _queries() -> dict[str, Query]:
    return {
        "demo change list": Query(load_change_list(demo_changes_path())),
        # Changed members named like methods of builtin objects, which most files spell.
        "common names": Query(load_change_list(demo_changes_path("bench-common-names.toml"))),
    }


@pytest.mark.parametrize("which, least", [("demo change list", 1000), ("common names", 200)])
def test_findings_are_identical_with_and_without_the_shortcuts(
    corpus: Path, which: str, least: int, monkeypatch: pytest.MonkeyPatch
) -> None:
    query = _queries()[which]
    narrowed: list[str] = []

    def counting(source, *args):
        out = slicing.narrow(source, *args)
        if out.cells != source.cells and any(a.code != b.code for a, b in zip(out.cells, source.cells)):
            narrowed.append(source.path)
        return out

    monkeypatch.setattr(project_module, "narrow", counting)
    total = skipped = 0
    for project in discover([corpus], library="heronframe"):
        fast = scan_project(project, query)
        whole = scan_project(project, query, narrowing=False)
        everything = scan_project(project, query, prefilter=False)
        assert fast.findings == whole.findings == everything.findings, project.name
        assert fast.uses_library == whole.uses_library == everything.uses_library, project.name
        total += len(fast.findings)
        skipped += sum(f.status == "skipped" for f in fast.files)
    assert total > least
    # The shortcuts did work: files skipped, and files narrowed to fewer statements.
    assert skipped > 300 and len(narrowed) > 30, (skipped, len(narrowed))


def test_whole_words_only() -> None:
    prefilter = Prefilter(["heronframe"], ["imp"])
    texts = {"a.py": "import heronframe\nimport os\n", "b.py": "import heronframe as hf\nhf.imp(1)\n"}
    assert prefilter.candidates(texts) == {"b.py"}
    assert prefilter.candidates({"a.py": "import heronframes\nimp()\n"}) == set()


def test_a_project_that_never_names_the_library_is_skipped_whole() -> None:
    prefilter = Prefilter(["heronframe"], ["stack"])
    assert prefilter.candidates({"a.py": "import numpy\nnumpy.stack([])\n"}) == set()


def test_re_exports_reach_files_that_do_not_spell_the_member() -> None:
    prefilter = Prefilter(["heronframe"], ["stack"])
    texts = {
        "helpers.py": "from heronframe import stack as glue\n",
        "main.py": "from helpers import glue\nglue([])\n",
        "other.py": "print('hello')\n",
    }
    plan = prefilter.plan(texts)
    assert plan.keep == {"helpers.py", "main.py"}
    # helpers.py is imported by main.py: narrowed, keeping what main.py may ask of it.
    assert plan.whole == set() and plan.importable == {"helpers.py"}
    assert plan.relays == frozenset({"helpers", "main"})


def test_star_imports_of_project_modules_keep_every_module_whole() -> None:
    prefilter = Prefilter(["heronframe"], ["stack"])
    texts = {"helpers.py": "from heronframe import stack as glue\n", "main.py": "from helpers import *\nglue([])\n"}
    assert prefilter.plan(texts).whole == {"helpers.py", "main.py"}
    texts["main.py"] = "from heronframe import *\nfrom helpers import glue\nglue([])\n"  # the library's own: fine
    assert prefilter.plan(texts).whole == set()


def test_relative_imports_keep_every_module_whole() -> None:
    prefilter = Prefilter(["heronframe"], ["stack"])
    texts = {"pkg/__init__.py": "from . import a\n", "pkg/a.py": "import heronframe\nheronframe.stack([])\n"}
    plan = prefilter.plan(texts)
    assert plan.keep == plan.whole == {"pkg/__init__.py", "pkg/a.py"}


def test_a_helper_of_a_project_that_imports_the_library_elsewhere(tmp_path: Path) -> None:
    # The only file that imports the library spells no changed name (the prefilter passes it
    # over); a helper that never imports it calls a changed method on what it is handed. The
    # project uses the library, so the helper's use counts at possible (docs/findings.md).
    from impactscope.scan.run import run_scan
    from impactscope.store import ResultStore

    from .helpers import write_changes

    corpus = tmp_path / "corpus"
    for project, files in {
        "uses": {"app.py": "import heronframe as hf\nrows = hf.read_table('p')\n",
                 "helpers.py": "def grow(t):\n    return t.stack_rows(1)\n"},
        "never": {"helpers.py": "def grow(t):\n    return t.stack_rows(1)\n"},
    }.items():
        for name, text in files.items():
            (corpus / project).mkdir(parents=True, exist_ok=True)
            (corpus / project / name).write_text(text, encoding="utf-8")
    out = tmp_path / "r.sqlite"
    run_scan(write_changes(tmp_path), [corpus], out, jobs=1)
    store = ResultStore.open(out)
    try:
        found = {(f.project, f.file, f.line, f.confidence.label) for f in store.findings()}
    finally:
        store.close()
    assert found == {("uses", "helpers.py", 2, "possible")}
