"""The real-world benchmark: real libraries, real downstream packages, hand-checked verdicts.

    python examples/realworld/run.py all --work /tmp/rw            # fetch, unpack, scan, candidates, score
    python examples/realworld/run.py fetch --work /tmp/rw          # download the pinned files (sha256 checked)
    python examples/realworld/run.py unpack --work /tmp/rw         # one folder per project, library sources
    python examples/realworld/run.py scan --work /tmp/rw           # without and with the library's source
    python examples/realworld/run.py candidates --work /tmp/rw     # whole-word hits, for judging
    python examples/realworld/run.py score --work /tmp/rw          # = python examples/realworld/score.py

Nothing downloaded is built, installed, imported or run: wheels come from `pip download
--only-binary=:all: --no-deps`, sdists straight from the PEP 691 JSON API, and both are unpacked
as data (regular files only, no absolute or parent paths). `--archives` scans the downloaded
archives in place instead of the unpacked folders. Scans run with `--jobs 1` unless told.
"""

from __future__ import annotations

import argparse
import ast
import csv
import io
import json
import os
import re
import shutil
import subprocess
import sys
import tarfile
import time
import tomllib
import zipfile
from dataclasses import dataclass, field
from pathlib import Path, PurePosixPath

import nbformat

from pypi import DistFile, fetch

HERE = Path(__file__).resolve().parent
IMPACTSCOPE = [sys.executable, "-c", "from impactscope.cli import main; main()"]
# without --library-source, with it, and with it and the library's PEP 561 stub package
# (--library-stubs), for a library whose corpus entry pins one
MODES = ("plain", "source", "stubs")


@dataclass(frozen=True)
class Library:
    name: str
    changes: Path
    old: DistFile
    new: DistFile
    platform: str | None
    stubs: DistFile | None = None  # a stub package for `old` (pandas-stubs), read with its source
    module: str = ""  # the top-level import name when it differs from the distribution's (sklearn)

    @property
    def package(self) -> str:
        return self.module or self.name


@dataclass(frozen=True)
class Corpus:
    libraries: tuple[Library, ...]
    projects: tuple[tuple[str, DistFile], ...]  # (library, file)

    def of(self, library: str) -> list[DistFile]:
        return [dist for lib, dist in self.projects if lib == library]


def load_corpus(path: Path = HERE / "corpus.toml") -> Corpus:
    data = tomllib.loads(path.read_text(encoding="utf-8"))
    libraries = []
    for entry in data["library"]:
        name = entry["name"]
        old, new = (
            DistFile(name, entry[k]["version"], entry[k]["file"], "wheel", entry[k]["sha256"]) for k in ("old", "new")
        )
        stubs = entry.get("stubs")
        stub_dist = None if stubs is None else DistFile(stubs["name"], stubs["version"], stubs["file"], "wheel", stubs["sha256"])
        libraries.append(Library(name, HERE / entry["changes"], old, new, entry["old"].get("platform"), stub_dist,
                                 entry.get("module", "")))
    projects = tuple(
        (p["library"], DistFile(p["name"], p["version"], p["file"], p["kind"], p["sha256"], uploaded=p["uploaded"]))
        for p in data["project"]
    )
    return Corpus(tuple(libraries), projects)


# ------------------------------------------------------------------ fetch and unpack


def cmd_fetch(corpus: Corpus, work: Path, only: str | None = None) -> None:
    for lib in corpus.libraries:
        if only and lib.name != only:
            continue
        for dist in (lib.old, lib.new):
            fetch(dist, work / "dist" / "library", platform=lib.platform)
            print(f"library {dist.filename}")
        if lib.stubs is not None:
            fetch(lib.stubs, work / "dist" / "library")
            print(f"library {lib.stubs.filename}")
        for dist in corpus.of(lib.name):
            fetch(dist, work / "dist" / lib.name)
            print(f"{lib.name:9} {dist.kind:5} {dist.filename}")


def _safe_parts(name: str) -> tuple[str, ...] | None:
    path = PurePosixPath(name.replace("\\", "/"))
    if path.is_absolute() or any(part in ("..", "") for part in path.parts):
        return None
    return path.parts


def _members(archive: Path) -> list[tuple[tuple[str, ...], bytes]]:
    """Regular files of an archive as (path parts, bytes); links, devices and unsafe paths left out."""
    out: list[tuple[tuple[str, ...], bytes]] = []
    if archive.name.endswith((".whl", ".zip")):
        with zipfile.ZipFile(archive) as zf:
            for info in zf.infolist():
                parts = _safe_parts(info.filename)
                if parts and not info.is_dir():
                    out.append((parts, zf.read(info)))
        return out
    with tarfile.open(archive) as tf:
        for info in tf.getmembers():
            parts = _safe_parts(info.name)
            if parts and info.isfile():
                handle = tf.extractfile(info)
                if handle is not None:
                    out.append((parts, handle.read()))
    return out


def sdist_top(archive: Path) -> str | None:
    """The single top folder of an sdist (`name-version/`), which the project root is under."""
    if archive.name.endswith(".whl"):
        return None
    heads = {parts[0] for parts, _ in _members(archive) if len(parts) > 1}
    return heads.pop() if len(heads) == 1 else None


def unpack(archive: Path, target: Path, strip_top: bool) -> None:
    members = _members(archive)
    heads = {parts[0] for parts, _ in members if len(parts) > 1}
    strip = strip_top and len(heads) == 1 and all(len(parts) > 1 for parts, _ in members)
    if target.exists():
        shutil.rmtree(target)
    for parts, data in members:
        rel = parts[1:] if strip else parts
        dest = target.joinpath(*rel)
        dest.parent.mkdir(parents=True, exist_ok=True)
        dest.write_bytes(data)


def stubs_dir(work: Path, lib: Library) -> Path:
    assert lib.stubs is not None
    return work / "library" / f"{lib.stubs.name}-{lib.stubs.version}" / f"{lib.package}-stubs"


def library_source(work: Path, lib: Library, which: str = "old") -> Path:
    dist = lib.old if which == "old" else lib.new
    return work / "library" / f"{lib.name}-{dist.version}" / lib.package


def cmd_unpack(corpus: Corpus, work: Path, only: str | None = None) -> None:
    for lib in corpus.libraries:
        if only and lib.name != only:
            continue
        for dist in (lib.old, lib.new):
            unpack(work / "dist" / "library" / dist.filename, work / "library" / f"{lib.name}-{dist.version}", False)
        if lib.stubs is not None:
            unpack(work / "dist" / "library" / lib.stubs.filename, stubs_dir(work, lib).parent, False)
        for dist in corpus.of(lib.name):
            unpack(work / "dist" / lib.name / dist.filename, work / "projects" / lib.name / dist.name, True)
        print(f"{lib.name}: {len(corpus.of(lib.name))} projects unpacked under {work / 'projects' / lib.name}")


# ------------------------------------------------------------------ scan


def results_dir(work: Path, archives: bool = False) -> Path:
    return work / ("results-archives" if archives else "results")


def results_path(work: Path, library: str, mode: str, archives: bool = False) -> Path:
    return results_dir(work, archives) / f"{library}-{mode}.json"


def archive_stem(filename: str) -> str:
    for suffix in (".whl", ".tar.gz", ".zip"):
        if filename.endswith(suffix):
            return filename[: -len(suffix)]
    return filename


def _rename_projects(report: str, names: dict[str, str]) -> str:
    """An archive's project is named after the archive; the verdicts use the corpus name."""
    data = json.loads(report)
    for finding in data.get("findings", []):
        finding["project"] = names.get(finding["project"], finding["project"])
    return json.dumps(data)


def tool_env(tool_src: Path | None) -> dict[str, str]:
    """The environment for the tool: `--tool-src` puts a snapshot of src/ first on the path."""
    env = dict(os.environ)
    if tool_src is not None:
        env["PYTHONPATH"] = str(tool_src.resolve())
    return env


def cmd_scan(corpus: Corpus, work: Path, jobs: int, archives: bool, only: str | None, tool_src: Path | None) -> None:
    out_dir = results_dir(work, archives)
    out_dir.mkdir(parents=True, exist_ok=True)
    env = tool_env(tool_src)
    timings: dict[str, float] = {}
    timing_file = out_dir / "timings.json"
    if timing_file.exists():
        timings = json.loads(timing_file.read_text())
    for lib in corpus.libraries:
        if only and lib.name != only:
            continue
        root = work / "dist" / lib.name if archives else work / "projects" / lib.name
        for mode in MODES:
            if mode == "stubs" and lib.stubs is None:
                continue
            out = out_dir / f"{lib.name}-{mode}.sqlite"
            command = [*IMPACTSCOPE, "scan", str(lib.changes), str(root), "--out", str(out),
                       "--jobs", str(jobs), "--fresh", "--quiet"]
            if mode in ("source", "stubs"):
                command += ["--library-source", str(library_source(work, lib))]
            if mode == "stubs":
                command += ["--library-stubs", str(stubs_dir(work, lib))]
            started = time.perf_counter()
            done = subprocess.run(command, capture_output=True, text=True, env=env)
            seconds = time.perf_counter() - started
            if done.returncode != 0:
                raise SystemExit(f"scan of {lib.name} ({mode}) failed ({done.returncode}): {done.stderr.strip()[-2000:]}")
            report = subprocess.run([*IMPACTSCOPE, "report", str(out), "--format", "json"],
                                    capture_output=True, text=True, check=True, env=env)
            names = {archive_stem(d.filename): d.name for d in corpus.of(lib.name)}
            results_path(work, lib.name, mode, archives).write_text(_rename_projects(report.stdout, names))
            timings[f"{lib.name}-{mode}"] = round(seconds, 2)
            print(f"scan {lib.name:9} {mode:6} {seconds:7.1f} s  impactscope {' '.join(command[3:])}")
    timing_file.write_text(json.dumps(timings, indent=1))


# ------------------------------------------------------------------ verify


@dataclass(frozen=True)
class Surface:
    """What a package's source defines, read with ast: enough to see a member come and go."""

    names: dict[str, frozenset[str]]  # module -> names it binds at top level (and its __getattr__ answers)
    stars: dict[str, tuple[str, ...]]  # module -> modules it star-imports
    classes: dict[str, tuple[frozenset[str], tuple[str, ...]]]  # simple name -> (members, base simple names)
    functions: dict[str, frozenset[str]]  # simple name -> parameter names, deprecated keyword names too
    # class simple name -> its own __init__'s parameter names (a parameter change on a class is one
    # on the constructor it calls: its own __init__, else the first base's that defines one)
    inits: dict[str, frozenset[str]] = field(default_factory=dict)

    def binds(self, module: str, name: str, seen: frozenset[str] = frozenset()) -> bool:
        if module in seen or module not in self.names:
            return False
        return name in self.names[module] or any(self.binds(m, name, seen | {module}) for m in self.stars[module])


def _absolute(module: str, node: ast.ImportFrom, is_package: bool) -> str:
    if not node.level:
        return node.module or ""
    base = module.split(".")[: len(module.split(".")) - node.level + (1 if is_package else 0)]
    return ".".join(base + ([node.module] if node.module else []))


def read_surface(package: Path) -> Surface:
    names: dict[str, set[str]] = {}
    stars: dict[str, list[str]] = {}
    classes: dict[str, tuple[set[str], list[str]]] = {}
    functions: dict[str, set[str]] = {}
    inits: dict[str, set[str]] = {}
    for path in package.rglob("*.py"):
        rel = path.relative_to(package.parent).with_suffix("")
        if "tests" in rel.parts:
            continue
        is_package = rel.name == "__init__"
        module = ".".join(rel.parts[:-1] if is_package else rel.parts)
        bound, starred = names.setdefault(module, set()), stars.setdefault(module, [])
        try:
            tree = ast.parse(path.read_bytes())
        except SyntaxError:
            continue
        for node in tree.body:
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)):
                bound.add(node.name)
            elif isinstance(node, ast.Assign):
                bound.update(t.id for t in node.targets if isinstance(t, ast.Name))
            elif isinstance(node, ast.Import):
                bound.update((a.asname or a.name).split(".")[0] for a in node.names)
            elif isinstance(node, ast.ImportFrom):
                for alias in node.names:
                    if alias.name == "*":
                        starred.append(_absolute(module, node, is_package))
                    else:
                        bound.add(alias.asname or alias.name)
            if isinstance(node, ast.FunctionDef) and node.name == "__getattr__":
                # PEP 562 module __getattr__: the names it compares against still resolve, except
                # those whose branch always ends in `raise` (scikit-learn 1.2's load_boston raises
                # ImportError with a migration message: the name is gone, only explained).
                raising = {c.value for branch in ast.walk(node) if isinstance(branch, ast.If)
                           and isinstance(branch.body[-1], ast.Raise)
                           for c in ast.walk(branch.test) if isinstance(c, ast.Constant) and isinstance(c.value, str)}
                bound.update(c.value for c in ast.walk(node) if isinstance(c, ast.Constant) and isinstance(c.value, str)
                             and c.value not in raising)
        for node in ast.walk(tree):
            if isinstance(node, ast.ClassDef):
                members, bases = classes.setdefault(node.name, (set(), []))
                bases.extend(b.id if isinstance(b, ast.Name) else b.attr for b in node.bases
                             if isinstance(b, (ast.Name, ast.Attribute)))
                for item in node.body:
                    if isinstance(item, (ast.FunctionDef, ast.AsyncFunctionDef)):
                        members.add(item.name)
                        if item.name == "__init__":
                            a = item.args
                            inits.setdefault(node.name, set()).update(x.arg for x in a.posonlyargs + a.args + a.kwonlyargs)
                    elif isinstance(item, ast.Assign):
                        members.update(t.id for t in item.targets if isinstance(t, ast.Name))
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                a = node.args
                params = functions.setdefault(node.name, set())
                params.update(x.arg for x in a.posonlyargs + a.args + a.kwonlyargs)
                # A keyword still accepted through a renaming decorator (pandas' deprecate_kwarg).
                for deco in node.decorator_list:
                    if isinstance(deco, ast.Call):
                        params.update(k.value.value for k in deco.keywords
                                      if k.arg == "old_arg_name" and isinstance(k.value, ast.Constant))
    return Surface({k: frozenset(v) for k, v in names.items()}, {k: tuple(v) for k, v in stars.items()},
                   {k: (frozenset(m), tuple(b)) for k, (m, b) in classes.items()},
                   {k: frozenset(v) for k, v in functions.items()}, {k: frozenset(v) for k, v in inits.items()})


def _class_has(surface: Surface, cls: str, name: str, seen: frozenset[str] = frozenset()) -> bool:
    if cls in seen or cls not in surface.classes:
        return False
    members, bases = surface.classes[cls]
    return name in members or any(_class_has(surface, b, name, seen | {cls}) for b in bases)


def _init_params(surface: Surface, cls: str, seen: frozenset[str] = frozenset()) -> frozenset[str] | None:
    """The parameters of the first __init__ on the class's bases, depth first (left to right, as the MRO
    of single-inheritance chains and mixins without __init__ resolves it); None when none is found."""
    if cls in seen or cls not in surface.classes:
        return None
    if cls in surface.inits:
        return surface.inits[cls]
    for base in surface.classes[cls][1]:
        found = _init_params(surface, base, seen | {cls})
        if found is not None:
            return found
    return None


def member_present(surface: Surface, change: dict) -> bool:
    parts = change["member"].split(".")
    if change["kind"] in ("parameter-removed", "parameter-renamed", "default-changed"):
        if parts[-1] in surface.classes:  # a class: the parameter of the __init__ its calls reach
            init = _init_params(surface, parts[-1])
            return init is not None and change["parameter"] in init
        return change["parameter"] in surface.functions.get(parts[-1], frozenset())
    dotted = ".".join(parts)
    if dotted in surface.names:
        return True
    parent = ".".join(parts[:-1])
    if parent in surface.names:
        return surface.binds(parent, parts[-1])
    return len(parts) > 2 and _class_has(surface, parts[-2], parts[-1])


def cmd_verify(corpus: Corpus, work: Path, only: str | None = None) -> int:
    """Each change's member is in the old release's source and gone from the new one's."""
    bad = 0
    for lib in corpus.libraries:
        if only and lib.name != only:
            continue
        old = read_surface(library_source(work, lib, "old"))
        new = read_surface(library_source(work, lib, "new"))
        for change in changes_of(lib):
            before, after = member_present(old, change), member_present(new, change)
            ok = before and not after
            bad += not ok
            print(f"{lib.name:9} {change['id']:26} {lib.old.version}: {'yes' if before else 'NO '}  "
                  f"{lib.new.version}: {'yes' if after else 'no '}  {'' if ok else '<- check by hand'}")
    return 1 if bad else 0


# ------------------------------------------------------------------ candidates


def changes_of(lib: Library) -> list[dict]:
    return tomllib.loads(lib.changes.read_text(encoding="utf-8"))["change"]


def candidate_word(change: dict) -> str:
    """The word grep looks for: a parameter's name for parameter changes, else the member's last segment."""
    if change["kind"] in ("parameter-removed", "parameter-renamed", "default-changed"):
        return change["parameter"]
    return change["member"].rsplit(".", 1)[-1]


def sources_of(project: Path):
    """(file, cell, text) for every .py file and every notebook code cell of a project."""
    for path in sorted(project.rglob("*")):
        if not path.is_file():
            continue
        rel = path.relative_to(project).as_posix()
        if path.suffix == ".py":
            yield rel, None, path.read_bytes().decode("utf-8", errors="replace")
        elif path.suffix == ".ipynb":
            try:
                notebook = nbformat.reads(path.read_text(encoding="utf-8", errors="replace"), as_version=4)
            except Exception:  # an unreadable notebook has no cells to grep; the scan reports it
                continue
            for index, cell in enumerate(notebook.cells):
                if cell.cell_type == "code":
                    yield rel, index, cell.source


def cmd_candidates(corpus: Corpus, work: Path, only: str | None = None) -> None:
    out_dir = work / "candidates"
    out_dir.mkdir(parents=True, exist_ok=True)
    for lib in corpus.libraries:
        if only and lib.name != only:
            continue
        changes = changes_of(lib)
        words = {c["id"]: re.compile(rf"\b{re.escape(candidate_word(c))}\b") for c in changes}
        rows = []
        for dist in corpus.of(lib.name):
            for rel, cell, text in sources_of(work / "projects" / lib.name / dist.name):
                for number, line in enumerate(text.splitlines(), 1):
                    for cid, word in words.items():
                        if word.search(line):
                            rows.append((dist.name, rel, "" if cell is None else cell, number, cid, line.strip()[:200]))
        with (out_dir / f"{lib.name}.csv").open("w", newline="", encoding="utf-8") as handle:
            writer = csv.writer(handle)
            writer.writerow(["project", "file", "cell", "line", "change", "text"])
            writer.writerows(rows)
        print(f"{lib.name}: {len(rows)} whole-word candidate lines -> {out_dir / (lib.name + '.csv')}")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("step", choices=("fetch", "unpack", "verify", "scan", "candidates", "score", "all"))
    parser.add_argument("--work", type=Path, required=True, help="folder for downloads and results (not the repository)")
    parser.add_argument("--jobs", type=int, default=1)
    parser.add_argument("--archives", action="store_true", help="scan the downloaded archives in place")
    parser.add_argument("--library", help="only this library")
    parser.add_argument("--tool-src", type=Path, help="scan with this copy of impactscope's src/ (e.g. a `git archive` of a commit)")
    args = parser.parse_args()
    corpus = load_corpus()
    work = args.work.resolve()
    if args.step in ("fetch", "all"):
        cmd_fetch(corpus, work, args.library)
    if args.step in ("unpack", "all"):
        cmd_unpack(corpus, work, args.library)
    if args.step == "verify":
        return cmd_verify(corpus, work, args.library)
    if args.step in ("scan", "all"):
        cmd_scan(corpus, work, args.jobs, args.archives, args.library, args.tool_src)
    if args.step in ("candidates", "all"):
        cmd_candidates(corpus, work, args.library)
    if args.step in ("score", "all"):
        import score

        return score.run(corpus, work, archives=args.archives)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
