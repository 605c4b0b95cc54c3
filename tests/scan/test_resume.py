"""A scan killed at any point and started again ends with exactly an uninterrupted scan's results."""

from __future__ import annotations

import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest

from .helpers import build_corpus, snapshot, write_changes

PROJECTS = 240  # large enough that the first commit (after 0.5 s) comes well before the end
BULK = 60


def _cli(*args: object) -> list[str]:
    return [sys.executable, "-m", "impactscope.cli", "scan", *map(str, args)]


def _committed(results: Path) -> int:
    if not results.exists():
        return 0
    try:
        with sqlite3.connect(f"file:{results}?mode=ro", uri=True, timeout=0.2) as db:
            return db.execute("SELECT count(*) FROM scan_keys").fetchone()[0]
    except sqlite3.Error:
        return 0


def _interrupt_after_first_commit(cmd: list[str], results: Path, sig: int) -> subprocess.CompletedProcess:
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    deadline = time.monotonic() + 60
    while _committed(results) == 0 and proc.poll() is None and time.monotonic() < deadline:
        time.sleep(0.01)
    assert proc.poll() is None, "the scan finished before it could be interrupted; enlarge the corpus"
    proc.send_signal(sig)
    out, err = proc.communicate(timeout=60)
    return subprocess.CompletedProcess(cmd, proc.returncode, out, err)


@pytest.fixture(scope="module")
def setup(tmp_path_factory):
    base = tmp_path_factory.mktemp("resume")
    root = build_corpus(base / "corpus", projects=PROJECTS, bulk=BULK)
    changes = write_changes(base)
    whole = base / "whole.sqlite"
    subprocess.run(_cli(changes, root, "--out", whole, "--jobs", 1, "--quiet"), check=True)
    return base, changes, root, snapshot(whole)


@pytest.mark.parametrize("jobs", [1, 2])
def test_sigkill_then_rerun_gives_the_uninterrupted_results(setup, jobs):
    base, changes, root, expected = setup
    out = base / f"killed{jobs}.sqlite"
    cmd = _cli(changes, root, "--out", out, "--jobs", jobs, "--quiet")
    killed = _interrupt_after_first_commit(cmd, out, signal.SIGKILL)
    assert killed.returncode == -signal.SIGKILL
    partial = snapshot(out)
    assert partial["complete"] == "0"
    assert 0 < len(partial["projects"]) < PROJECTS + 1
    rerun = subprocess.run(cmd[:-1], capture_output=True, text=True, check=True)  # without --quiet
    assert "unchanged, reused" in rerun.stderr
    assert snapshot(out) == expected


def test_ctrl_c_commits_exits_130_and_resumes(setup):
    base, changes, root, expected = setup
    out = base / "interrupted.sqlite"
    cmd = _cli(changes, root, "--out", out, "--jobs", 2)
    stopped = _interrupt_after_first_commit(cmd, out, signal.SIGINT)
    assert stopped.returncode == 130, stopped.stderr
    assert "interrupted; finished projects are saved in" in stopped.stderr
    assert "Traceback" not in stopped.stderr
    assert snapshot(out)["complete"] == "0"
    subprocess.run(cmd + ["--quiet"], check=True)
    assert snapshot(out) == expected


def test_sigterm_commits_exits_143_and_resumes(setup):
    """SIGTERM (a cancelled CI job) ends a scan as Ctrl-C does; 128 + 15 by the shell's convention."""
    base, changes, root, expected = setup
    out = base / "terminated.sqlite"
    cmd = _cli(changes, root, "--out", out, "--jobs", 2)
    stopped = _interrupt_after_first_commit(cmd, out, signal.SIGTERM)
    assert stopped.returncode == 143, stopped.stderr
    assert "interrupted; finished projects are saved in" in stopped.stderr
    assert "Traceback" not in stopped.stderr
    subprocess.run(cmd + ["--quiet"], check=True)
    assert snapshot(out) == expected


def test_quiet_prints_nothing_and_logs_are_plain_lines(setup):
    base, changes, root, expected = setup
    quiet = subprocess.run(_cli(changes, root, "--out", base / "q.sqlite", "--quiet"), capture_output=True, text=True)
    assert quiet.returncode == 0 and quiet.stderr == "" and quiet.stdout == ""
    logged = subprocess.run(_cli(changes, root, "--out", base / "q.sqlite"), capture_output=True, text=True)
    assert logged.stderr.splitlines()[0] == f"impactscope: scanning {PROJECTS + 1} projects"
    assert "\x1b[" not in logged.stderr  # no terminal control codes in a log


def test_bad_options_exit_2_with_one_line(setup):
    base, changes, root, _ = setup
    bad = subprocess.run(_cli(changes, root, "--out", base / "x.sqlite", "--jobs", -1), capture_output=True, text=True)
    assert bad.returncode == 2 and bad.stderr.count("\n") == 1
