"""The drafts benchmark: `compare` and `harvest` on three real libraries, timed, then scored.

    python examples/realworld/drafts/measure.py fetch  --work /tmp/drafts   # wheels and release-notes sdists, sha256 checked
    python examples/realworld/drafts/measure.py unpack --work /tmp/drafts   # library sources, release notes
    python examples/realworld/drafts/measure.py draft  --work /tmp/drafts   # compare and harvest: time and peak memory
    python examples/realworld/drafts/measure.py scan   --work /tmp/drafts   # the drafts, unedited, on real downstream code
    python examples/realworld/drafts/measure.py score  --work /tmp/drafts   # = python examples/realworld/drafts/score.py
    python examples/realworld/drafts/measure.py all    --work /tmp/drafts

Nothing downloaded is built, installed, imported or run: wheels come from `pip download
--only-binary=:all: --no-deps`, the sdists (read only for their release notes) straight from the
PEP 691 JSON simple API; both are unpacked as data by the corpus benchmark's own helpers.
Each command runs in a child process under GNU time (`/usr/bin/time -f "%e %M"`: wall seconds
and peak resident set size), one at a time.
"""

from __future__ import annotations

import argparse
import importlib.util
import json
import shutil
import subprocess
import sys
import tarfile
import tomllib
from dataclasses import dataclass
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.append(str(HERE.parent))  # the corpus benchmark's fetch helpers (after this folder: names clash)

from pypi import DistFile, fetch  # noqa: E402


def _corpus_benchmark():
    """The corpus benchmark's driver (examples/realworld/run.py), loaded by path under another
    name, so that it is not taken for any other module called `run`."""
    spec = importlib.util.spec_from_file_location("realworld_run", HERE.parent / "run.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module  # dataclasses look their module up there
    spec.loader.exec_module(module)
    return module

IMPACTSCOPE = [sys.executable, "-c", "from impactscope.cli import main; main()"]
TIME = "/usr/bin/time"


@dataclass(frozen=True)
class Library:
    name: str
    documented: Path
    old: DistFile
    new: DistFile
    notes: DistFile
    notes_path: str
    platform: str | None


def load_libraries(path: Path = HERE / "libraries.toml") -> list[Library]:
    out = []
    for entry in tomllib.loads(path.read_text(encoding="utf-8"))["library"]:
        name = entry["name"]
        old, new = (DistFile(name, entry[k]["version"], entry[k]["file"], "wheel", entry[k]["sha256"]) for k in ("old", "new"))
        notes = DistFile(name, entry["new"]["version"], entry["notes"]["file"], "sdist", entry["notes"]["sha256"])
        out.append(Library(name, HERE / entry["documented"], old, new, notes, entry["notes"]["path"],
                           entry["old"].get("platform")))
    return out


def source_of(work: Path, lib: Library, which: str) -> Path:
    dist = lib.old if which == "old" else lib.new
    return work / "library" / f"{lib.name}-{dist.version}" / lib.name


def notes_of(work: Path, lib: Library) -> Path:
    return work / "notes" / f"{lib.name}-{lib.new.version}" / Path(lib.notes_path).name


def cmd_fetch(libraries: list[Library], work: Path) -> None:
    for lib in libraries:
        for dist in (lib.old, lib.new):
            fetch(dist, work / "dist", platform=lib.platform)
            print(f"wheel {dist.filename}")
        fetch(lib.notes, work / "dist")
        print(f"sdist {lib.notes.filename} (release notes only)")


def cmd_unpack(libraries: list[Library], work: Path) -> None:
    for lib in libraries:
        for dist in (lib.old, lib.new):
            _corpus_benchmark().unpack(work / "dist" / dist.filename, work / "library" / f"{lib.name}-{dist.version}", False)
        target = notes_of(work, lib)
        target.parent.mkdir(parents=True, exist_ok=True)
        with tarfile.open(work / "dist" / lib.notes.filename) as tf:
            member = next(m for m in tf.getmembers() if m.isfile() and m.name.split("/", 1)[-1] == lib.notes_path)
            handle = tf.extractfile(member)
            assert handle is not None
            target.write_bytes(handle.read())
        print(f"{lib.name}: sources under {work / 'library'}, release notes at {target}")


def timed(command: list[str]) -> tuple[float, int, str]:
    """Run `command` under GNU time: (wall seconds, peak RSS in MB, its standard output)."""
    done = subprocess.run([TIME, "-f", "%e %M", *command], capture_output=True, text=True)
    if done.returncode != 0:
        raise SystemExit(f"{' '.join(command[3:])} failed ({done.returncode}): {done.stderr.strip()[-2000:]}")
    seconds, kb = done.stderr.strip().splitlines()[-1].split()
    return float(seconds), round(int(kb) / 1024), done.stdout


def cmd_draft(libraries: list[Library], work: Path) -> None:
    out = work / "drafts"
    out.mkdir(parents=True, exist_ok=True)
    figures: dict[str, dict] = {}
    for lib in libraries:
        old, new = source_of(work, lib, "old"), source_of(work, lib, "new")
        runs = {
            "compare": ["compare", str(old), str(new), "--release", lib.new.version,
                        "--output", str(out / f"{lib.name}-compare.toml")],
            "harvest": ["harvest", str(old), "--release", lib.new.version,
                        "--output", str(out / f"{lib.name}-harvest.toml")],
        }
        for what, args in runs.items():
            seconds, mb, stdout = timed([*IMPACTSCOPE, *args])
            figures[f"{lib.name}-{what}"] = {"seconds": seconds, "peak_mb": mb, "command": "impactscope " + " ".join(args),
                                             "printed": stdout.strip()}
            print(f"{lib.name:9} {what:8} {seconds:6.1f} s {mb:5d} MB  {stdout.strip()}")
    (out / "timings.json").write_text(json.dumps(figures, indent=1) + "\n")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("step", choices=("fetch", "unpack", "draft", "scan", "score", "all"))
    parser.add_argument("--work", type=Path, required=True, help="folder for downloads and results (not the repository)")
    args = parser.parse_args()
    libraries = load_libraries()
    work = args.work.resolve()
    steps = ("fetch", "unpack", "draft", "scan", "score") if args.step == "all" else (args.step,)
    for step in steps:
        if step == "fetch":
            cmd_fetch(libraries, work)
        elif step == "unpack":
            cmd_unpack(libraries, work)
        elif step == "draft":
            if shutil.which(TIME) is None:
                raise SystemExit(f"{TIME} (GNU time) is needed to measure peak memory; install the 'time' package")
            cmd_draft(libraries, work)
        elif step == "scan":
            from scan_check import scan_all
            scan_all(libraries, work)
        else:
            import score
            score.main(["--work", str(work)])
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
