"""The example CI workflow (examples/ci/impact-gate.yml) parses, and its impactscope commands exist."""

from __future__ import annotations

import shlex

import pytest
import typer
import yaml

from impactscope.cli import app

from .conftest import REPO

WORKFLOW = REPO / "examples" / "ci" / "impact-gate.yml"


@pytest.fixture(scope="module")
def steps() -> list[dict]:
    data = yaml.safe_load(WORKFLOW.read_text(encoding="utf-8"))
    # YAML 1.1 reads the bare key `on` as true (PyYAML follows it; GitHub reads it as "on").
    assert "pull_request" in (data.get("on") or data.get(True))
    return [step for job in data["jobs"].values() for step in job["steps"]]


def commands(steps: list[dict]) -> dict[str, list[str]]:
    out = {}
    for step in steps:
        for line in step.get("run", "").splitlines():
            words = shlex.split(line)
            if words[:1] == ["impactscope"]:
                out[words[1]] = words[2:]
    return out


def test_the_workflow_runs_compare_scan_and_gate_with_options_the_cli_has(steps):
    found = commands(steps)
    assert list(found) == ["compare", "scan", "gate"]
    group = typer.main.get_command(app)
    for name, args in found.items():
        command = group.commands[name]
        known = {opt for param in command.params for opt in getattr(param, "opts", [])}
        for word in args:
            if word.startswith("--"):
                assert word in known, f"impactscope {name} has no option {word}"


def test_the_gate_files_are_uploaded_even_when_the_gate_fails(steps):
    gate = commands(steps)["gate"]
    sarif, junit = gate[gate.index("--sarif") + 1], gate[gate.index("--junit") + 1]
    uploads = {step["uses"].split("@")[0]: step for step in steps if "uses" in step}
    sarif_step = uploads["github/codeql-action/upload-sarif"]
    assert sarif_step["with"]["sarif_file"] == sarif and sarif_step["if"] == "always()"
    artifact = uploads["actions/upload-artifact"]
    assert junit in artifact["with"]["path"].split() and artifact["if"] == "always()"
    assert yaml.safe_load(WORKFLOW.read_text(encoding="utf-8"))["permissions"]["security-events"] == "write"
