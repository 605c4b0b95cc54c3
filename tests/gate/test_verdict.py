from __future__ import annotations

from pathlib import Path

from impactscope.changes import Change, Kind
from impactscope.gate.measures import ChangeMeasure, Measures
from impactscope.gate.markdown import to_markdown
from impactscope.gate.policy import Deprecation, Limits, Policy
from impactscope.gate.rules import evaluate
from impactscope.gate.run import GateRun, run_gate
from impactscope.gate.verdict import COLUMNS, LINES, to_terminal

from .conftest import POLICIES, PREVIOUS


def fits(text: str) -> bool:
    lines = text.rstrip("\n").split("\n")
    return len(lines) <= LINES and all(len(line) <= COLUMNS for line in lines)


def test_the_strict_demo_verdict_fits_one_screen_and_names_the_failed_rules(demo_results):
    run = run_gate(demo_results, POLICIES / "strict.toml", previous=PREVIOUS)
    text = to_terminal(run)
    assert fits(text) and text.startswith("gate FAILED: ")
    for rule in {o.rule.id for o in run.verdict.failed}:
        assert f"\n  {rule} (" in text or f" {rule}: " in text


def test_the_lenient_demo_verdict_passes_and_lists_the_waiver(demo_results):
    text = to_terminal(run_gate(demo_results, POLICIES / "lenient.toml"))
    assert fits(text) and text.startswith("gate passed: ")
    assert "waived:\n  HF-7 max_proven_projects: 201 projects proven broken" in text


def test_a_thousand_failing_changes_still_fit_one_screen():
    changes = tuple(
        ChangeMeasure(Change(f"C-{i}", f"lib.module_{i}.a_rather_long_member_name_{i}", Kind.REMOVED), 9, 9, 9,
                      0.5, 0.4, 0.6, 18, 0.95, 3, 3, 3, 20)
        for i in range(1000)
    )
    policy = Policy(Limits(max_proven_projects=1, max_share_high=0.1), deprecation=Deprecation())
    verdict = evaluate(policy, Measures("lib", "2.0", True, 20, 18, 0, changes))
    text = to_terminal(GateRun(verdict, policy, Path("r.sqlite"), {}, Path.cwd()))
    assert fits(text)
    assert "  max_proven_projects (1000): C-0, C-1," in text
    markdown = to_markdown(GateRun(verdict, policy, Path("r.sqlite"), {}, Path.cwd()))
    assert len(markdown) <= 60_000 and "more rows: the JUnit file lists them all" in markdown
    assert "Not checked: `warned_before` for 1000 changes" in markdown


def test_markdown_cells_keep_pipes_and_newlines_out_of_the_table(demo_results, tmp_path):
    policy = tmp_path / "p.toml"
    policy.write_text('[limits]\nmax_proven_projects = 1\n[[waiver]]\nchange = "HF-2"\nrule = '
                      '"max_proven_projects"\nreason = "a | b\\nc"\n', encoding="utf-8")
    text = to_markdown(run_gate(demo_results, policy))
    row = next(line for line in text.split("\n") if line.startswith("| HF-2 |") and "waived" in line)
    assert "a \\| b c" in row
