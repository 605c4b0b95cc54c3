"""Acceptance of issue 3, the library surface model, on the generated heronframe corpus.

The issue's acceptance, as this file checks it (the library surface model: canonical names,
re-exports, signatures and return types read statically from the library's own source; draft
change lists from two versions):

(i)   a change written against the library's private defining path
      (`heronframe.core.table.Table.stack_rows`) and the same change written against its public
      re-export (`heronframe.Table.stack_rows`) find the same projects and the same sites. Here
      every demo change is written both ways (each member replaced by its canonical, defining
      path), each list with `[library] source` pointing at the demo library's 2.4 source;
(ii)  resolved precision and recall stay 1.0 per change on the corpus extended with the cases
      only the surface settles (private paths, inherited members, star imports, return
      annotations not in [types], overrides in subclasses of a library subclass);
(iii) `compare`: the change list `draft_changes(build_surface(2.4), build_surface(3.0))` drafts,
      plus `[library] source` when the draft lacks it and nothing else, loads with
      `load_change_list`, and each hand-written change has a drafted counterpart on the same
      member and kind that finds the same projects at `resolved`. HF-7 and HF-8 are excluded:
      they are `behaviour-changed` (describe() adds a median and skips NaN; copy() becomes deep)
      with identical signatures in both versions, which a comparison of two surfaces cannot see.

The CLI runs in-process (typer's CliRunner on impactscope.cli.app: `scan CHANGES ROOT --out R
--jobs 1`, then `report R --format json`); the report keys are the fixed interface of
docs/report-json.md. The corpus and its scan with the demo list (the public names,
`[library] source` the 2.4 source) are the session's (`scanned_demo_corpus`, tests/conftest.py);
this module scans the corpus twice more: the private list and the drafted list.
"""

from __future__ import annotations

import json
import tomllib
from collections import defaultdict
from importlib import resources
from pathlib import Path
from typing import Any

import pytest

from impactscope.changes import load_change_list
from impactscope.demo import GroundTruth
from impactscope.demo.run import demo_changes_path
from impactscope.surface import build_surface, draft_changes

DEMO = Path(str(resources.files("impactscope.demo")))
LIB_24 = DEMO / "heronframe"
LIB_30 = DEMO / "heronframe_3_0" / "heronframe"
#: behaviour-changed in the hand-written list: no signature shows them, so no draft has them.
BEHAVIOUR_ONLY = {"HF-7", "HF-8"}

Site = tuple[str, str, int | None, int]  # project, file, cell, line


# ---------------------------------------------------------------------------------------------
# Helpers: a minimal TOML writer for change lists, the CLI, and findings grouped per change.


def _value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    return json.dumps(str(value))  # a JSON string is a valid TOML basic string


def _dump_change_list(data: dict[str, Any]) -> str:
    out = ["[library]"]
    out += [f"{key} = {_value(value)}" for key, value in data["library"].items()]
    if data.get("types"):
        out += ["", "[types]"]
        out += [f"{json.dumps(key)} = {_value(value)}" for key, value in data["types"].items()]
    for change in data["change"]:
        out += ["", "[[change]]"]
        out += [f"{key} = {_value(value)}" for key, value in change.items()]
    return "\n".join(out) + "\n"


def _scan_and_report(changes: Path, root: Path, results: Path) -> dict[str, Any]:
    from typer.testing import CliRunner

    from impactscope.cli import app

    runner = CliRunner()
    scanned = runner.invoke(app, ["scan", str(changes), str(root), "--out", str(results), "--jobs", "1"])
    assert scanned.exit_code == 0, f"scan of {changes.name} failed ({scanned.exit_code}):\n{scanned.output}\n{scanned.exception!r}"
    reported = runner.invoke(app, ["report", str(results), "--format", "json"])
    assert reported.exit_code == 0, f"report failed ({reported.exit_code}):\n{reported.output}\n{reported.exception!r}"
    document: dict[str, Any] = json.loads(reported.stdout)
    return document


def _sites(document: dict[str, Any], confidence: str | None = "resolved") -> dict[str, set[tuple]]:
    """change id -> {(project, file, cell, line[, confidence])} at `confidence` (None: all, tagged)."""
    out: dict[str, set[tuple]] = defaultdict(set)
    for f in document["findings"]:
        site = (f["project"], f["file"], f["cell"], f["line"])
        if confidence is None:
            out[f["change"]].add((*site, f["confidence"]))
        elif f["confidence"] == confidence:
            out[f["change"]].add(site)
    return out


def _projects(document: dict[str, Any]) -> dict[str, set[str]]:
    return {change: {site[0] for site in sites} for change, sites in _sites(document).items()}


def _show(keys: set, limit: int = 12) -> str:
    return "\n".join(f"  {key}" for key in sorted(keys, key=repr)[:limit]) + (f"\n  ... {len(keys)} in all" if len(keys) > limit else "")


# ---------------------------------------------------------------------------------------------
# Module fixtures: the session's corpus and demo scan, two more scans.


@pytest.fixture(scope="module")
def corpus(demo_corpus) -> tuple[Path, GroundTruth]:
    return demo_corpus.root, demo_corpus.truth


@pytest.fixture(scope="module")
def demo_list() -> dict[str, Any]:
    return tomllib.loads(demo_changes_path().read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def private_list(tmp_path_factory: pytest.TempPathFactory, demo_list: dict[str, Any]) -> Path:
    """The demo list with each member at its defining path, `[library] source` the same 2.4 source."""
    surface = build_surface(LIB_24)
    library = {**demo_list["library"], "source": str(LIB_24)}
    private = {**demo_list, "library": library, "change": [{**c, "member": surface.canonical(c["member"])} for c in demo_list["change"]]}
    path = tmp_path_factory.mktemp("surface-lists") / "private.toml"
    path.write_text(_dump_change_list(private), encoding="utf-8")
    load_change_list(path)  # the file itself is valid before any scan
    return path


@pytest.fixture(scope="module")
def public_report(scanned_demo_corpus) -> dict[str, Any]:
    """The demo list as shipped: its members at their public names, its source the 2.4 source."""
    assert load_change_list(demo_changes_path()).source == LIB_24.resolve()
    return scanned_demo_corpus.report


@pytest.fixture(scope="module")
def private_report(corpus: tuple[Path, GroundTruth], private_list: Path, tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    return _scan_and_report(private_list, corpus[0], tmp_path_factory.mktemp("r-private") / "r.sqlite")


@pytest.fixture(scope="module")
def drafted(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The draft between the two demo releases, with only `[library] source` added if missing."""
    text = draft_changes(build_surface(LIB_24), build_surface(LIB_30), release="3.0")
    if "source" not in tomllib.loads(text)["library"]:
        head, sep, rest = text.partition("[library]\n")
        assert sep, f"the draft has no [library] table:\n{text}"
        text = f"{head}[library]\nsource = {json.dumps(str(LIB_24))}\n{rest}"
    path = tmp_path_factory.mktemp("surface-draft") / "drafted.toml"
    path.write_text(text, encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def drafted_report(corpus: tuple[Path, GroundTruth], drafted: Path, tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    load_change_list(drafted)
    return _scan_and_report(drafted, corpus[0], tmp_path_factory.mktemp("r-drafted") / "r.sqlite")


# ---------------------------------------------------------------------------------------------
# (i) private defining path == public re-export.


def test_private_list_names_the_defining_paths(demo_list: dict[str, Any], private_list: Path) -> None:
    private = {c["id"]: c["member"] for c in tomllib.loads(private_list.read_text())["change"]}
    assert private["HF-1"] == "heronframe.core.table.Table.stack_rows"
    assert private["HF-2"] == "heronframe.ops.stack"
    assert private["HF-6"] == "heronframe.io.read_table"
    public = {c["id"]: c["member"] for c in demo_list["change"]}
    assert public["HF-1"] == "heronframe.Table.stack_rows"


def test_private_and_public_paths_find_the_same_projects_and_sites(public_report: dict[str, Any], private_report: dict[str, Any]) -> None:
    public, private = _sites(public_report, None), _sites(private_report, None)
    assert public["HF-1"], "the public HF-1 found nothing"
    differ = []
    for change in sorted(set(public) | set(private)):
        p, q = public.get(change, set()), private.get(change, set())
        if p != q:
            differ.append(f"{change}: only public\n{_show(p - q)}\n only private\n{_show(q - p)}")
    assert not differ, "\n".join(differ)
    counts = {c["id"]: c["projects"] for c in public_report["changes"]}
    assert counts == {c["id"]: c["projects"] for c in private_report["changes"]}


# ---------------------------------------------------------------------------------------------
# (ii) resolved precision and recall 1.0 per change, the surface cases included.


def test_the_corpus_holds_the_surface_cases(corpus: tuple[Path, GroundTruth]) -> None:
    _, truth = corpus
    per_rule: dict[tuple[str, str], int] = defaultdict(int)
    for site in truth.expected:
        if site.rule.startswith("surface-"):
            assert site.confidence == "resolved", site
            per_rule[(site.rule, site.change)] += 1
    assert set(per_rule) >= {
        ("surface-private-ctor", "HF-1"), ("surface-private-module", "HF-7"),
        ("surface-inherited-typeflow", "HF-1"), ("surface-inherited-ctor", "HF-7"),
        ("surface-star-import", "HF-6"), ("surface-star-import", "HF-2"),
        ("surface-return-chain", "HF-7"), ("surface-return-chain", "HF-8"),
        ("surface-override", "HF-7"), ("surface-super-call", "HF-7"), ("surface-self-call", "HF-1"),
    }
    assert min(per_rule.values()) >= 20, per_rule


def test_resolved_precision_and_recall_per_change(corpus: tuple[Path, GroundTruth], public_report: dict[str, Any]) -> None:
    _, truth = corpus
    want: dict[str, set[Site]] = defaultdict(set)
    for site in truth.expected:
        if site.confidence == "resolved":
            want[site.change].add(site.key[:4])
    got = _sites(public_report)
    failing = []
    for change in sorted(set(want) | set(got)):
        g, w = got.get(change, set()), want.get(change, set())
        if g != w:
            failing.append(f"{change}: {len(g & w)}/{len(g)} precise, {len(g & w)}/{len(w)} recalled\n"
                           f" extra\n{_show(g - w)}\n missed\n{_show(w - g)}")
    assert not failing, "\n".join(failing)


def test_surface_cases_are_found_at_resolved(corpus: tuple[Path, GroundTruth], public_report: dict[str, Any]) -> None:
    _, truth = corpus
    got = _sites(public_report)
    missed: dict[str, set] = defaultdict(set)
    for site in truth.expected:
        if site.rule.startswith("surface-") and site.key[:4] not in got.get(site.change, set()):
            missed[site.rule].add(site.key)
    assert not missed, "\n".join(f"{rule}:\n{_show(keys, 5)}" for rule, keys in sorted(missed.items()))


# ---------------------------------------------------------------------------------------------
# (iii) compare: the drafted list finds what the hand-written one finds.


def test_drafted_list_loads_without_edits_but_the_source(drafted: Path) -> None:
    changes = load_change_list(drafted)
    assert changes.source == LIB_24.resolve()
    data = tomllib.loads(drafted.read_text(encoding="utf-8"))
    assert data["library"]["name"] == "heronframe" and data["library"]["release"] == "3.0"


def test_each_hand_written_change_has_a_drafted_counterpart(demo_list: dict[str, Any], drafted: Path) -> None:
    drafted_keys = {(c["member"], c["kind"]) for c in tomllib.loads(drafted.read_text(encoding="utf-8"))["change"]}
    for change in demo_list["change"]:
        if change["id"] in BEHAVIOUR_ONLY:
            assert change["kind"] == "behaviour-changed"
            assert (change["member"], change["kind"]) not in drafted_keys
            continue
        assert (change["member"], change["kind"]) in drafted_keys, change


def test_drafted_changes_find_the_same_projects_at_resolved(
    demo_list: dict[str, Any], drafted: Path, public_report: dict[str, Any], drafted_report: dict[str, Any]
) -> None:
    by_key = {(c["member"], c["kind"]): c["id"] for c in tomllib.loads(drafted.read_text(encoding="utf-8"))["change"]}
    hand, auto = _projects(public_report), _projects(drafted_report)
    differ = []
    for change in demo_list["change"]:
        if change["id"] in BEHAVIOUR_ONLY:
            continue
        twin = by_key[(change["member"], change["kind"])]
        h, a = hand.get(change["id"], set()), auto.get(twin, set())
        assert h, f"{change['id']} found no project at resolved"
        if h != a:
            differ.append(f"{change['id']} vs drafted {twin}: only hand-written {sorted(h - a)[:8]}, only drafted {sorted(a - h)[:8]}")
    assert not differ, "\n".join(differ)
