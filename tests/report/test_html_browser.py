"""The HTML report in a real browser: headless Chromium from the system's packages renders the
demo's report, shows every change, and logs no console message (a content security policy
violation, a resource it could not load, a script error: the page has no script, so any message
is a fault). A screenshot is kept under tests/artifacts/ (git-ignored), and its path printed.

Skipped only when Chromium is missing outside CI; in CI (`CI=true`, as CI services set it) a
missing browser fails the test. .ci/run installs Debian's `chromium` package when it is absent.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from impactscope.report.html import to_html
from impactscope.report.model import Report

ARTIFACTS = Path(__file__).resolve().parents[1] / "artifacts"
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
         "--disable-component-update", "--disable-sync", "--no-first-run", "--hide-scrollbars",
         "--enable-logging=stderr", "--v=0"]
# Chromium logs each console message of a page on standard error as `...:INFO:CONSOLE...] "text"`
# (observed with Debian's chromium 150; the format is Chromium's logging, not an interface).
CONSOLE = re.compile(r":CONSOLE[:(\]]")


def _chromium() -> str:
    found = shutil.which("chromium") or shutil.which("chromium-browser")
    if found is None:
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail("chromium is missing in CI: .ci/run installs it with `apt-get install -y chromium`")
        pytest.skip("chromium is not installed (apt-get install -y chromium); CI runs this test")
    return found


def _run(page: Path, profile: Path, *extra: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [_chromium(), *FLAGS, f"--user-data-dir={profile}", *extra, page.resolve().as_uri()],
        capture_output=True, text=True, timeout=120,
    )


def _console(stderr: str) -> list[str]:
    return [line for line in stderr.splitlines() if CONSOLE.search(line)]


@pytest.fixture(scope="module")
def page(demo_model: Report, tmp_path_factory: pytest.TempPathFactory) -> Path:
    report = demo_model
    path = tmp_path_factory.mktemp("html") / "report.html"
    path.write_text(to_html(report), encoding="utf-8")
    return path


def test_chromium_renders_every_change_without_a_console_message(page: Path, scanned_demo_corpus, tmp_path: Path) -> None:
    dumped = _run(page, tmp_path / "profile", "--dump-dom")
    assert dumped.returncode == 0, dumped.stderr[-2000:]
    assert _console(dumped.stderr) == [], _console(dumped.stderr)
    text = re.sub(r"<[^>]+>", " ", dumped.stdout)
    for change in scanned_demo_corpus.report["changes"]:
        assert f"{change['id']}: " in text and change["member"] in text, change["id"]
    assert dumped.stdout.count("<svg") >= 3  # the impact, exposure and files charts at least


def test_the_console_check_sees_a_policy_violation(page: Path, tmp_path: Path) -> None:
    """The check above can fail: an inline style attribute, which the page's policy forbids,
    makes Chromium log a console message."""
    broken = tmp_path / "broken.html"
    broken.write_text(page.read_text(encoding="utf-8").replace("<h1>", '<h1 style="color: red">', 1), encoding="utf-8")
    dumped = _run(broken, tmp_path / "profile", "--dump-dom")
    assert dumped.returncode == 0
    assert any("Content Security Policy" in line for line in _console(dumped.stderr)), dumped.stderr[-2000:]


def test_a_screenshot_is_kept(page: Path, tmp_path: Path) -> None:
    ARTIFACTS.mkdir(exist_ok=True)
    shot = ARTIFACTS / "html-report-demo.png"
    shot.unlink(missing_ok=True)
    taken = _run(page, tmp_path / "profile", "--window-size=1280,2400", f"--screenshot={shot}")
    assert taken.returncode == 0, taken.stderr[-2000:]
    assert _console(taken.stderr) == []
    data = shot.read_bytes()
    assert data.startswith(b"\x89PNG\r\n\x1a\n") and len(data) > 20_000  # PNG signature (RFC 2083, 3.1)
    print(f"screenshot: {shot}")
