"""Hostile cases, generated here, each run through the command line in a subprocess of its own.

Not a test. The cases: archives (bombs with lying headers, a million members, nesting, names that
normalise alike, a phantom project), folders (a FIFO, links leading out), notebooks, sources (a
1 MB line, 100,000-long attribute and operator chains, 3,000 nested calls and lists, a file cut
short by its time budget), change lists (100,000 levels of nesting, 20,000 changes, 100 MB of
comments, binary, given through a pipe and then reported on), processes (SIGINT and SIGTERM to
the scan or its process group mid-scan, then the same command again) and a hostile library
source (a FIFO, a link leading out, a 20 MB module) for `surface`, `harvest` and `scan`.

For every case it prints the exit code against the expected one, the wall time, the peak RSS of
the whole process tree (each process's VmHWM, so Linux only, summed), whether a traceback was
printed, whether any process outlived the command, and what the results say (parsed / skipped /
unparsed, the reasons that matter, findings and their levels). Nothing is downloaded: every case
is made from zeros, small sources and the fictional library heronframe. Exit 1 if a case failed.

    python examples/hostile/run.py                     # every case
    python examples/hostile/run.py --only fifo dup-zip
    python examples/hostile/run.py --src /path/to/other/src   # the same cases, another version

The big cases write about 250 MB to --dir (default: a temporary folder), deleted at the end; the
2 GB of zeros exist only as compressed streams.
"""

from __future__ import annotations

import argparse
import contextlib
import io
import json
import os
import random
import signal
import sqlite3
import subprocess
import sys
import tarfile
import tempfile
import threading
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

# sources --------------------------------------------------------------------


def _module(text: str) -> Callable[[Path], None]:
    def build(root: Path) -> None:
        (root / "p").mkdir()
        (root / "p" / "hostile.py").write_text(text, encoding="utf-8")
        (root / "p" / "use.py").write_bytes(USES)

    return build


# One line of about 1 MB: a list display of 52,000 calls of the changed member.
LINE_1MB = "import heronframe\nx = [" + "heronframe.stack(1), " * 52_000 + "]\n"
ATTRIBUTE_CHAIN = "import heronframe\nheronframe" + ".stack" * 100_000 + "()\n"
OPERATOR_CHAIN = "import heronframe\nx = heronframe.stack()" + " + 1" * 100_000 + "\n"
NESTED_CALLS = "import heronframe\nx = " + "heronframe.stack(" * 3_000 + ")" * 3_000 + "\n"
NESTED_LISTS = "import heronframe\nheronframe.stack()\nx = " + "[" * 3_000 + "]" * 3_000 + "\n"
# About 1.9 MB of ordinary code (under file_bytes): what a time budget of 1 s cuts short.
SLOW_MODULE = "import heronframe as hf\n" + "".join(
    f"\ndef f{i}(t):\n    u = hf.read_table(t)\n    return hf.stack([u, f{i - 1}(u)])\n" for i in range(24_000)
)


def projects(count: int) -> Callable[[Path], None]:
    """`count` folder projects of a few modules each: a scan long enough to be interrupted."""

    def build(root: Path) -> None:
        for index in range(count):
            package = root / f"proj{index:04d}" / "pkg"
            package.mkdir(parents=True)
            (package / "__init__.py").write_text("from pkg.io import load\n", encoding="utf-8")
            (package / "io.py").write_text(
                "import heronframe as hf\n" + "".join(
                    f"\ndef load{k}(path):\n    t = hf.read_table(path)\n    return hf.stack([t, t])\n" for k in range(60)
                ) + "\nload = load0\n",
                encoding="utf-8",
            )
            (package / "util.py").write_text("def helper(x):\n    return [y for y in x]\n" * 40, encoding="utf-8")

    build.__doc__ = f"{count} folder projects of three modules each."
    return build


# change lists ---------------------------------------------------------------


def deep_toml(folder: Path) -> Path:
    path = folder / "deep.toml"
    path.write_text(CHANGES + "\n[types]\nx = " + "[" * 100_000 + "\n", encoding="utf-8")
    return path


def huge_toml(folder: Path) -> Path:
    """A valid change list of 20,000 changes (1.3 MB)."""
    path = folder / "huge.toml"
    path.write_text(CHANGES + "".join(
        f'\n[[change]]\nid = "HF-{i}"\nmember = "heronframe.member{i}"\nkind = "removed"\n' for i in range(2, 20_002)
    ), encoding="utf-8")
    return path


def comment_toml(folder: Path) -> Path:
    """100 MB of comment lines after a valid change list."""
    path = folder / "comments.toml"
    with path.open("w", encoding="utf-8") as out:
        out.write(CHANGES)
        line = "# " + "x" * 97 + "\n"
        for _ in range(1_000_000):
            out.write(line)
    return path


def binary_toml(folder: Path) -> Path:
    path = folder / "binary.toml"
    path.write_bytes(random.Random(14).randbytes(64 << 10))
    return path


# a hostile library source -------------------------------------------------------

LIBRARY_INIT = '''"""heronframe, as far as a scan needs it."""
import warnings


def stack(frames):
    warnings.warn("stack is deprecated; use concat", DeprecationWarning)
    return frames


def read_table(path):
    return path
'''


def _library(folder: Path) -> Path:
    package = folder / "lib" / "heronframe"
    package.mkdir(parents=True)
    (package / "__init__.py").write_text(LIBRARY_INIT, encoding="utf-8")
    return package


def library_fifo(root: Path) -> None:
    """A FIFO named like a module in the library's folder (opening it would block)."""
    os.mkfifo(_library(root.parent) / "pipe.py")
    _module("")(root)


def library_symlink(root: Path) -> None:
    """A module of the library that is a link to a file outside its folder."""
    outside = root.parent / "outside"
    outside.mkdir()
    (outside / "secret.py").write_text("def leaked_secret():\n    pass\n", encoding="utf-8")
    (_library(root.parent) / "secret.py").symlink_to(outside / "secret.py")
    _module("")(root)


def library_20mb(root: Path) -> None:
    """A 20 MB library module: 190,000 small functions, one in ten warning of its deprecation."""
    package = _library(root.parent)
    with (package / "big.py").open("w", encoding="utf-8") as out:
        index = 0
        while out.tell() < 20 << 20:
            if index % 10 == 0:
                out.write(f"\ndef old{index}(frame, fill=None):\n    warnings.warn('old{index} is deprecated', "
                          "DeprecationWarning)\n    return frame\n")
            else:
                out.write(f"\ndef f{index}(frame, fill=None):\n    return frame\n")
            index += 1
    (package / "__init__.py").write_text(LIBRARY_INIT + "from heronframe.big import *\n", encoding="utf-8")
    _module("")(root)


# ------------------------------------------------------------------ cases


@dataclass(frozen=True)
class Case:
    name: str
    build: Callable[[Path], None]
    root: str = "."  # the corpus root, relative to corpus-root/
    command: str = "scan"  # scan, or surface / harvest on the case's library (lib/heronframe)
    options: tuple[str, ...] = ()  # more options; "{lib}" is the library's folder
    changes: Callable[[Path], Path] | None = None  # a hostile change list instead of CHANGES
    expect: int = 0  # the exit code of a passing case
    stop: tuple[signal.Signals, bool] | None = None  # a signal sent mid-scan, and whether to the group
    jobs: int = 1
    pipe: bool = False  # the change list as `<(cat FILE)` through bash; then `report` must work


LIBRARY = ("--library-source", "{lib}")
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
    # sources
    Case("line-1mb", _module(LINE_1MB)),
    Case("attribute-chain-100k", _module(ATTRIBUTE_CHAIN)),
    Case("operator-chain-100k", _module(OPERATOR_CHAIN)),
    Case("nested-calls-3000", _module(NESTED_CALLS)),
    Case("nested-lists-3000", _module(NESTED_LISTS)),
    Case("module-1.9mb", _module(SLOW_MODULE)),
    Case("time-budget-1s", _module(SLOW_MODULE), options=("--limit", "file_seconds=1")),
    # change lists
    Case("toml-deep", _module(""), changes=deep_toml, expect=2),
    Case("toml-huge", _module(""), changes=huge_toml),
    Case("toml-100mb-comments", _module(""), changes=comment_toml),
    Case("toml-binary", _module(""), changes=binary_toml, expect=2),
    Case("toml-pipe-then-report", _module(""), pipe=True),
    # processes: a scan of 120 projects, stopped once it has committed some
    Case("sigint-process", projects(120), stop=(signal.SIGINT, False), jobs=2, expect=130),
    Case("sigint-group", projects(120), stop=(signal.SIGINT, True), jobs=2, expect=130),
    Case("sigterm-process", projects(120), stop=(signal.SIGTERM, False), jobs=2, expect=143),
    Case("sigterm-group", projects(120), stop=(signal.SIGTERM, True), jobs=2, expect=143),
    Case("sigint-inline", projects(120), stop=(signal.SIGINT, True), expect=130),
    # a hostile library source
    Case("library-fifo-surface", library_fifo, command="surface"),
    Case("library-fifo-harvest", library_fifo, command="harvest"),
    Case("library-fifo-scan", library_fifo, options=LIBRARY),
    Case("library-symlink-surface", library_symlink, command="surface"),
    Case("library-symlink-scan", library_symlink, options=LIBRARY),
    Case("library-20mb-surface", library_20mb, command="surface"),
    Case("library-20mb-harvest", library_20mb, command="harvest"),
    Case("library-20mb-scan", library_20mb, options=LIBRARY),
]


# ------------------------------------------------------------------ running


@dataclass(frozen=True)
class Outcome:
    exit: int | str
    seconds: float
    peak_mb: float
    traceback: bool
    summary: str
    passed: bool


# Every process of the command writes its own peak RSS (VmHWM, Linux) into HOSTILE_PEAK/<pid> as
# it exits: the main one from atexit, pool workers (forked, they leave through os._exit) from a
# multiprocessing finaliser. The rusage of wait4 is no good here: Linux carries the parent's
# high-water mark into a child spawned with vfork and exec, and this script's builders are the parent.
_WRAPPER = """\
import atexit, os
from multiprocessing import util
def _peak():
    try:
        with open("/proc/self/status") as status:
            kib = next(line.split()[1] for line in status if line.startswith("VmHWM"))
        with open(os.path.join(os.environ["HOSTILE_PEAK"], str(os.getpid())), "w") as out:
            out.write(kib)
    except OSError:
        pass
atexit.register(_peak)
util.register_after_fork(_peak, lambda _: util.Finalize(None, _peak, exitpriority=100))
from impactscope.cli import main
main()
"""


class _Tree:
    """Samples the peak RSS (VmHWM) of every process in one process group while it runs; a
    killed process writes nothing at exit, so sampling is what sees it."""

    def __init__(self, group: int) -> None:
        self.group = group
        self.peaks: dict[int, int] = {}  # pid -> highest VmHWM seen, KiB
        self.done = threading.Event()
        self.thread = threading.Thread(target=self._run, daemon=True)
        self.thread.start()

    def members(self) -> list[int]:
        found = []
        for entry in os.listdir("/proc"):
            if not entry.isdigit():
                continue
            try:
                with open(f"/proc/{entry}/stat", encoding="ascii", errors="replace") as stat:
                    fields = stat.read().rsplit(")", 1)[1].split()
            except OSError:
                continue
            if int(fields[2]) == self.group and fields[0] != "Z":
                found.append(int(entry))
        return found

    def _run(self) -> None:
        while not self.done.wait(0.05):
            for pid in self.members():
                try:
                    with open(f"/proc/{pid}/status", encoding="ascii", errors="replace") as status:
                        kib = next((int(line.split()[1]) for line in status if line.startswith("VmHWM")), 0)
                except OSError:
                    continue
                self.peaks[pid] = max(self.peaks.get(pid, 0), kib)

    def stop(self, written: Path) -> float:
        """MB: the sum over the group's processes of each one's peak (an upper bound on the
        group's peak, since processes that never ran together are added too)."""
        self.done.set()
        self.thread.join()
        for file in written.iterdir():
            pid = int(file.name)
            self.peaks[pid] = max(self.peaks.get(pid, 0), int(file.read_text() or 0))
        return sum(self.peaks.values()) / 1024


def _run(argv: list[str], env: dict[str, str], timeout: float, peaks: Path,
         stop: tuple[signal.Signals, bool] | None = None, started_when: Path | None = None,
         ) -> tuple[int | str, float, float, str, str, bool]:
    """Run `argv` in a session of its own; (exit, seconds, peak MB of the tree, stdout, stderr,
    whether a process of the group outlived the command)."""
    peaks.mkdir(parents=True, exist_ok=True)
    started = time.perf_counter()
    with tempfile.TemporaryFile() as out, tempfile.TemporaryFile() as err:
        child = subprocess.Popen(argv, stdout=out, stderr=err, env={**env, "HOSTILE_PEAK": str(peaks)},
                                 start_new_session=True)
        tree = _Tree(child.pid)
        deadline = started + timeout
        sent = stop is None
        code: int | str
        while True:
            if child.poll() is not None:
                code = child.returncode
                break
            if not sent and started_when is not None and started_when.exists() and _committed(started_when) > 0:
                sig, group = stop  # type: ignore[misc]
                (os.killpg if group else os.kill)(child.pid, sig)
                sent = True
            if time.perf_counter() > deadline:
                os.killpg(child.pid, signal.SIGKILL)
                child.wait()
                code = "hang"
                break
            time.sleep(0.05)
        seconds = time.perf_counter() - started
        # Workers must end with the command; give them a moment, then look for any left.
        left = True
        for _ in range(100):
            left = bool(tree.members())
            if not left:
                break
            time.sleep(0.05)
        if left:
            os.killpg(child.pid, signal.SIGKILL)
        peak = tree.stop(peaks)
        out.seek(0)
        err.seek(0)
        return (code, seconds, peak, out.read().decode(errors="replace"), err.read().decode(errors="replace"), left)


def _committed(results: Path) -> int:
    """Projects committed to a results file so far (0 while it cannot be read)."""
    try:
        with contextlib.closing(sqlite3.connect(f"file:{results}?mode=ro", uri=True, timeout=0.1)) as db:
            return db.execute("SELECT count(*) FROM projects").fetchone()[0]
    except sqlite3.Error:
        return 0


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
    levels = sorted({f["confidence"] for f in report.get("findings", [])})
    sites = len(report.get("findings", []))
    return (f"{totals['projects']} proj, files {totals['files']} = {totals['files_parsed']} parsed"
            f" + {totals['files_skipped']} skipped + {totals['files_unparsed']} unparsed; {sites} findings"
            + (f" ({', '.join(levels)})" if levels else "")
            + (f"; {', '.join(reasons)}" if reasons else ""))


def _last_line(text: str) -> str:
    lines = [line for line in text.strip().splitlines() if line.strip()]
    return lines[-1][:160] if lines else ""


def run_case(case: Case, base: Path, env: dict[str, str], timeout: float = TIMEOUT) -> Outcome:
    folder = base / case.name
    folder.mkdir(parents=True)
    (folder / "changes.toml").write_text(CHANGES, encoding="utf-8")
    corpus = folder / "corpus-root"
    corpus.mkdir()
    case.build(corpus)
    root = corpus if case.root == "." else corpus / case.root
    library = folder / "lib" / "heronframe"
    changes = case.changes(folder) if case.changes is not None else folder / "changes.toml"
    results = folder / "results.sqlite"
    options = [o.replace("{lib}", str(library)) for o in case.options]
    python = [sys.executable, "-c", _WRAPPER]
    if case.command != "scan":
        argv = [*python, case.command, str(library), *options]
    elif case.pipe:
        # bash hands the words after -c's text out as $0, $1, ...: the command is what follows them.
        argv = ["bash", "-c", 'changes=$1 root=$2 out=$3; shift 3; exec "$@" scan <(cat "$changes") "$root" --out "$out" --jobs 1',
                "bash", str(changes), str(root), str(results), *python]
    else:
        argv = [*python, "scan", str(changes), str(root), "--out", str(results), "--jobs", str(case.jobs), *options]
    code, seconds, peak, stdout, stderr, left = _run(
        argv, env, timeout, folder / "peaks", case.stop, results if case.stop else None
    )
    traceback = "Traceback" in stderr
    notes: list[str] = []
    passed = code == case.expect and not traceback and not left
    if left:
        notes.append("a process outlived the command")
    if case.command != "scan":
        notes.append(f"{len(stdout.splitlines())} lines out")
        if "leaked_secret" in stdout:
            notes.append("the linked file outside was read")
            passed = False
        if code != 0:
            notes.append(_last_line(stderr))
    elif case.stop is not None:
        interrupted = "interrupted" in stderr
        passed = passed and interrupted
        notes.append(f"{_committed(results)} projects kept; " + ("'interrupted' line" if interrupted else "NO 'interrupted' line"))
        (folder / "peaks2").mkdir()
        again = subprocess.run(argv, capture_output=True, text=True, env={**env, "HOSTILE_PEAK": str(folder / "peaks2")},
                               timeout=TIMEOUT)
        notes.append(f"rerun exit {again.returncode}: {_last_line(again.stderr)}")
        passed = passed and again.returncode == 0 and "unchanged, reused" in again.stderr
    elif code == 0:
        notes.append(_summary(results, env))
        passed = passed and not notes[-1].startswith("report failed")
        if case.pipe:
            report = subprocess.run([*python, "report", str(results)], capture_output=True, text=True,
                                    env={**env, "HOSTILE_PEAK": str(folder / "peaks")}, timeout=TIMEOUT)
            notes.append(f"report exit {report.returncode}")
            passed = passed and report.returncode == 0
    else:
        notes.append(_last_line(stderr))
    return Outcome(code, seconds, peak, traceback, "; ".join(n for n in notes if n), passed and peak < 500)


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
    failed = 0
    with tempfile.TemporaryDirectory(prefix="hostile-", dir=args.dir) as scratch:
        print("| case | command | exit (expected) | seconds | peak RSS MB | traceback | passed | outcome |")
        print("| --- | --- | --- | ---: | ---: | --- | --- | --- |")
        for case in cases:
            outcome = run_case(case, Path(scratch), env, args.timeout)
            failed += not outcome.passed
            what = case.command + (" (pipe)" if case.pipe else "") + (
                f" + {case.stop[0].name} to {'group' if case.stop[1] else 'process'}" if case.stop else "")
            print(f"| {case.name} | {what} | {outcome.exit} ({case.expect}) | {outcome.seconds:.1f} | "
                  f"{outcome.peak_mb:.0f} | {'yes' if outcome.traceback else 'no'} | "
                  f"{'yes' if outcome.passed else 'NO'} | {outcome.summary.replace('|', '/')} |", flush=True)
    sys.exit(1 if failed else 0)


if __name__ == "__main__":
    main()
