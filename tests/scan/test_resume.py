"""A scan killed at any point and started again ends with exactly an uninterrupted scan's results.

The scans run as subprocesses (the signals are real) with the commit policy of scan/run.py set
to "every COMMIT_EVERY finished projects" instead of "every half second": the first commit then
comes after a few projects whatever the machine's speed, so a small corpus is still being
scanned when the signal lands, and the size of every committed batch is known. One kill test
keeps the time-based commits instead (every 0 s), so that branch of the policy is run too.
"""

from __future__ import annotations

import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest

from .helpers import build_corpus, snapshot, write_changes

PROJECTS = 48  # plus the loose notebook: 12 batches, so a signal after the first commit lands mid-scan
BULK = 20
COMMIT_EVERY = 4

#: `impactscope` with scan/run.py's commit policy set (the same hook test_cli_errors patches).
_ENTRY = """\
import sys
import impactscope.scan.run as run
assert isinstance(run.COMMIT_SECONDS, float) and isinstance(run.COMMIT_PROJECTS, int), "commit policy renamed"
run.COMMIT_SECONDS, run.COMMIT_PROJECTS = float(sys.argv.pop(1)), int(sys.argv.pop(1))
from impactscope.cli import main
main()
"""
BY_COUNT = (3600.0, COMMIT_EVERY)
BY_TIME = (0.0, 10**6)


def _cli(*args: object, policy: tuple[float, int] = BY_COUNT) -> list[str]:
    return [sys.executable, "-c", _ENTRY, *map(str, policy), "scan", *map(str, args)]


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


def _only(snap: dict[str, object], names: set[str]) -> dict[str, object]:
    """The part of a snapshot that belongs to the projects `names`."""
    return {
        "projects": [p for p in snap["projects"] if p.name in names],  # type: ignore[attr-defined]
        "files": [f for f in snap["files"] if f[0] in names],  # type: ignore[attr-defined]
        "findings": [f for f in snap["findings"] if f.project in names],  # type: ignore[attr-defined]
        "manifests": {name: m for name, m in snap["manifests"].items() if name in names},  # type: ignore[attr-defined]
    }


def _check_partial(partial: dict[str, object], expected: dict[str, object]) -> set[str]:
    """A partial results file: incomplete, and what it holds is exactly the uninterrupted results of those projects."""
    assert partial["complete"] == "0"
    names = {p.name for p in partial["projects"]}  # type: ignore[attr-defined]
    assert 0 < len(names) < len(expected["projects"])  # type: ignore[arg-type]
    assert _only(partial, names) == _only(expected, names)
    return names


@pytest.fixture(scope="module")
def setup(tmp_path_factory):
    base = tmp_path_factory.mktemp("resume")
    root = build_corpus(base / "corpus", projects=PROJECTS, bulk=BULK)
    changes = write_changes(base)
    whole = base / "whole.sqlite"
    subprocess.run(_cli(changes, root, "--out", whole, "--jobs", 1, "--quiet"), check=True)
    expected = snapshot(whole)
    assert len(expected["projects"]) == PROJECTS + 1 and expected["findings"]
    return base, changes, root, expected


@pytest.mark.parametrize(("jobs", "policy"), [(1, BY_COUNT), (2, BY_COUNT), (1, BY_TIME)], ids=["1-count", "2-count", "1-time"])
def test_sigkill_then_rerun_gives_the_uninterrupted_results(setup, jobs, policy):
    base, changes, root, expected = setup
    out = base / f"killed{jobs}-{policy[1]}.sqlite"
    cmd = _cli(changes, root, "--out", out, "--jobs", jobs, "--quiet", policy=policy)
    killed = _interrupt_after_first_commit(cmd, out, signal.SIGKILL)
    assert killed.returncode == -signal.SIGKILL
    partial = snapshot(out)
    names = _check_partial(partial, expected)
    if policy == BY_COUNT:
        assert len(names) % COMMIT_EVERY == 0, "a kill left part of a batch committed"
    rerun = subprocess.run(cmd[:-1], capture_output=True, text=True, check=True)  # without --quiet
    assert f"{len(names)} unchanged, reused" in rerun.stderr, rerun.stderr
    assert snapshot(out) == expected


def test_ctrl_c_commits_exits_130_and_resumes(setup):
    base, changes, root, expected = setup
    out = base / "interrupted.sqlite"
    cmd = _cli(changes, root, "--out", out, "--jobs", 2)
    stopped = _interrupt_after_first_commit(cmd, out, signal.SIGINT)
    assert stopped.returncode == 130, stopped.stderr
    assert "interrupted; finished projects are saved in" in stopped.stderr
    assert "Traceback" not in stopped.stderr
    _check_partial(snapshot(out), expected)
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
    _check_partial(snapshot(out), expected)
    subprocess.run(cmd + ["--quiet"], check=True)
    assert snapshot(out) == expected


def test_quiet_prints_nothing_and_logs_are_plain_lines(setup):
    base, changes, root, expected = setup
    quiet = subprocess.run(_cli(changes, root, "--out", base / "q.sqlite", "--quiet"), capture_output=True, text=True)
    assert quiet.returncode == 0 and quiet.stderr == "" and quiet.stdout == ""
    assert snapshot(base / "q.sqlite") == expected
    logged = subprocess.run(_cli(changes, root, "--out", base / "q.sqlite"), capture_output=True, text=True)
    assert logged.stderr.splitlines()[0] == f"impactscope: scanning {PROJECTS + 1} projects"
    assert "\x1b[" not in logged.stderr  # no terminal control codes in a log


def test_bad_options_exit_2_with_one_line(setup):
    base, changes, root, _ = setup
    bad = subprocess.run(_cli(changes, root, "--out", base / "x.sqlite", "--jobs", -1), capture_output=True, text=True)
    assert bad.returncode == 2 and bad.stderr.count("\n") == 1
