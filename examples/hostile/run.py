"""Hostile corpus cases, generated here, each scanned by `impactscope scan` in a subprocess.

Not a test. For every case it prints the exit code, wall time, peak RSS of the scan process
(its VmHWM, so Linux only), whether a traceback was printed, and what the results file says about the files
(parsed / skipped / unparsed, and the reasons that matter). Nothing is downloaded: every case is
made from zeros, tiny sources and the fictional library heronframe.

    python examples/hostile/run.py                     # every case
    python examples/hostile/run.py --only fifo dup-zip
    python examples/hostile/run.py --src /path/to/other/src   # the same cases, another version

The big cases write about 10 MB of archives to --dir (default: a temporary folder); the 2 GB of
zeros exist only as compressed streams.
"""

from __future__ import annotations

import argparse
import io
import json
import os
import signal
import subprocess
import sys
import tarfile
import tempfile
import time
import warnings
import zipfile
import zlib
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

CHANGES = """\
[library]
name = "heronframe"
release = "3.0"

[[change]]
id = "HF-1"
member = "heronframe.stack"
kind = "removed"
"""
USES = b"import heronframe\nheronframe.stack()\n"
GIB = 1 << 30
TIMEOUT = 600  # seconds: past this a case is a hang (--timeout)
CHUNK = 16 << 20


# ------------------------------------------------------------------ builders


def _zeros_into(handle: io.BufferedIOBase | zipfile.ZipExtFile, total: int) -> None:
    block = bytes(CHUNK)
    left = total
    while left > 0:
        handle.write(block[: min(left, CHUNK)])
        left -= CHUNK


def _deflated(name: str) -> zipfile.ZipInfo:
    info = zipfile.ZipInfo(name)
    info.compress_type = zipfile.ZIP_DEFLATED  # a ZipInfo of our own is stored unless told
    return info


def zip_bomb_lying(root: Path) -> None:
    """A project zip whose notebook member unpacks to 2 GiB of zeros. Its headers are patched
    to declare 1 MiB (central and local), so only reading, not the header, can tell."""
    path = root / "bomb.zip"
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("use.py", USES)
        with archive.open(_deflated("report.ipynb"), "w", force_zip64=True) as member:
            _zeros_into(member, 2 * GIB)
    data = bytearray(path.read_bytes())
    start = data.find(b"PK\x01\x02", data.find(b"PK\x01\x02") + 4)  # the notebook's central record
    local = int.from_bytes(data[start + 42 : start + 46], "little")
    # zip64: the sizes live in the extra fields; patch the uncompressed size (the first 8 bytes
    # of the zip64 extra, APPNOTE.TXT 4.5.3) in the local and central headers alike.
    # (header, its fixed size, where its name length is): APPNOTE.TXT 4.3.7 and 4.3.12.
    for header, fixed, name_at in ((local, 30, 26), (start, 46, 28)):
        name_len = int.from_bytes(data[header + name_at : header + name_at + 2], "little")
        extra = header + fixed + name_len
        for _ in range(8):  # the zip64 extra (id 1) is among the first few fields
            if data[extra : extra + 2] == b"\x01\x00":
                break
            extra += 4 + int.from_bytes(data[extra + 2 : extra + 4], "little")
        else:
            raise RuntimeError("no zip64 extra field where zipfile writes one")
        data[extra + 4 : extra + 12] = (1 << 20).to_bytes(8, "little")
    path.write_bytes(bytes(data))


def zip_bomb_truthful(root: Path) -> None:
    """A project zip whose notebook honestly declares 2 GiB (what the old code read whole)."""
    with zipfile.ZipFile(root / "bomb.zip", "w", zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("use.py", USES)
        with archive.open(_deflated("report.ipynb"), "w", force_zip64=True) as member:
            _zeros_into(member, 2 * GIB)


class _Zeros(io.RawIOBase):
    def __init__(self, total: int) -> None:
        self.left = total

    def readable(self) -> bool:
        return True

    def readinto(self, buffer: bytearray | memoryview) -> int:  # type: ignore[override]
        size = min(len(buffer), self.left)
        buffer[:size] = bytes(size)
        self.left -= size
        return size


def tar_bomb(root: Path) -> None:
    """A tar.gz root whose project holds a 2 GiB member of zeros between two sources."""
    with tarfile.open(root / "bomb.tar.gz", "w:gz") as archive:
        for name, size, source in (("p/a.py", len(USES), io.BytesIO(USES)),
                                   ("p/zeros.bin", 2 * GIB, _Zeros(2 * GIB)),
                                   ("p/b.py", len(USES), io.BytesIO(USES))):
            info = tarfile.TarInfo(name)
            info.size = size
            archive.addfile(info, source)


def many_members(count: int) -> Callable[[Path], None]:
    def build(root: Path) -> None:
        with zipfile.ZipFile(root / "many.zip", "w") as archive:
            archive.writestr("pkg/use.py", USES)
            for index in range(count - 1):
                archive.writestr(zipfile.ZipInfo(f"pkg/m{index}.py"), b"x = 1\n")

    build.__doc__ = f"A project zip of {count:,} members."
    return build


def _nest(depth: int) -> bytes:
    data = USES
    name = "use.py"
    for level in range(depth):
        buffer = io.BytesIO()
        with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
            archive.writestr(name, data)
        data, name = buffer.getvalue(), f"level{level}.zip"
    return data


def deep_nesting(root: Path) -> None:
    """Archives 30 deep: as a project zip in a folder, and as a zip root's project."""
    (root / "folder").mkdir()
    (root / "folder" / "deep.zip").write_bytes(_nest(30))
    with zipfile.ZipFile(root / "archive-root.zip", "w") as archive:
        archive.writestr("deep.zip", _nest(30))


def _members(path: Path, members: list[tuple[str, bytes]], form: str) -> None:
    if form == "zip":
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", UserWarning)
            with zipfile.ZipFile(path, "w") as archive:
                for name, data in members:
                    archive.writestr(zipfile.ZipInfo(name), data)
        return
    with tarfile.open(path, "w:gz", encoding="utf-8", errors="surrogateescape") as archive:
        for name, data in members:
            info = tarfile.TarInfo(name)
            info.size = len(data)
            archive.addfile(info, io.BytesIO(data))


DUPLICATES = [("pkg/use.py", USES), ("pkg/use.py", USES), ("./pkg/use.py", USES), ("pkg\\use.py", USES)]


def duplicate_zip(root: Path) -> None:
    """Four members that normalise to one path (twice the name, `./`, a backslash)."""
    _members(root / "dups.zip", DUPLICATES, "zip")


def duplicate_tar(root: Path) -> None:
    """The same four, and two undecodable names that once showed alike."""
    _members(root / "dups.tar.gz", DUPLICATES + [("pkg/\udcff.py", USES), ("pkg/\udcfe.py", USES)], "tar")


def phantom_tar(root: Path) -> None:
    """A tar root whose project folder appears again as a member after another project."""
    path = root / "root.tar"
    with tarfile.open(path, "w") as archive:
        for name, kind in (("proj/use.py", "f"), ("other/x.py", "f"), ("proj", "d"), ("proj/more.py", "f")):
            info = tarfile.TarInfo(name)
            if kind == "d":
                info.type = tarfile.DIRTYPE
                archive.addfile(info)
            else:
                info.size = len(USES)
                archive.addfile(info, io.BytesIO(USES))


def fifo(root: Path) -> None:
    """A folder project with a FIFO named like a source (opening it would block)."""
    (root / "p").mkdir()
    (root / "p" / "use.py").write_bytes(USES)
    os.mkfifo(root / "p" / "pipe.py")


def symlink_outside(root: Path) -> None:
    """Links out of the corpus: a file, a folder, and a project that is itself a link."""
    outside = root.parent / "outside"
    outside.mkdir(exist_ok=True)
    (outside / "secret.py").write_bytes(USES)
    corpus = root / "corpus"
    (corpus / "p").mkdir(parents=True)
    (corpus / "p" / "use.py").write_bytes(USES)
    (corpus / "p" / "secret.py").symlink_to(outside / "secret.py")
    (corpus / "p" / "etc").symlink_to("/etc")
    (corpus / "p" / "loop").symlink_to(corpus / "p")
    (corpus / "elsewhere").symlink_to(outside)


def _notebook(cells: list[str]) -> bytes:
    return json.dumps({
        "nbformat": 4, "nbformat_minor": 5, "metadata": {},
        "cells": [{"cell_type": "code", "metadata": {}, "execution_count": None, "outputs": [], "source": c}
                  for c in cells],
    }).encode()


def broken_notebook(root: Path) -> None:
    """Notebooks cut short, with a stray byte, and with cells that are not objects."""
    (root / "p").mkdir()
    good = _notebook([USES.decode()])
    (root / "p" / "cut.ipynb").write_bytes(good[: len(good) // 2])
    (root / "p" / "stray.ipynb").write_bytes(good[:20] + b"\xff" + good[20:])
    (root / "p" / "shapes.ipynb").write_bytes(b'{"nbformat": 3, "worksheets": 1.0, "cells": null}')
    (root / "p" / "use.py").write_bytes(USES)


def empty_cells(root: Path) -> None:
    """A notebook of 10^5 empty code cells and one that uses the library."""
    (root / "p").mkdir()
    (root / "p" / "many.ipynb").write_bytes(_notebook([USES.decode()] + [""] * 100_000))


@dataclass(frozen=True)
class Case:
    name: str
    build: Callable[[Path], None]
    root: str = "."  # the corpus root, relative to the case folder


CASES = [
    Case("zip-bomb-lying", zip_bomb_lying),
    Case("zip-bomb-2gib", zip_bomb_truthful),
    Case("tar-gz-bomb", tar_bomb, "bomb.tar.gz"),
    Case("zip-100k", many_members(100_000)),
    Case("zip-1m", many_members(1_000_000)),
    Case("deep-nesting", deep_nesting),
    Case("deep-nesting-root", deep_nesting, "archive-root.zip"),
    Case("dup-zip", duplicate_zip),
    Case("dup-tar", duplicate_tar),
    Case("tar-phantom", phantom_tar, "root.tar"),
    Case("fifo", fifo),
    Case("symlink-out", symlink_outside, "corpus"),
    Case("broken-notebook", broken_notebook),
    Case("empty-cells", empty_cells),
]


# ------------------------------------------------------------------ running


@dataclass(frozen=True)
class Outcome:
    exit: int | str
    seconds: float
    peak_mb: float
    traceback: bool
    summary: str


# The scan runs under this wrapper, which writes its own peak RSS (VmHWM, Linux) on exit. The
# rusage of wait4 is no good here: Linux carries the parent's high-water mark into a child that
# is spawned with vfork and exec, and this script's builders are the parent.
_WRAPPER = """\
import atexit, os, sys
def _peak():
    with open("/proc/self/status") as status, open(os.environ["HOSTILE_PEAK"], "w") as out:
        out.write(next(line.split()[1] for line in status if line.startswith("VmHWM")))
atexit.register(_peak)
from impactscope.cli import main
main()
"""


def _run(argv: list[str], env: dict[str, str], timeout: float) -> tuple[int | str, float, float, str]:
    started = time.perf_counter()
    with tempfile.TemporaryFile() as err:
        child = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=err, env=env, start_new_session=True)
        deadline = started + timeout
        while True:
            pid, status, usage = os.wait4(child.pid, os.WNOHANG)
            if pid:
                break
            if time.perf_counter() > deadline:
                os.killpg(child.pid, signal.SIGKILL)
                pid, status, usage = os.wait4(child.pid, 0)
                child.returncode = -9
                err.seek(0)
                return "hang", time.perf_counter() - started, usage.ru_maxrss / 1024, err.read().decode(errors="replace")
            time.sleep(0.05)
        child.returncode = os.waitstatus_to_exitcode(status)
        err.seek(0)
        # ru_maxrss is in KiB on Linux.
        return child.returncode, time.perf_counter() - started, usage.ru_maxrss / 1024, err.read().decode(errors="replace")


def _summary(results: Path, env: dict[str, str]) -> str:
    shown = subprocess.run(
        [sys.executable, "-c", "from impactscope.cli import main; main()", "report", str(results), "--format", "json"],
        capture_output=True, text=True, env=env, timeout=TIMEOUT,
    )
    if shown.returncode != 0:
        return f"report failed: {shown.stderr.strip().splitlines()[-1:]}"
    report = json.loads(shown.stdout)
    totals = report["totals"]
    reasons = sorted(
        (f"{r['reason']} {r['files']}" for r in report.get("file_reasons", [])
         if r["reason"] not in ("not source", "no candidate")),
    )
    sites = len(report.get("findings", []))
    return (f"{totals['projects']} proj, files {totals['files']} = {totals['files_parsed']} parsed"
            f" + {totals['files_skipped']} skipped + {totals['files_unparsed']} unparsed; {sites} findings"
            + (f"; {', '.join(reasons)}" if reasons else ""))


def run_case(case: Case, base: Path, env: dict[str, str], timeout: float = TIMEOUT) -> Outcome:
    folder = base / case.name
    folder.mkdir(parents=True)
    (folder / "changes.toml").write_text(CHANGES, encoding="utf-8")
    corpus = folder / "corpus-root"
    corpus.mkdir()
    case.build(corpus)
    root = corpus if case.root == "." else corpus / case.root
    results = folder / "results.sqlite"
    peak_file = folder / "peak-kib"
    argv = [sys.executable, "-c", _WRAPPER, "scan",
            str(folder / "changes.toml"), str(root), "--out", str(results), "--jobs", "1"]
    code, seconds, _, stderr = _run(argv, {**env, "HOSTILE_PEAK": str(peak_file)}, timeout)
    peak = int(peak_file.read_text()) / 1024 if peak_file.exists() else float("nan")
    summary = _summary(results, env) if code == 0 else (stderr.strip().splitlines() or [""])[-1][:160]
    return Outcome(code, seconds, peak, "Traceback" in stderr, summary)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--only", nargs="*", help="case names to run (default: all)")
    parser.add_argument("--dir", type=Path, help="where to write the cases (default: a temporary folder)")
    parser.add_argument("--src", type=Path, help="a source folder to run instead of the installed impactscope")
    parser.add_argument("--timeout", type=float, default=TIMEOUT, help="seconds before a case counts as a hang")
    args = parser.parse_args()
    env = dict(os.environ)
    if args.src is not None:
        env["PYTHONPATH"] = os.pathsep.join([str(args.src.resolve()), env.get("PYTHONPATH", "")])
    cases = [c for c in CASES if not args.only or c.name in args.only]
    with tempfile.TemporaryDirectory(prefix="hostile-", dir=args.dir) as scratch:
        print(f"| case | exit | seconds | peak RSS MB | traceback | results |")
        print("| --- | --- | ---: | ---: | --- | --- |")
        for case in cases:
            outcome = run_case(case, Path(scratch), env, args.timeout)
            print(f"| {case.name} | {outcome.exit} | {outcome.seconds:.1f} | {outcome.peak_mb:.0f} | "
                  f"{'yes' if outcome.traceback else 'no'} | {outcome.summary} |", flush=True)


if __name__ == "__main__":
    main()
