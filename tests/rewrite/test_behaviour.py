"""Behaviour, checked by running our own fixtures: programs of heronframe 2.4 that fail (or
print something else) on 3.0 print on 3.0, after the rewrite, what they printed on 2.4.

Only this test harness runs them, in a subprocess with PYTHONPATH set to one version of the
fictional library; the rewrite itself reads them as text.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from tests.rewrite.helpers import DEMO_DIR, LIBRARY_3_0, rewrite_files

PROGRAMS = Path(__file__).parent.parent / "fixtures" / "heronframe_programs"


def _run(program: Path, library_parent: Path) -> subprocess.CompletedProcess[str]:
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    env["PYTHONPATH"] = str(library_parent)
    return subprocess.run([sys.executable, "-B", str(program)], env=env, capture_output=True,
                          text=True, timeout=60, cwd=program.parent)


@pytest.mark.parametrize("name", sorted(p.name for p in PROGRAMS.glob("*.py")))
def test_rewritten_program_behaves_on_3_0_as_on_2_4(tmp_path: Path, name: str) -> None:
    program = PROGRAMS / name
    on_2_4 = _run(program, DEMO_DIR)
    assert on_2_4.returncode == 0, on_2_4.stderr
    on_3_0 = _run(program, LIBRARY_3_0)
    assert on_3_0.returncode != 0 or on_3_0.stdout != on_2_4.stdout, "the fixture must break on 3.0"
    result = rewrite_files(tmp_path, {name: program.read_bytes()})
    (changed,) = result.files
    fixed = tmp_path / "fixed" / name
    fixed.parent.mkdir()
    fixed.write_bytes(changed.new)
    after = _run(fixed, LIBRARY_3_0)
    assert after.returncode == 0, after.stderr
    assert after.stdout == on_2_4.stdout
