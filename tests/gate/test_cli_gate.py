from __future__ import annotations

import shutil
import sqlite3
import xml.etree.ElementTree as ET

from typer.testing import CliRunner

from impactscope.cli import app

from .conftest import HEAD, POLICIES, PREVIOUS


def gate(*args: str):
    return CliRunner().invoke(app, ["gate", *map(str, args)])


def test_the_strict_demo_policy_exits_1_naming_the_failed_rules_and_writes_the_files(demo_results, tmp_path):
    out = gate(demo_results, "--policy", POLICIES / "strict.toml", "--previous", PREVIOUS, "--head-source", HEAD,
               "--sarif", tmp_path / "g.sarif", "--junit", tmp_path / "g.xml", "--markdown", tmp_path / "g.md")
    assert out.exit_code == 1, out.output
    assert out.stdout.startswith("gate FAILED: ")
    for rule in ("max_proven_projects", "max_share_high", "deprecation_period", "warned_before"):
        assert f"  {rule} (" in out.stdout
    assert (tmp_path / "g.sarif").read_text(encoding="utf-8").startswith("{")
    assert ET.parse(tmp_path / "g.xml").getroot().get("failures") == "40"
    assert (tmp_path / "g.md").read_text(encoding="utf-8").startswith("## impactscope gate failed: heronframe 3.0")


def test_the_lenient_demo_policy_exits_0(demo_results):
    out = gate(demo_results, "--policy", POLICIES / "lenient.toml")
    assert out.exit_code == 0, out.output
    assert out.stdout.startswith("gate passed: every rule holds for the 8 changes of heronframe 3.0 (1 waived)")


def test_bad_input_exits_2_with_one_line(demo_results, tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text("[limits]\nmax_proven = 3\n", encoding="utf-8")
    stale = tmp_path / "stale.toml"
    stale.write_text('[[waiver]]\nchange = "HF-99"\nrule = "max_proven_projects"\nreason = "old"\n', encoding="utf-8")
    cases = [
        ((demo_results, "--policy", bad), "unknown key(s) max_proven"),
        ((demo_results, "--policy", stale), "has no change 'HF-99'"),
        ((tmp_path / "none.sqlite", "--policy", POLICIES / "lenient.toml"), "none.sqlite"),
        ((demo_results, "--policy", POLICIES / "lenient.toml", "--previous", tmp_path / "gone"), "--previous not found"),
        ((demo_results, "--policy", POLICIES / "lenient.toml", "--head-source", tmp_path / "gone"), "--head-source not found"),
    ]
    for args, words in cases:
        out = gate(*args)
        assert out.exit_code == 2, out.output
        assert out.stderr.count("\n") == 1 and words in out.stderr and "Traceback" not in out.output


def test_the_results_of_an_interrupted_scan_are_refused(demo_results, tmp_path):
    copy = tmp_path / "r.sqlite"
    shutil.copy(demo_results, copy)
    with sqlite3.connect(copy) as db:
        db.execute("UPDATE meta SET value = '0' WHERE key = 'complete'")
    db.close()
    out = gate(copy, "--policy", POLICIES / "lenient.toml")
    assert out.exit_code == 2 and "interrupted" in out.stderr
