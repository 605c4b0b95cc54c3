"""Generate the demo corpus: fictional downstream projects of the fictional library heronframe.

`generate_corpus(out_dir, projects=240, seed=0)` writes one corpus root whose immediate children
are projects (folders, `.zip` and `.tar.gz` archives, loose `.py` scripts) and returns the
`GroundTruth`: every finding the resolver should report, keyed the way the acceptance test
compares them, plus per-project facts (uses the library, exposure to the release, declared
constraint, fork family, legacy Python) and how many files each project holds. The truth is also
written next to the root, to `<out_dir>.truth.json`, never inside it.

Everything is drawn from one `random.Random(seed)`, iterated in a fixed order, and archives get
fixed timestamps, so a seed fixes every byte.
"""

from __future__ import annotations

import gzip
import io
import json
import random
import tarfile
import zipfile
import zlib
from collections import Counter
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from importlib import resources
from importlib.resources.abc import Traversable
from pathlib import Path
from types import MappingProxyType
from typing import Any

from packaging.requirements import Requirement
from packaging.specifiers import SpecifierSet
from packaging.utils import canonicalize_name
from packaging.version import Version

from impactscope.errors import InputError

from . import snippets as sn
from .snippets import Ctx, Expect, Namer, NotebookBuilder, SourceBuilder

__all__ = [
    "ExpectedSite",
    "GroundTruth",
    "LegacySite",
    "ProjectTruth",
    "exposure_of",
    "generate_corpus",
    "library_sources",
    "load_truth",
    "poetry_to_pep440",
    "truth_path",
]

LIBRARY = "heronframe"
RELEASE = "3.0"
PYTHON = "3.12"
#: PEP 508 marker environment for "CPython 3.12 on Linux": the interpreter exposure is judged for.
MARKER_ENVIRONMENT: Mapping[str, str] = MappingProxyType(
    {
        "implementation_name": "cpython",
        "implementation_version": "3.12.0",
        "os_name": "posix",
        "platform_machine": "x86_64",
        "platform_python_implementation": "CPython",
        "platform_release": "",
        "platform_system": "Linux",
        "platform_version": "",
        "python_full_version": "3.12.0",
        "python_version": "3.12",
        "sys_platform": "linux",
        "extra": "",
    }
)
MIN_PROJECTS = 60
_EPOCH = (2024, 3, 1, 12, 0, 0)
_EPOCH_SECONDS = 1709294400  # 2024-03-01T12:00:00Z

_NATURE = (
    "tidepool", "marsh", "estuary", "kelp", "dune", "lagoon", "fjord", "reef", "heath", "delta",
    "brackish", "saltmarsh", "mudflat", "shoal", "cove", "inlet", "tundra", "moor", "fen", "bog",
    "sandbar", "wetland", "riverbend", "marram", "eelgrass", "osprey", "plover", "curlew", "egret",
    "shingle", "seagrass", "oyster",
)
_DOMAIN = (
    "analytics", "survey", "census", "dashboard", "pipeline", "toolkit", "reports", "monitor",
    "atlas", "notebooks", "etl", "metrics", "ledger", "forecast", "sampler", "explorer", "tracker",
    "insights", "audit", "counts",
)
_FORK_SUFFIXES = ("fork", "ng", "community", "mirror", "plus", "lts")
_LIB_MODULES = ("main", "analysis", "pipeline", "report", "etl", "summary", "ingest", "qc")


# ---------------------------------------------------------------------------------------------
# The ground truth.


@dataclass(frozen=True, order=True)
class ExpectedSite:
    """A finding the resolver must report: keyed by (project, file, cell, line, change)."""

    project: str
    file: str
    cell: int | None
    line: int
    change: str
    confidence: str
    unknowable: bool = False
    rule: str = ""
    token: str = ""

    @property
    def key(self) -> tuple[str, str, int | None, int, str]:
        return (self.project, self.file, self.cell, self.line, self.change)

    def to_json(self) -> dict[str, object]:
        return {
            "project": self.project, "file": self.file, "cell": self.cell, "line": self.line,
            "change": self.change, "confidence": self.confidence, "unknowable": self.unknowable,
            "rule": self.rule, "token": self.token,
        }


@dataclass(frozen=True, order=True)
class ExpectedRewrite:
    """A line `impactscope rewrite` must change, and its text after the rewrite (with the demo
    change list plus the old defaults `inplace = false` for HF-4 and `sep = ","` for HF-6). A
    text holding newlines is one line that becomes several. Every other line stays as it is."""

    project: str
    file: str
    cell: int | None
    line: int
    text: str

    def to_json(self) -> dict[str, object]:
        return {"project": self.project, "file": self.file, "cell": self.cell, "line": self.line, "text": self.text}


@dataclass(frozen=True, order=True)
class LegacySite:
    """A textual use in a Python 2 file (unparsed, so not in `expected`)."""

    project: str
    file: str
    line: int
    change: str
    token: str = ""

    def to_json(self) -> dict[str, object]:
        return {"project": self.project, "file": self.file, "line": self.line, "change": self.change, "token": self.token}


@dataclass(frozen=True)
class ProjectTruth:
    uses_library: bool
    exposure: str | None  # exposed | shielded | unconstrained; None without a resolved finding
    constraint: str | None  # the applicable PEP 440 specifier set, None when unconstrained
    fork_family: str | None
    legacy_python: bool  # the project holds at least one Python 2 file
    container: str = "directory"  # directory | zip | tar.gz | file
    entry: str = ""  # its name under the corpus root
    manifest: str | None = None  # requirements.txt | pyproject.toml (PEP 621) | pyproject.toml (Poetry) | setup.cfg

    def to_json(self) -> dict[str, object]:
        return {
            "uses_library": self.uses_library, "exposure": self.exposure, "constraint": self.constraint,
            "fork_family": self.fork_family, "legacy_python": self.legacy_python,
            "container": self.container, "entry": self.entry, "manifest": self.manifest,
        }


@dataclass(frozen=True)
class GroundTruth:
    """What a correct scan of the generated corpus reports."""

    seed: int
    library: str
    release: str
    python: str
    expected: tuple[ExpectedSite, ...]
    legacy: tuple[LegacySite, ...]
    projects: Mapping[str, ProjectTruth]
    files: Mapping[str, int]
    rules: Mapping[str, int] = field(default_factory=lambda: MappingProxyType({}))
    rewrites: tuple[ExpectedRewrite, ...] = ()

    def sites(self, confidence: str) -> frozenset[tuple[str, str, int | None, int, str]]:
        return frozenset(site.key for site in self.expected if site.confidence == confidence)

    @property
    def total_files(self) -> int:
        return sum(self.files.values())

    def to_json(self) -> dict[str, object]:
        return {
            "seed": self.seed,
            "library": self.library,
            "release": self.release,
            "python": self.python,
            "expected": [site.to_json() for site in self.expected],
            "legacy": [site.to_json() for site in self.legacy],
            "projects": {name: self.projects[name].to_json() for name in sorted(self.projects)},
            "files": {name: self.files[name] for name in sorted(self.files)},
            "rules": {name: self.rules[name] for name in sorted(self.rules)},
            "rewrites": [item.to_json() for item in self.rewrites],
        }

    def dumps(self) -> str:
        return json.dumps(self.to_json(), indent=1, sort_keys=True) + "\n"

    @classmethod
    def from_json(cls, data: Mapping[str, Any]) -> GroundTruth:
        """The inverse of `to_json` (extra keys are not accepted)."""
        return cls(
            seed=int(data["seed"]),
            library=str(data["library"]),
            release=str(data["release"]),
            python=str(data["python"]),
            expected=tuple(ExpectedSite(**item) for item in data["expected"]),
            legacy=tuple(LegacySite(**item) for item in data["legacy"]),
            projects=MappingProxyType({name: ProjectTruth(**value) for name, value in data["projects"].items()}),
            files=MappingProxyType({str(name): int(count) for name, count in data["files"].items()}),
            rules=MappingProxyType({str(name): int(count) for name, count in data.get("rules", {}).items()}),
            rewrites=tuple(ExpectedRewrite(**item) for item in data.get("rewrites", [])),
        )


def truth_path(out_dir: Path) -> Path:
    """Where `generate_corpus(out_dir)` writes the truth: beside the root, not inside it."""
    out_dir = Path(out_dir)
    return out_dir.parent / (out_dir.name + ".truth.json")


def load_truth(path: Path) -> GroundTruth:
    return GroundTruth.from_json(json.loads(Path(path).read_text(encoding="utf-8")))


# ---------------------------------------------------------------------------------------------
# Manifests and exposure (PEP 440 specifiers, PEP 508 requirements and markers, via packaging).


def poetry_to_pep440(constraint: str) -> str:
    """Poetry's version constraint syntax as a PEP 440 specifier set (caret, tilde, exact, `*`)."""
    out: list[str] = []
    for part in (piece.strip() for piece in constraint.split(",")):
        if part in ("", "*"):
            continue
        if part.startswith("^"):
            release = Version(part[1:]).release
            index = next((i for i, number in enumerate(release) if number), len(release) - 1)
            upper = [*release[:index], release[index] + 1] + [0] * (len(release) - index - 1)
            out += [f">={part[1:]}", "<" + ".".join(map(str, upper))]
        elif part.startswith("~") and not part.startswith("~="):
            release = Version(part[1:]).release
            upper = [release[0], release[1] + 1] if len(release) >= 2 else [release[0] + 1]
            out += [f">={part[1:]}", "<" + ".".join(map(str, upper))]
        elif part[0].isdigit():
            out.append(f"=={part}")
        else:
            out.append(part)
    return ",".join(out)


def exposure_of(
    requirements: Iterable[str], *, release: str = RELEASE, environment: Mapping[str, str] = MARKER_ENVIRONMENT
) -> tuple[str, str | None]:
    """(exposed | shielded | unconstrained, specifier) for heronframe among PEP 508 `requirements`.

    Requirements whose markers are false in `environment` do not apply. The specifiers of the
    ones that do are intersected; with none (or no requirement at all) the project is
    unconstrained, else exposed when the set admits `release` and shielded when it excludes it.
    """
    combined = SpecifierSet()
    applicable = 0
    for text in requirements:
        requirement = Requirement(text)
        if canonicalize_name(requirement.name) != LIBRARY:
            continue
        if requirement.marker is not None and not requirement.marker.evaluate(dict(environment)):
            continue
        applicable += 1
        combined &= requirement.specifier
    if not applicable or not str(combined):
        return "unconstrained", None
    admitted = combined.contains(release, prereleases=True)
    return ("exposed" if admitted else "shielded"), str(combined)


@dataclass(frozen=True)
class Manifest:
    kind: str | None
    files: tuple[tuple[str, str], ...]
    requirements: tuple[str, ...]  # PEP 508, as packaging reads them (Poetry translated)


_REQUIREMENT_LINES: tuple[tuple[str, ...], ...] = (
    ("heronframe==2.4.1",),
    ("heronframe>=2.2,<3",),
    ("heronframe>=2.0",),
    ("heronframe~=2.4",),
    ("heronframe",),
    ('HeronFrame[plot]>=2.4,<4 ; python_version >= "3.9"',),
    ('heronframe>=2.0,<3; python_version < "3.10"', 'heronframe>=3.0; python_version >= "3.10"'),
    ('heronframe<3; python_version < "3.8"',),
    ("heronframe==3.*",),
    ("heronframe >= 2.4, < 3.1",),
    ("heronframe>=3.0.0rc1",),
    ("heronframe<=2.9.9",),
    ("heronframe!=3.0,>=2.3",),
    ("heronframe==2.*",),
)
_OTHER_REQUIREMENTS = ("numpy>=1.24", "requests==2.31.0", "rich>=13", "python-dateutil~=2.8", "pyyaml")
_PEP621_LINES = (
    "heronframe>=2.1,<4", "heronframe~=2.4.0", "heronframe[plot]>=2.4; python_version >= '3.9'",
    "heronframe", "heronframe>=2.4,<3.0",
)
_POETRY_VALUES = ('"^2.3"', '"^3.0"', '">=2.2,<4"', '"~2.4"', '"*"', '{version = "^2.4", extras = ["plot"]}', '"2.4.1"')
_SETUP_CFG_LINES = ("heronframe>=2.0,<3.0", "heronframe>=2.4", 'heronframe; python_version >= "3.9"')


def _requirements_txt(rng: random.Random) -> Manifest:
    heron = list(_REQUIREMENT_LINES[rng.randrange(len(_REQUIREMENT_LINES))])
    others = rng.sample(_OTHER_REQUIREMENTS, rng.randint(0, 3))
    written: list[str] = []
    for line in heron:
        if line == "heronframe==2.4.1" and rng.random() < 0.5:
            digest = "".join(f"{rng.getrandbits(8):02x}" for _ in range(32))
            written.append(f"{line} --hash=sha256:{digest}")
        elif rng.random() < 0.3:
            written.append(f"{line}  # keep in step with the field laptops")
        else:
            written.append(line)
    body = ["# runtime dependencies", *others, *written]
    if rng.random() < 0.3:
        body.insert(1, "--extra-index-url https://packages.example.org/simple")
    if rng.random() < 0.2:
        body.append("-e .")
    if rng.random() < 0.25:
        base = "\n".join(body) + "\n"
        top = "-r requirements/base.txt\npytest>=7  # tests\n"
        return Manifest("requirements.txt", (("requirements.txt", top), ("requirements/base.txt", base)),
                        (*others, *heron, "pytest>=7"))
    return Manifest("requirements.txt", (("requirements.txt", "\n".join(body) + "\n"),), (*others, *heron))


def _pep621(rng: random.Random, name: str) -> Manifest:
    heron = _PEP621_LINES[rng.randrange(len(_PEP621_LINES))]
    others = rng.sample(_OTHER_REQUIREMENTS, rng.randint(0, 2))
    deps = "".join(f"    {json.dumps(dep)},\n" for dep in (heron, *others))
    text = (
        '[build-system]\nrequires = ["setuptools>=68"]\nbuild-backend = "setuptools.build_meta"\n\n'
        f'[project]\nname = "{name}"\nversion = "0.{rng.randint(1, 9)}.0"\nrequires-python = ">=3.9"\n'
        f"dependencies = [\n{deps}]\n"
    )
    return Manifest("pyproject.toml (PEP 621)", (("pyproject.toml", text),), (heron, *others))


def _poetry(rng: random.Random, name: str) -> Manifest:
    value = _POETRY_VALUES[rng.randrange(len(_POETRY_VALUES))]
    constraint = value.split('"')[1]
    extras = "[plot]" if "extras" in value else ""
    text = (
        f'[tool.poetry]\nname = "{name}"\nversion = "0.1.0"\ndescription = "Field data tools"\n'
        'authors = ["Field Team <team@example.org>"]\n\n'
        f'[tool.poetry.dependencies]\npython = "^3.9"\nheronframe = {value}\n\n'
        '[build-system]\nrequires = ["poetry-core"]\nbuild-backend = "poetry.core.masonry.api"\n'
    )
    return Manifest("pyproject.toml (Poetry)", (("pyproject.toml", text),), (f"heronframe{extras}{poetry_to_pep440(constraint)}",))


def _setup_cfg(rng: random.Random, name: str) -> Manifest:
    heron = _SETUP_CFG_LINES[rng.randrange(len(_SETUP_CFG_LINES))]
    others = rng.sample(_OTHER_REQUIREMENTS, rng.randint(0, 2))
    lines = "".join(f"    {dep}\n" for dep in (heron, *others))
    text = f"[metadata]\nname = {name}\nversion = 0.2.0\n\n[options]\npackages = find:\ninstall_requires =\n{lines}"
    return Manifest("setup.cfg", (("setup.cfg", text),), (heron, *others))


def _manifest(rng: random.Random, name: str, *, none_weight: float = 0.15) -> Manifest:
    roll = rng.random()
    if roll < none_weight:
        return Manifest(None, (), ())
    roll = rng.random()
    if roll < 0.5:
        return _requirements_txt(rng)
    if roll < 0.7:
        return _pep621(rng, name)
    if roll < 0.85:
        return _poetry(rng, name)
    return _setup_cfg(rng, name)


def _unrelated_manifest(rng: random.Random) -> Manifest:
    others = rng.sample(_OTHER_REQUIREMENTS, rng.randint(1, 3))
    return Manifest("requirements.txt", (("requirements.txt", "\n".join(others) + "\n"),), tuple(others))


# ---------------------------------------------------------------------------------------------
# One project being built in memory.


@dataclass
class _Project:
    name: str
    container: str = "directory"
    files: dict[str, bytes] = field(default_factory=dict)
    sites: list[tuple[str, int | None, int, Expect]] = field(default_factory=list)
    legacy: list[tuple[str, int, Expect]] = field(default_factory=list)
    notes: Counter[str] = field(default_factory=Counter)
    uses_library: bool = False
    legacy_python: bool = False
    manifest: Manifest = Manifest(None, (), ())
    family: str | None = None
    rewrites: list[tuple[str, int | None, int, str]] = field(default_factory=list)  # path, cell, line, text after

    def _put(self, path: str, data: bytes) -> None:
        if path in self.files:
            raise ValueError(f"{self.name}: {path} written twice")
        self.files[path] = data

    def add_module(self, path: str, b: SourceBuilder, *, encoding: str = "utf-8") -> None:
        self._put(path, b.text().encode(encoding))
        self.sites.extend((path, None, line, expect) for line, expect in b.sites)
        self.legacy.extend((path, line, expect) for line, expect in b.legacy_sites)
        self.rewrites.extend((path, None, line, text) for line, text in b.rewrites)

    def add_notebook(self, path: str, nb: NotebookBuilder, data: bytes, *, rewritable: bool = True) -> None:
        """`rewritable`: the rewrite edits this notebook (nbformat 4; a v3 one goes to review)."""
        self._put(path, data)
        for index, (kind, b) in enumerate(nb.cells):
            if kind == "code":
                self.sites.extend((path, index, line, expect) for line, expect in b.sites)
                if rewritable:
                    self.rewrites.extend((path, index, line, text) for line, text in b.rewrites)

    def add_bytes(self, path: str, data: bytes) -> None:
        self._put(path, data)

    def add_text(self, path: str, text: str) -> None:
        self._put(path, text.encode("utf-8"))

    def set_manifest(self, manifest: Manifest) -> None:
        self.manifest = manifest
        for path, text in manifest.files:
            self.add_text(path, text)

    def copy_as(self, name: str) -> _Project:
        return _Project(
            name, self.container, dict(self.files), list(self.sites), list(self.legacy), Counter(self.notes),
            self.uses_library, self.legacy_python, self.manifest, self.family, list(self.rewrites),
        )


class _Deck:
    """The body templates, shuffled and dealt in turn so each is used about equally often."""

    def __init__(self, rng: random.Random, names: Iterable[str] = sn.LIBRARY_SNIPPETS) -> None:
        self._rng = rng
        self._names = sorted(names)
        self._cards: list[str] = []

    @property
    def rng(self) -> random.Random:
        return self._rng

    def draw(self) -> str:
        if not self._cards:
            self._cards = list(self._names)
            self._rng.shuffle(self._cards)
        return self._cards.pop()


def library_sources() -> dict[str, bytes]:
    """The demo heronframe 2.4 package source, relative path -> bytes (no caches)."""
    out: dict[str, bytes] = {}

    def walk(node: Traversable, prefix: str) -> None:
        for child in sorted(node.iterdir(), key=lambda item: item.name):
            if child.is_dir():
                if child.name != "__pycache__":
                    walk(child, f"{prefix}{child.name}/")
            elif child.name.endswith(".py"):
                out[f"{prefix}{child.name}"] = child.read_bytes()

    walk(resources.files("impactscope.demo") / "heronframe", "")
    return out


def _title(name: str) -> str:
    return " ".join(part.capitalize() for part in name.replace("_", "-").removesuffix(".py").split("-"))


def _package_name(name: str) -> str:
    return name.replace("-", "_")


@dataclass
class _Generator:
    rng: random.Random
    filler_files: int
    deck: _Deck
    library: dict[str, bytes]
    surface_deck: _Deck  # its own random source: drawing from it leaves every other draw as it was

    def child(self) -> random.Random:
        return random.Random(self.rng.getrandbits(64))

    def ctx(self, rng: random.Random, project: _Project) -> Ctx:
        return Ctx(rng, Namer(), project.notes)

    # -- pieces ---------------------------------------------------------------------------

    def library_module(self, rng: random.Random, project: _Project, title: str, *, snippets: tuple[int, int] = (2, 5)) -> SourceBuilder:
        b, c = SourceBuilder(), self.ctx(rng, project)
        sn.prologue(b, c, title)
        sn.header(b, c, c.choice(sn.HEADER_KINDS))
        for _ in range(rng.randint(*snippets)):
            sn.write_snippet(b, c, self.deck.draw())
        sn.write_snippet(b, Ctx(self.surface_deck.rng, c.names, c.tally, c.mod), self.surface_deck.draw())
        if rng.random() < 0.25:
            b.gap(2)
            b.line('if __name__ == "__main__":')
            b.line(f"    print({c.mod}.__version__)")
        return b

    def notebook(self, rng: random.Random, project: _Project, path: str, title: str, *, version: int) -> None:
        c = self.ctx(rng, project)
        nb = sn.library_notebook(c, self.deck.draw, version=version, title=title)
        warning = "DeprecationWarning: stack is deprecated, use Table.stack_rows\n"
        project.add_notebook(path, nb, nb.render(version, rng, warning if rng.random() < 0.4 else ""),
                             rewritable=version == 4)

    def plain_notebook(self, rng: random.Random, project: _Project, path: str, title: str, *, version: int) -> None:
        c = self.ctx(rng, project)
        nb = sn.plain_notebook(c, version=version, title=title)
        project.add_notebook(path, nb, nb.render(version, rng))

    def fillers(self, rng: random.Random, project: _Project, count: int, folder: str = "support") -> None:
        used: set[str] = set()
        for index in range(count):
            word = sn.FILLER_WORDS[rng.randrange(len(sn.FILLER_WORDS))]
            stem = word if word not in used else f"{word}_{index}"
            used.add(stem)
            project.add_text(f"{folder}/{stem}.py", sn.filler_module(self.ctx(rng, project)))

    def extras(self, rng: random.Random, project: _Project, title: str) -> None:
        if rng.random() < 0.75:
            project.add_text("README.md", f"# {title}\n\nBuilt on heronframe 2.4: `import heronframe as hf`, then `hf.stack(...)`.\n")
        if rng.random() < 0.35:
            rows = "".join(f"{i},{rng.randint(0, 40) / 4}\n" for i in range(1, rng.randint(3, 8)))
            project.add_text("data/stations.csv" if rng.random() < 0.5 else "data.csv", f"station,depth\n{rows}")

    # -- project kinds --------------------------------------------------------------------

    def library_project(self, name: str, container: str, features: frozenset[str]) -> _Project:
        rng = self.child()
        project = _Project(name, container, uses_library=True)
        title = _title(name)
        layout = rng.choices(["flat", "reexport", "package"], weights=[55, 20, 25])[0]
        modules = list(_LIB_MODULES)
        rng.shuffle(modules)
        if layout == "flat":
            for stem in modules[: rng.choice([1, 1, 2, 2, 3])]:
                project.add_module(f"{stem}.py", self.library_module(rng, project, title))
        elif layout == "reexport":
            c = self.ctx(rng, project)
            helpers = sn.helpers_module(c, title)
            if rng.random() < 0.5:
                sn.write_snippet(helpers, c, self.deck.draw())
            project.add_module("helpers.py", helpers)
            b, c = SourceBuilder(), self.ctx(rng, project)
            sn.prologue(b, c, title)
            sn.reexport_header(b, c, "helpers", "reexport-module")
            if rng.random() < 0.5:
                sn.project_module_call(b, c, "helpers")
            for _ in range(rng.randint(1, 3)):
                sn.write_snippet(b, c, self.deck.draw())
            project.add_module("main.py", b)
            if rng.random() < 0.4:
                project.add_module(f"{modules[0]}.py" if modules[0] != "main" else "extra.py", self.library_module(rng, project, title))
        else:
            package = _package_name(name)
            project.add_text(f"{package}/__init__.py", f'"""{title}."""\n\n__version__ = "0.{rng.randint(1, 9)}.{rng.randint(0, 9)}"\n')
            c = self.ctx(rng, project)
            project.add_module(f"{package}/helpers.py", sn.helpers_module(c, title))
            b, c = SourceBuilder(), self.ctx(rng, project)
            sn.prologue(b, c, title)
            sn.reexport_header(b, c, ".helpers", "reexport-relative")
            for _ in range(rng.randint(1, 3)):
                sn.write_snippet(b, c, self.deck.draw())
            project.add_module(f"{package}/analysis.py", b)
            if rng.random() < 0.5:
                b, c = SourceBuilder(), self.ctx(rng, project)
                sn.reexport_header(b, c, f"{package}.helpers", "reexport-absolute")
                sn.write_snippet(b, c, self.deck.draw())
                project.add_module(f"{package}/cli.py", b)
            project.add_module("run.py", sn.dotted_reexport_module(self.ctx(rng, project), package))
        if "notebook" in features or (container != "directory" and rng.random() < 0.2):
            self.notebook(rng, project, f"notebooks/{rng.choice(sn.TABLE_WORDS)}.ipynb", title, version=4)
        for stem in rng.sample(sn.FILLER_WORDS, rng.randint(0, 2)):
            project.add_text(f"{stem}.py", sn.filler_module(self.ctx(rng, project)))
        self.special_files(rng, project, features)
        self.extras(rng, project, title)
        project.set_manifest(_manifest(rng, name))
        self.fillers(rng, project, self.filler_files)
        return project

    def special_files(self, rng: random.Random, project: _Project, features: frozenset[str]) -> None:
        c = self.ctx(rng, project)
        if "py2-file" in features:
            project.add_module("old_report.py", sn.python2_module(c))
            project.legacy_python = True
            project.notes["legacy-py2-file"] += 1
        if "syntax-error" in features:
            project.add_module("wip_summary.py", sn.syntax_error_module(c))
            project.notes["syntax-error-file"] += 1
        if "latin1" in features:
            project.add_module("etiquettes.py", sn.latin1_module(c), encoding="latin-1")
        if "undecodable" in features:
            project.add_bytes("export_old.py", sn.undecodable_bytes())
            project.notes["undecodable-file"] += 1
        if "bad-notebook" in features:
            project.add_bytes("notebooks/broken.ipynb", b'{"cells": [{"cell_type": "code", "source": ["import heronframe as hf\\n", "hf.stack([])"')
            project.notes["invalid-notebook"] += 1
        if "git" in features:
            project.add_text(".git/HEAD", "ref: refs/heads/main\n")
            project.add_text(".git/config", "[core]\n\trepositoryformatversion = 0\n\tbare = false\n")
            project.add_text(".git/description", "Unnamed repository; edit this file to name it.\n")
            project.add_text(".git/refs/heads/main", f"{rng.getrandbits(160):040x}\n")
            project.add_bytes(f".git/objects/{rng.getrandbits(8):02x}/{rng.getrandbits(152):038x}", zlib.compress(b"blob 23\x00import heronframe as hf\n"))
            project.notes["git-dir"] += 1
        if "venv" in features:
            site = "venv/lib/python3.12/site-packages"
            project.add_text("venv/pyvenv.cfg", "home = /usr/bin\ninclude-system-site-packages = false\nversion = 3.12.1\n")
            project.add_text("venv/bin/activate", "# This file must be used with \"source bin/activate\"\nVIRTUAL_ENV=venv\nexport VIRTUAL_ENV\n")
            for path, data in self.library.items():
                project.add_bytes(f"{site}/heronframe/{path}", data)
            project.add_text(f"{site}/heronframe-2.4.0.dist-info/METADATA", "Metadata-Version: 2.1\nName: heronframe\nVersion: 2.4.0\n")
            project.notes["venv"] += 1
        if "vendored" in features:
            for path, data in self.library.items():
                project.add_bytes(f"heronframe/{path}", data)
            project.notes["vendored-copy"] += 1
        if "pycache" in features:
            for path in sorted(p for p in project.files if p.endswith(".py") and "/" not in p):
                stem = path[:-3]
                project.add_bytes(f"__pycache__/{stem}.cpython-312.pyc", b"\xcb\r\r\n" + bytes(12) + rng.randbytes(48))
            project.notes["pycache"] += 1

    def plain_project(self, name: str, container: str) -> _Project:
        rng = self.child()
        project = _Project(name, container)
        title = _title(name)
        c = self.ctx(rng, project)
        project.add_module(rng.choice(["rows.py", "sheets.py", "core.py"]), sn.plain_module(c, title))
        if rng.random() < 0.3:
            util_path, util, user = sn.lookalike_module(c)
            project.add_module(util_path, util)
            project.add_module("use_utils.py", user)
        for stem in rng.sample(sn.FILLER_WORDS, rng.randint(0, 2)):
            project.add_text(f"{stem}.py", sn.filler_module(self.ctx(rng, project)))
        if rng.random() < 0.2:
            self.plain_notebook(rng, project, "scratch.ipynb", title, version=4)
        self.extras(rng, project, title)
        roll = rng.random()
        if roll < 0.3:
            project.set_manifest(_manifest(rng, name, none_weight=0.0))  # declares heronframe, never imports it
        elif roll < 0.7:
            project.set_manifest(_unrelated_manifest(rng))
        self.fillers(rng, project, self.filler_files)
        return project

    def plain_notebooks_project(self, name: str) -> _Project:
        rng = self.child()
        project = _Project(name)
        title = _title(name)
        for index in range(rng.randint(1, 2)):
            self.plain_notebook(rng, project, f"notebook_{index + 1}.ipynb", title, version=4)
        self.extras(rng, project, title)
        self.fillers(rng, project, self.filler_files)
        return project

    def notebooks_project(self, name: str, *, v3: bool) -> _Project:
        rng = self.child()
        project = _Project(name, uses_library=True)
        title = _title(name)
        count = rng.randint(1, 3)
        words = rng.sample(sn.TABLE_WORDS, count)
        for index, word in enumerate(words):
            version = 3 if v3 and index == 0 else 4
            folder = "" if rng.random() < 0.5 else "notebooks/"
            self.notebook(rng, project, f"{folder}{index + 1:02d}_{word}.ipynb", title, version=version)
        self.extras(rng, project, title)
        if rng.random() < 0.5:
            project.set_manifest(_requirements_txt(rng))
        self.fillers(rng, project, self.filler_files)
        return project

    def python2_project(self, name: str) -> _Project:
        rng = self.child()
        project = _Project(name, uses_library=True, legacy_python=True)
        title = _title(name)
        for stem in rng.sample(["report", "nightly", "export", "load"], rng.randint(1, 3)):
            project.add_module(f"{stem}.py", sn.python2_module(self.ctx(rng, project)))
        project.notes["legacy-py2-project"] += 1
        self.extras(rng, project, title)
        if rng.random() < 0.6:
            project.set_manifest(Manifest("requirements.txt", (("requirements.txt", "heronframe==1.9.2\nsix\n"),), ("heronframe==1.9.2", "six")))
        self.fillers(rng, project, self.filler_files)
        return project

    def script_project(self, name: str, *, library: bool) -> _Project:
        rng = self.child()
        project = _Project(name, "file", uses_library=library)
        title = _title(name)
        if library:
            project.add_module(name, self.library_module(rng, project, title, snippets=(2, 4)))
        else:
            project.add_module(name, sn.plain_module(self.ctx(rng, project), title))
        return project

    def fork_family(self, names: Sequence[str]) -> list[_Project]:
        """Copies of one project: every Python file identical but at most one per member."""
        rng = self.child()
        base = _Project(names[0], uses_library=True)
        title = _title(names[0])
        modules = rng.sample(_LIB_MODULES, 2)
        for stem in modules:
            base.add_module(f"{stem}.py", self.library_module(rng, base, title))
        if rng.random() < 0.5:
            self.notebook(rng, base, "notebooks/explore.ipynb", title, version=4)
        for stem in sn.FILLER_WORDS[:9]:
            base.add_text(f"{stem}.py", sn.filler_module(self.ctx(rng, base)))
        self.fillers(rng, base, self.filler_files)
        base.notes["fork"] += 1
        family = min(names)
        members = []
        for index, name in enumerate(names):
            member = base.copy_as(name)
            member.family = family
            if index:
                path = f"{sn.FILLER_WORDS[0]}.py"  # the same file in every fork: pairwise >= 10 of 11 equal
                member.files[path] += f"\n\nFORK_NOTE = {name!r}  # maintained downstream\n".encode()
            member.add_text("README.md", f"# {_title(name)}\n\n{'Fork of ' + names[0] if index else 'Upstream'} field tools.\n")
            member.set_manifest(_manifest(rng, name))
            members.append(member)
        return members


# ---------------------------------------------------------------------------------------------
# Planning, writing, and the truth.


def _plan_counts(projects: int) -> dict[str, int]:
    scale = projects / 240
    counts = {
        "plain-dir": max(2, round(27 * scale)),
        "plain-zip": max(1, round(2 * scale)),
        "plain-tar": 1,
        "plain-file": 1,
        "plain-notebooks": max(1, round(3 * scale)),
        "python2": max(1, round(4 * scale)),
        "notebooks": max(3, round(16 * scale)),
        "script": max(1, round(4 * scale)),
        "zip": max(1, round(10 * scale)),
        "tar": max(1, round(5 * scale)),
    }
    return counts


def _fork_sizes(projects: int) -> list[int]:
    return [2, 3, 4, 2] if projects >= 120 else [2, 3]


def _write_zip(path: Path, files: Mapping[str, bytes]) -> None:
    with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        for name in sorted(files):
            info = zipfile.ZipInfo(name, date_time=_EPOCH)
            info.compress_type = zipfile.ZIP_DEFLATED
            info.external_attr = 0o100644 << 16
            archive.writestr(info, files[name])


def _write_targz(path: Path, files: Mapping[str, bytes]) -> None:
    raw = io.BytesIO()
    with tarfile.open(fileobj=raw, mode="w", format=tarfile.USTAR_FORMAT) as archive:
        for name in sorted(files):
            info = tarfile.TarInfo(name)
            info.size = len(files[name])
            info.mtime = _EPOCH_SECONDS
            info.mode = 0o644
            info.uid = info.gid = 0
            info.uname = info.gname = ""
            archive.addfile(info, io.BytesIO(files[name]))
    path.write_bytes(gzip.compress(raw.getvalue(), compresslevel=9, mtime=0))


def _write_project(root: Path, project: _Project) -> str:
    if project.container == "zip":
        entry = f"{project.name}.zip"
        _write_zip(root / entry, project.files)
    elif project.container == "tar.gz":
        entry = f"{project.name}.tar.gz"
        _write_targz(root / entry, project.files)
    elif project.container == "file":
        entry = project.name
        ((only, data),) = project.files.items()
        if only != project.name:
            raise ValueError(f"a loose script project holds one file named like it: {project.name}")
        (root / entry).write_bytes(data)
    else:
        entry = project.name
        for rel in sorted(project.files):
            target = root / entry / rel
            target.parent.mkdir(parents=True, exist_ok=True)
            target.write_bytes(project.files[rel])
    return entry


def _project_sites(project: _Project) -> list[ExpectedSite]:
    seen: dict[tuple[str, int | None, int, str], ExpectedSite] = {}
    for path, cell, line, expect in project.sites:
        site = ExpectedSite(project.name, path, cell, line, expect.change, expect.confidence,
                            expect.unknowable, expect.rule, expect.word)
        key = (path, cell, line, expect.change)
        if key in seen:
            if seen[key].confidence != site.confidence or seen[key].unknowable != site.unknowable:
                raise RuntimeError(f"template bug: {project.name} {path} cell {cell} line {line} {expect.change} "
                                   f"expected both {seen[key].confidence} and {site.confidence}")
            continue
        seen[key] = site
    return sorted(seen.values())


def generate_corpus(out_dir: Path, *, projects: int = 240, seed: int = 0, filler_files: int = 0) -> GroundTruth:
    """Write the demo corpus root `out_dir` (created; must not hold anything) and its truth beside it."""
    if projects < MIN_PROJECTS:
        raise InputError(f"projects must be at least {MIN_PROJECTS} to hold every case; got {projects}")
    if filler_files < 0:
        raise InputError(f"filler_files must be >= 0; got {filler_files}")
    root = Path(out_dir)
    if root.exists() and any(root.iterdir()):
        raise FileExistsError(f"{root} is not empty; generate into a new folder")
    root.mkdir(parents=True, exist_ok=True)

    rng = random.Random(seed)
    surface_deck = _Deck(random.Random(f"surface-{seed}"), sn.SURFACE_SNIPPETS)
    gen = _Generator(rng, filler_files, _Deck(random.Random(rng.getrandbits(64))), library_sources(), surface_deck)
    counts = _plan_counts(projects)
    forks = _fork_sizes(projects)
    fixed = sum(counts.values()) + sum(forks)
    library_dirs = projects - fixed
    if library_dirs < 12:
        raise InputError(f"projects={projects} leaves too few plain library projects")

    pool = [f"{a}-{b}" for a in _NATURE for b in _DOMAIN]
    rng.shuffle(pool)
    names = iter(pool)
    built: list[_Project] = []

    roles: list[str] = []
    for role, count in counts.items():
        roles += [role] * count
    roles += ["library"] * library_dirs
    rng.shuffle(roles)

    feature_counts = {"git": 3, "venv": 1, "pycache": 3, "vendored": 1, "latin1": 2, "undecodable": 1,
                      "py2-file": 3, "syntax-error": 2, "bad-notebook": 1, "notebook": max(4, library_dirs // 6)}
    library_slots = [i for i, role in enumerate(roles) if role == "library"]
    features: dict[int, set[str]] = {i: set() for i in library_slots}
    for feature in sorted(feature_counts):
        for slot in rng.sample(library_slots, feature_counts[feature]):
            features[slot].add(feature)
    notebook_slots = [i for i, role in enumerate(roles) if role == "notebooks"]
    v3_slots = set(notebook_slots[:3])

    for index, role in enumerate(roles):
        name = next(names)
        if role == "library":
            built.append(gen.library_project(name, "directory", frozenset(features[index])))
        elif role == "zip":
            built.append(gen.library_project(name, "zip", frozenset()))
        elif role == "tar":
            built.append(gen.library_project(name, "tar.gz", frozenset()))
        elif role == "script":
            built.append(gen.script_project(name.replace("-", "_") + ".py", library=True))
        elif role == "notebooks":
            built.append(gen.notebooks_project(name, v3=index in v3_slots))
        elif role == "python2":
            built.append(gen.python2_project(name))
        elif role == "plain-dir":
            built.append(gen.plain_project(name, "directory"))
        elif role == "plain-zip":
            built.append(gen.plain_project(name, "zip"))
        elif role == "plain-tar":
            built.append(gen.plain_project(name, "tar.gz"))
        elif role == "plain-file":
            built.append(gen.script_project(name.replace("-", "_") + ".py", library=False))
        elif role == "plain-notebooks":
            built.append(gen.plain_notebooks_project(name))
        else:  # pragma: no cover - the roles above are exhaustive
            raise AssertionError(role)
    for number, size in enumerate(forks):
        base = next(names)
        suffixes = rng.sample(_FORK_SUFFIXES, size - 1)
        members = [base, *(f"{base}-{suffix}" for suffix in suffixes)]
        if number == 1:  # one fork renamed outright, so the family name is not always the upstream's
            members[-1] = f"aurora-{base.split('-', 1)[1]}-{suffixes[-1]}"
        built.extend(gen.fork_family(members))

    expected: list[ExpectedSite] = []
    legacy: list[LegacySite] = []
    truths: dict[str, ProjectTruth] = {}
    files: dict[str, int] = {}
    rules: Counter[str] = Counter()
    rewrites: list[ExpectedRewrite] = []
    for project in sorted(built, key=lambda item: item.name):
        if project.name in truths:
            raise RuntimeError(f"duplicate project name {project.name}")
        entry = _write_project(root, project)
        sites = _project_sites(project)
        expected.extend(sites)
        for path, line, expect in project.legacy:
            legacy.append(LegacySite(project.name, path, line, expect.change, expect.word))
        basis, constraint = exposure_of(project.manifest.requirements)
        resolved = any(site.confidence == sn.RESOLVED for site in sites)
        truths[project.name] = ProjectTruth(
            uses_library=project.uses_library,
            exposure=basis if resolved else None,
            constraint=constraint,
            fork_family=project.family,
            legacy_python=project.legacy_python,
            container=project.container,
            entry=entry,
            manifest=project.manifest.kind,
        )
        files[project.name] = len(project.files)
        rewrites.extend(ExpectedRewrite(project.name, path, cell, line, text) for path, cell, line, text in project.rewrites)
        rules.update(project.notes)
        rules.update(site.rule for site in sites)
        rules.update(f"legacy:{expect.change}" for _, _, expect in project.legacy)
        if not project.uses_library and sites:
            raise RuntimeError(f"template bug: {project.name} does not use heronframe but has expected findings")

    truth = GroundTruth(
        seed=seed,
        library=LIBRARY,
        release=RELEASE,
        python=PYTHON,
        expected=tuple(sorted(expected, key=_site_order)),
        legacy=tuple(sorted(set(legacy))),
        projects=MappingProxyType(truths),
        files=MappingProxyType(files),
        rules=MappingProxyType(dict(sorted(rules.items()))),
        rewrites=tuple(sorted(rewrites, key=lambda r: (r.project, r.file, -1 if r.cell is None else r.cell, r.line))),
    )
    truth_path(root).write_text(truth.dumps(), encoding="utf-8")
    return truth


def _site_order(site: ExpectedSite) -> tuple[str, str, int, int, str, str]:
    return (site.project, site.file, -1 if site.cell is None else site.cell, site.line, site.change, site.confidence)
