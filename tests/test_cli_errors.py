"""Bad input at the command line: exit 2, one clear line, no traceback; damaged corpus files
are counted, not fatal.

Source: docs/command-line.md, "Exit codes" (2: bad input or usage, one line saying what, where
and how to fix, no traceback; 3: a bug) and docs/corpus.md, "Every file is accounted for"
(parsed, skipped or unparsed, each with its reason).
"""

from __future__ import annotations

import json
import os
import sqlite3
import subprocess
import sys
from pathlib import Path

import pytest
from typer.testing import CliRunner

from impactscope.cli import app

CHANGES = '''
[library]
name = "heronframe"
release = "3.0"

[[change]]
id = "HF-2"
member = "heronframe.stack"
kind = "removed"
'''

runner = CliRunner()


def invoke(*args: str):
    return runner.invoke(app, [str(a) for a in args])


def one_error_line(result, *must_contain: str) -> str:
    assert result.exit_code == 2, (result.exit_code, result.output)
    assert result.exception is None or isinstance(result.exception, SystemExit)
    lines = [ln for ln in result.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1, result.stderr
    assert "Traceback" not in result.output and "Traceback" not in result.stderr
    for text in must_contain:
        assert text in lines[0], (text, lines[0])
    return lines[0]


@pytest.fixture
def changes(tmp_path: Path) -> Path:
    path = tmp_path / "changes.toml"
    path.write_text(CHANGES, encoding="utf-8")
    return path


@pytest.fixture
def corpus(tmp_path: Path) -> Path:
    root = tmp_path / "corpus"
    (root / "good").mkdir(parents=True)
    (root / "good" / "main.py").write_text("import heronframe as hf\nhf.stack()\n", encoding="utf-8")
    (root / "good" / "README.md").write_text("not source\n", encoding="utf-8")
    (root / "damaged").mkdir()
    # nbformat v4: a notebook is a JSON document; this one is cut off mid-array.
    (root / "damaged" / "analysis.ipynb").write_text('{"cells": [', encoding="utf-8")
    # PEP 263 / PEP 3120: without a declaration a .py file is UTF-8; 0xff never is.
    (root / "damaged" / "legacy.py").write_bytes(b"import heronframe\nname = '\xff\xfe'\n")
    # PEP 263: a declared encoding governs the file; these bytes are not ASCII / no codec.
    (root / "damaged" / "declared.py").write_bytes(b"# -*- coding: ascii -*-\nimport heronframe\nx = '\xc3\xa9'\n")
    (root / "damaged" / "codec.py").write_bytes(b"# coding: no-such-codec\nimport heronframe\n")
    # Python 2 print statement and a plain syntax error, both mentioning a changed member so
    # that they are read (Language Reference §7: `print "x"` is not a Python 3 statement).
    (root / "damaged" / "old.py").write_text('import heronframe\nprint "hi"\nheronframe.stack()\n', encoding="utf-8")
    (root / "damaged" / "broken.py").write_text("import heronframe\nheronframe.stack()\ndef f(:\n", encoding="utf-8")
    # The ZIP format starts with a local file header signature (PK\x03\x04); this is not one.
    (root / "archived.zip").write_bytes(b"this is not a zip archive at all\n")
    # gzip streams start with 1f 8b (RFC 1952); this is not one.
    (root / "tarred.tar.gz").write_bytes(b"not gzip either\n")
    return root


# ---------------------------------------------------------------------------- bad input -> 2
def test_malformed_change_list(tmp_path: Path, corpus: Path) -> None:
    bad = tmp_path / "bad.toml"
    bad.write_text(CHANGES.replace('kind = "removed"', 'kind = "deleted"'), encoding="utf-8")
    line = one_error_line(invoke("scan", bad, corpus, "--out", tmp_path / "r.sqlite"), "bad.toml", "'deleted'")
    assert "#1" in line and "use one of" in line


def test_change_list_with_toml_syntax_error(tmp_path: Path, corpus: Path) -> None:
    bad = tmp_path / "broken.toml"
    bad.write_text("[library\nname = 1\n", encoding="utf-8")
    one_error_line(invoke("scan", bad, corpus, "--out", tmp_path / "r.sqlite"), "broken.toml", "line 1")


def test_missing_change_list(tmp_path: Path, corpus: Path) -> None:
    one_error_line(invoke("scan", tmp_path / "none.toml", corpus, "--out", tmp_path / "r.sqlite"), "none.toml")


def test_missing_root(tmp_path: Path, changes: Path) -> None:
    missing = tmp_path / "no-such-corpus"
    one_error_line(invoke("scan", changes, missing, "--out", tmp_path / "r.sqlite"), "no-such-corpus", "does not exist")


def test_root_that_is_not_an_archive(tmp_path: Path, changes: Path) -> None:
    odd = tmp_path / "notes.txt"
    odd.write_text("x", encoding="utf-8")
    one_error_line(invoke("scan", changes, odd, "--out", tmp_path / "r.sqlite"), "notes.txt")


def test_out_in_a_missing_folder(tmp_path: Path, changes: Path, corpus: Path) -> None:
    out = tmp_path / "missing" / "dir" / "r.sqlite"
    line = one_error_line(invoke("scan", changes, corpus, "--out", out), "--out", str(out.parent), "does not exist")
    assert "create it" in line
    assert not out.parent.exists()  # refused before any work, nothing made on the way


def test_out_whose_folder_is_a_file(tmp_path: Path, changes: Path, corpus: Path) -> None:
    blocker = tmp_path / "afile"
    blocker.write_text("x", encoding="utf-8")
    one_error_line(invoke("scan", changes, corpus, "--out", blocker / "r.sqlite"), "afile", "not a folder")


def test_empty_root(tmp_path: Path, changes: Path) -> None:
    empty = tmp_path / "empty"
    empty.mkdir()
    out = tmp_path / "r.sqlite"
    line = one_error_line(invoke("scan", changes, empty, "--out", out), str(empty), "no projects", "is empty")
    assert "--single" in line
    assert not out.exists()


def test_root_with_no_projects(tmp_path: Path, changes: Path) -> None:
    root = tmp_path / "hidden-only"
    (root / ".git").mkdir(parents=True)
    (root / ".env").write_text("X=1\n", encoding="utf-8")
    line = one_error_line(invoke("scan", changes, root, "--out", tmp_path / "r.sqlite"), str(root), "no projects")
    assert "2 item(s) that are not projects" in line


def test_root_with_no_projects_keeps_an_earlier_results_file(tmp_path: Path, changes: Path, corpus: Path) -> None:
    """A wrong root must not prune the projects of an earlier scan into the same --out."""
    out = tmp_path / "r.sqlite"
    assert invoke("scan", changes, corpus, "--out", out, "--jobs", "1").exit_code == 0
    before = out.read_bytes()
    empty = tmp_path / "empty"
    empty.mkdir()
    one_error_line(invoke("scan", changes, empty, "--out", out), "no projects")
    assert out.read_bytes() == before


def test_report_on_missing_file(tmp_path: Path) -> None:
    one_error_line(invoke("report", tmp_path / "nothing.sqlite"), "nothing.sqlite")


def test_report_on_non_sqlite_file(tmp_path: Path) -> None:
    fake = tmp_path / "fake.sqlite"
    fake.write_text("just some text, not a database\n", encoding="utf-8")
    one_error_line(invoke("report", fake, "--format", "json"), "fake.sqlite")


def test_report_on_a_foreign_sqlite_database(tmp_path: Path) -> None:
    other = tmp_path / "other.sqlite"
    with sqlite3.connect(other) as db:
        db.execute("create table t (x)")
    db.close()
    one_error_line(invoke("report", other), "other.sqlite")


def test_usage_error_is_exit_2(tmp_path: Path) -> None:
    # Click's convention (common practice): a usage error exits with status 2.
    result = invoke("report", tmp_path / "r.sqlite", "--format", "yaml")
    assert result.exit_code == 2
    assert "Traceback" not in result.output


# ---------------------------------------------------------------------------- damaged files -> counted
def test_damaged_files_are_counted_as_unparsed(tmp_path: Path, changes: Path, corpus: Path) -> None:
    out = tmp_path / "r.sqlite"
    scanned = invoke("scan", changes, corpus, "--out", out, "--jobs", "1", "--quiet")
    assert scanned.exit_code == 0, scanned.output
    reported = invoke("report", out, "--format", "json")
    assert reported.exit_code == 0, reported.output
    doc = json.loads(reported.stdout)
    totals = doc["totals"]
    # docs/corpus.md: every file is accounted for.
    assert totals["files"] == totals["files_parsed"] + totals["files_skipped"] + totals["files_unparsed"]
    # good, damaged, archived, tarred (docs/corpus.md, "Projects": each child is a project).
    assert totals["projects"] == 4
    assert totals["files_unparsed"] == 8
    assert totals["files_parsed"] == 1
    assert totals["files_skipped"] == 1  # README.md: not source
    reasons = {(r["status"], r["reason"]): r["files"] for r in doc["file_reasons"]}
    assert reasons.get(("unparsed", "encoding")) == 3
    assert reasons.get(("unparsed", "invalid notebook")) == 1
    assert reasons.get(("unparsed", "python 2")) == 1
    assert reasons.get(("unparsed", "syntax error")) == 1
    assert sum(n for (status, reason), n in reasons.items() if status == "unparsed" and "archive" in reason) == 2
    assert sum(n for (status, _), n in reasons.items() if status == "unparsed") == totals["files_unparsed"]
    # The good project is still scanned.
    assert ("good", "main.py", 2, "HF-2", "resolved") in {
        (f["project"], f["file"], f["line"], f["change"], f["confidence"]) for f in doc["findings"]
    }


def test_projects_with_findings_count_as_using_the_library(tmp_path: Path, changes: Path, corpus: Path) -> None:
    out = tmp_path / "r.sqlite"
    assert invoke("scan", changes, corpus, "--out", out, "--jobs", "1", "--quiet").exit_code == 0
    doc = json.loads(invoke("report", out, "--format", "json").stdout)
    # docs/findings.md: findings come only from files that import the library, so every project with
    # a finding (here also the one whose only reader is the Python 2 fallback) uses it.
    with_findings = {f["project"] for f in doc["findings"]}
    assert "good" in with_findings
    assert doc["totals"]["projects_using_library"] >= len(with_findings)


def test_corrupt_archive_as_the_root(tmp_path: Path, changes: Path) -> None:
    root = tmp_path / "corpus.zip"
    root.write_bytes(b"PK but not really")
    out = tmp_path / "r.sqlite"
    # roots.discover: "A corrupt archive does not stop discovery"; docs/corpus.md: every file is
    # accounted for.
    scanned = invoke("scan", changes, root, "--out", out, "--jobs", "1", "--quiet")
    assert scanned.exit_code == 0, scanned.output
    doc = json.loads(invoke("report", out, "--format", "json").stdout)
    assert doc["totals"]["files_unparsed"] == doc["totals"]["files"] == 1


def test_console_script_prints_no_traceback(tmp_path: Path, corpus: Path) -> None:
    bad = tmp_path / "bad.toml"
    bad.write_text(CHANGES + "\n[[change]]\nid = \"HF-2\"\nmember = \"heronframe.x\"\nkind = \"removed\"\n", encoding="utf-8")
    script = Path(sys.executable).with_name("impactscope")
    if not script.exists():
        script = Path("/tmp/venv/bin/impactscope")
    done = subprocess.run(
        [str(script), "scan", str(bad), str(corpus), "--out", str(tmp_path / "r.sqlite")],
        capture_output=True, text=True, timeout=60,
    )
    assert done.returncode == 2
    assert "Traceback" not in done.stderr
    lines = [ln for ln in done.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and "bad.toml" in lines[0] and "duplicate" in lines[0]


def test_a_bad_limit_is_one_line_and_exit_2(tmp_path) -> None:
    from typer.testing import CliRunner

    from impactscope.cli import app

    changes = tmp_path / "changes.toml"
    changes.write_text('[library]\nname = "heronframe"\n\n[[change]]\nmember = "heronframe.stack"\nkind = "removed"\n')
    (tmp_path / "corpus" / "p").mkdir(parents=True)
    (tmp_path / "corpus" / "p" / "a.py").write_text("import heronframe\n")
    result = CliRunner().invoke(
        app, ["scan", str(changes), str(tmp_path / "corpus"), "--out", str(tmp_path / "r.sqlite"), "--limit", "bytes=1"]
    )
    assert result.exit_code == 2
    assert "limit 'bytes=1'" in result.output and "Traceback" not in result.output


def test_a_limit_given_on_the_command_line_skips_with_its_reason(tmp_path) -> None:
    import json

    from typer.testing import CliRunner

    from impactscope.cli import app

    changes = tmp_path / "changes.toml"
    changes.write_text('[library]\nname = "heronframe"\n\n[[change]]\nmember = "heronframe.stack"\nkind = "removed"\n')
    (tmp_path / "corpus" / "p").mkdir(parents=True)
    (tmp_path / "corpus" / "p" / "big.py").write_text("import heronframe\nheronframe.stack()\n" + "x = 1\n" * 400)
    (tmp_path / "corpus" / "p" / "small.py").write_text("import heronframe\nheronframe.stack()\n")
    out = tmp_path / "r.sqlite"
    runner = CliRunner()
    result = runner.invoke(app, ["scan", str(changes), str(tmp_path / "corpus"), "--out", str(out),
                                 "--limit", "file_bytes=1000", "--jobs", "1"])
    assert result.exit_code == 0, result.output
    report = json.loads(runner.invoke(app, ["report", str(out), "--format", "json"]).output)
    assert report["totals"]["files_skipped"] == 1 and report["totals"]["files_parsed"] == 1
    assert {f["file"] for f in report["findings"]} == {"small.py"}


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs FIFOs")
def test_a_change_list_from_a_pipe_is_read_once_and_kept_for_report(tmp_path) -> None:
    """`impactscope scan <(cat changes.toml) ...`: a pipe gives its text once; `report` then
    reads the list the results file keeps, never the path."""
    import json
    import threading

    from typer.testing import CliRunner

    from impactscope.cli import app

    text = '[library]\nname = "heronframe"\n\n[[change]]\nid = "S"\nmember = "heronframe.stack"\nkind = "removed"\n'
    pipe = tmp_path / "changes.toml"
    os.mkfifo(pipe)
    (tmp_path / "corpus" / "p").mkdir(parents=True)
    (tmp_path / "corpus" / "p" / "a.py").write_text("import heronframe\nheronframe.stack()\n")
    out = tmp_path / "r.sqlite"

    def write_once() -> None:
        with open(pipe, "w") as handle:
            handle.write(text)

    writer = threading.Thread(target=write_once, daemon=True)
    writer.start()
    outcome: list[object] = []
    runner = CliRunner()
    scan = threading.Thread(
        target=lambda: outcome.append(
            runner.invoke(app, ["scan", str(pipe), str(tmp_path / "corpus"), "--out", str(out), "--jobs", "1"])
        ),
        daemon=True,
    )
    scan.start()
    scan.join(60)
    assert not scan.is_alive(), "the scan read the pipe a second time and blocked"
    assert outcome[0].exit_code == 0, outcome[0].output  # type: ignore[attr-defined]
    os.unlink(pipe)
    report = runner.invoke(app, ["report", str(out), "--format", "json"])
    assert report.exit_code == 0, report.output
    assert [f["change"] for f in json.loads(report.output)["findings"]] == ["S"]


def test_another_programs_sqlite_file_is_refused_in_one_line(tmp_path) -> None:
    path = tmp_path / "other.sqlite"
    db = sqlite3.connect(path)
    db.execute("CREATE TABLE meta (key TEXT, value TEXT)")
    db.execute("CREATE TABLE findings (a)")
    db.execute("INSERT INTO meta VALUES ('library', 'x')")
    db.commit()
    db.close()
    done = subprocess.run([sys.executable, "-m", "impactscope.cli", "report", str(path)], capture_output=True, text=True)
    assert done.returncode == 2, done.stderr
    assert "not an impactscope results file" in done.stderr and "Traceback" not in done.stderr


def test_a_bug_is_reported_as_one_and_exits_3(monkeypatch, capsys) -> None:
    """docs/command-line.md, exit codes: 3 is an internal error; the traceback only with --debug."""
    from impactscope import cli

    def broken(*args, **kwargs):
        raise KeyError("boom")

    monkeypatch.setattr("impactscope.store.ResultStore.open", broken)
    monkeypatch.setattr(sys, "argv", ["impactscope", "report", "whatever.sqlite"])
    with pytest.raises(SystemExit) as stopped:
        cli.main()
    assert stopped.value.code == 3
    err = capsys.readouterr().err
    assert "internal error" in err and "KeyError" in err and "Traceback" not in err
    monkeypatch.setattr(sys, "argv", ["impactscope", "--debug", "report", "whatever.sqlite"])
    with pytest.raises(KeyError):
        cli.main()


def test_a_second_scan_into_a_results_file_being_written_is_refused(tmp_path) -> None:
    """One writer at a time: a scan that finds the results file locked exits 2 and names the holder."""
    import fcntl

    changes = tmp_path / "changes.toml"
    changes.write_text('[library]\nname = "heronframe"\n\n[[change]]\nmember = "heronframe.stack"\nkind = "removed"\n')
    (tmp_path / "corpus" / "p").mkdir(parents=True)
    (tmp_path / "corpus" / "p" / "a.py").write_text("import heronframe\nheronframe.stack()\n")
    out = tmp_path / "r.sqlite"
    with open(tmp_path / "r.sqlite.lock", "w") as held:
        held.write("4242")
        held.flush()
        fcntl.flock(held, fcntl.LOCK_EX)
        done = subprocess.run(
            [sys.executable, "-m", "impactscope.cli", "scan", str(changes), str(tmp_path / "corpus"), "--out", str(out)],
            capture_output=True, text=True,
        )
    assert done.returncode == 2, done.stderr
    assert "another scan (process 4242)" in done.stderr and "Traceback" not in done.stderr
    again = subprocess.run(
        [sys.executable, "-m", "impactscope.cli", "scan", str(changes), str(tmp_path / "corpus"), "--out", str(out),
         "--quiet"],
        capture_output=True, text=True,
    )
    assert again.returncode == 0, again.stderr  # the lock ends with its holder


def test_a_full_disk_mid_scan_is_one_line_and_keeps_what_was_committed(tmp_path, monkeypatch) -> None:
    """SQLite's SQLITE_FULL, made here with `PRAGMA max_page_count` (the SQLite documentation:
    past it an insert fails with "database or disk is full"), as a full disk gives it."""
    from impactscope.scan.run import run_scan
    from impactscope.store import ResultStore, StoreError

    changes = tmp_path / "changes.toml"
    changes.write_text('[library]\nname = "heronframe"\n\n[[change]]\nmember = "heronframe.stack"\nkind = "removed"\n')
    for i in range(40):
        (tmp_path / "corpus" / f"p{i:02}").mkdir(parents=True)
        for j in range(20):
            (tmp_path / "corpus" / f"p{i:02}" / f"module_with_a_long_name_{j:02}.py").write_text(
                "import heronframe\n" + "heronframe.stack()\n" * 5
            )
    out = tmp_path / "r.sqlite"
    connect = ResultStore._connect

    def small(path):  # type: ignore[no-untyped-def]
        db = connect(path)
        db.execute("PRAGMA max_page_count = 30")
        return db

    monkeypatch.setattr(ResultStore, "_connect", staticmethod(small))
    monkeypatch.setattr("impactscope.scan.run.COMMIT_PROJECTS", 1)
    with pytest.raises(StoreError, match="cannot write the results file .*disk is full"):
        run_scan(changes, [tmp_path / "corpus"], out, jobs=1)
    monkeypatch.setattr(ResultStore, "_connect", staticmethod(connect))
    kept = ResultStore.open(out)
    try:
        assert 0 < len(kept.projects()) < 40
    finally:
        kept.close()
    committed = len(ResultStore.open(out).projects())
    summary = run_scan(changes, [tmp_path / "corpus"], out, jobs=1)
    assert summary.projects == 40 and summary.reused == committed


# ---------------------------------------------------------------------------- input error or bug
# docs/command-line.md "Exit codes": 2 for an InputError (the user's to fix), 3 for anything else (a bug).
def _input_cases(tmp_path: Path, changes: Path, corpus: Path) -> dict[str, tuple[list[str], str]]:
    """One bad input per kind of input error: the arguments and a text its one line must hold."""
    scanned = tmp_path / "scanned.sqlite"
    assert invoke("scan", changes, corpus, "--out", scanned, "--jobs", "1", "--quiet").exit_code == 0
    bad_toml = tmp_path / "bad.toml"
    bad_toml.write_text(CHANGES.replace('release = "3.0"', 'release = "three"'), encoding="utf-8")
    weights = tmp_path / "weights.csv"
    weights.write_bytes(b"good,\xff\n")  # 0xff starts no UTF-8 sequence (RFC 3629)
    population = tmp_path / "population.txt"
    population.write_text("a\nb\n", encoding="utf-8")
    out = str(tmp_path / "r.sqlite")
    return {
        "ChangeListError": (["scan", str(bad_toml), str(corpus), "--out", out], "'three' is not a PEP 440 version"),
        "CorpusError": (["scan", str(changes), str(tmp_path / "absent"), "--out", out], "does not exist"),
        "LimitsError": (["scan", str(changes), str(corpus), "--out", out, "--limit", "depth=0"], "depth"),
        "ScanOptionError": (["scan", str(changes), str(corpus), "--out", out, "--library-source",
                             str(tmp_path / "absent-lib")], "--library-source"),
        "StoreError": (["report", str(bad_toml)], "not an impactscope results file"),
        "SizingError": (["report", str(scanned), "--weights", str(weights)], "not UTF-8"),
        "SurfaceError": (["surface", str(tmp_path / "absent-lib")], "no such file or folder"),
        "SamplingError": (["sample", str(population), "--size", "5"], "exceeds the population"),
        "EstimateError": (["sample", str(population), "--margin", "2"], "margin must be"),
        "demo InputError": (["demo", "--projects", "5", "--dir", str(tmp_path / "demo")], "projects must be at least"),
        "PolicyError": (["gate", str(scanned), "--policy", str(tmp_path / "absent-policy.toml")], "policy not found"),
        "RewriteOptionError": (["rewrite", str(changes), str(corpus), "--out", str(bad_toml)], "not a folder"),
    }


def test_each_kind_of_input_error_is_one_line_and_exit_2(tmp_path: Path, changes: Path, corpus: Path) -> None:
    for kind, (args, text) in _input_cases(tmp_path, changes, corpus).items():
        result = invoke(*args)
        assert result.exit_code == 2, (kind, result.exit_code, result.output, result.exception)
        one_error_line(result, "impactscope: error: ", text)


def test_every_error_class_of_ours_for_input_is_an_input_error() -> None:
    """A ValueError subclass defined in impactscope that is not an InputError would be taken
    for a bug (exit 3) when the user is the one to fix it."""
    import importlib
    import inspect
    import pkgutil

    import impactscope
    from impactscope.errors import InputError

    seen: dict[str, type] = {}
    for info in pkgutil.walk_packages(impactscope.__path__, "impactscope."):
        if info.name.startswith("impactscope.demo.heronframe"):
            continue  # the fictional library the demo scans: read as text, never imported
        module = importlib.import_module(info.name)
        for name, value in vars(module).items():
            if inspect.isclass(value) and issubclass(value, ValueError) and value.__module__ == info.name:
                seen[f"{info.name}.{name}"] = value
    assert "impactscope.changes.ChangeListError" in seen and "impactscope.store.StoreError" in seen
    stray = sorted(name for name, cls in seen.items() if not issubclass(cls, InputError))
    assert stray == [], f"subclass InputError instead of ValueError: {stray}"


def _run_with_a_bug(tmp_path: Path, *args: str) -> subprocess.CompletedProcess[str]:
    """The console entry point, with the scan driver made to raise a plain ValueError (as a bug
    would); run in a child so that the traceback printed under --debug is Python's own."""
    code = (
        "import sys\n"
        "import impactscope.scan.run as run\n"
        "from impactscope.cli import main\n"
        "def broken(*args, **kwargs):\n"
        "    raise ValueError('an invariant of the scan did not hold')\n"
        "run.run_scan = broken\n"
        "sys.argv = ['impactscope', *sys.argv[1:]]\n"
        "main()\n"
    )
    return subprocess.run([sys.executable, "-c", code, *args], capture_output=True, text=True, timeout=120, cwd=tmp_path)


def test_a_plain_value_error_is_a_bug_exit_3_without_traceback(tmp_path: Path, changes: Path, corpus: Path) -> None:
    done = _run_with_a_bug(tmp_path, "scan", str(changes), str(corpus), "--out", str(tmp_path / "r.sqlite"))
    assert done.returncode == 3, done.stderr
    lines = [ln for ln in done.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1, done.stderr
    assert "Traceback" not in done.stderr
    assert "ValueError: an invariant of the scan did not hold" in lines[0]
    assert "bug in impactscope" in lines[0] and "not a problem with your input" in lines[0]
    assert "report it to the impactscope maintainers with the command you ran" in lines[0]
    assert "--debug" in lines[0]


def test_a_bug_under_debug_shows_the_traceback(tmp_path: Path, changes: Path, corpus: Path) -> None:
    done = _run_with_a_bug(tmp_path, "--debug", "scan", str(changes), str(corpus), "--out", str(tmp_path / "r.sqlite"))
    assert done.returncode != 0 and done.returncode != 2, done.stderr
    assert "Traceback (most recent call last)" in done.stderr
    assert "in broken" in done.stderr  # the frame that raised it
    assert done.stderr.rstrip().endswith("ValueError: an invariant of the scan did not hold")


def test_an_input_error_is_not_a_bug_under_debug_either(tmp_path: Path, corpus: Path) -> None:
    """--debug shows tracebacks of bugs only; bad input stays one line, exit 2."""
    bad = tmp_path / "bad.toml"
    bad.write_text(CHANGES.replace('kind = "removed"', 'kind = "deleted"'), encoding="utf-8")
    done = subprocess.run(
        [sys.executable, "-m", "impactscope.cli", "--debug", "scan", str(bad), str(corpus), "--out", str(tmp_path / "r.sqlite")],
        capture_output=True, text=True, timeout=120,
    )
    assert done.returncode == 2, done.stderr
    assert "Traceback" not in done.stderr
    assert len([ln for ln in done.stderr.splitlines() if ln.strip()]) == 1


def test_guarded_passes_anything_but_input_errors_on() -> None:
    import typer

    from impactscope.cli import _guarded
    from impactscope.errors import InputError

    def raise_(exc: BaseException):
        def action():
            raise exc
        return action

    with pytest.raises(typer.Exit) as stopped:
        _guarded(raise_(InputError("x.toml: something to fix")))
    assert stopped.value.exit_code == 2
    with pytest.raises(ValueError, match="a bug"):
        _guarded(raise_(ValueError("a bug")))
    with pytest.raises(UnicodeDecodeError):  # a ValueError from the standard library is a bug too
        _guarded(raise_(UnicodeDecodeError("utf-8", b"\xff", 0, 1, "invalid start byte")))
