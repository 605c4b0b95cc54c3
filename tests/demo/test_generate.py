"""The demo corpus generator: determinism and the ground truth's consistency with what it wrote.

These tests read the generated files back (folders, zip and tar.gz members, notebook cells) and
check the truth against them; none of them needs the resolver.
Outside sources: PEP 440 / PEP 508 (versions, specifiers, markers, via `packaging`), the pip
requirements-file format (`-r`, per-requirement `--hash`, comments), PEP 621 (`[project]`
dependencies), PEP 263 (coding cookies), the Jupyter notebook format (v4 `cells`, v3
`worksheets`/`input`) and IPython's input transformer for magics and shell escapes.
"""

from __future__ import annotations

import configparser
import hashlib
import io
import json
import re
import tarfile
import tokenize
import tomllib
import warnings
import zipfile
from collections import Counter, defaultdict
from pathlib import Path

import pytest
from packaging.requirements import Requirement
from packaging.specifiers import SpecifierSet
from packaging.utils import canonicalize_name

from impactscope.demo import ExpectedSite, GroundTruth, ProjectTruth, generate_corpus, load_truth, truth_path
from impactscope.demo.generate import MIN_PROJECTS, library_sources
from impactscope.demo.snippets import MEMBER_NAMES

SEED = 7
PROJECTS = 240


@pytest.fixture(scope="module")
def corpus(demo_corpus) -> tuple[Path, GroundTruth]:
    """The session's corpus (tests/conftest.py: 240 projects, seed 7), read only."""
    assert (demo_corpus.truth.seed, len(demo_corpus.truth.projects)) == (SEED, PROJECTS)
    return demo_corpus.root, demo_corpus.truth


@pytest.fixture(scope="module")
def contents(corpus: tuple[Path, GroundTruth]) -> dict[str, dict[str, bytes]]:
    root, truth = corpus
    return {name: read_project(root, info) for name, info in truth.projects.items()}


def read_project(root: Path, info: ProjectTruth) -> dict[str, bytes]:
    """Every file of one project, relative path -> bytes, read the way a scanner would see it."""
    location = root / info.entry
    if info.container == "zip":
        with zipfile.ZipFile(location) as archive:
            return {item.filename: archive.read(item) for item in archive.infolist() if not item.is_dir()}
    if info.container == "tar.gz":
        with tarfile.open(location, "r:gz") as archive:
            return {m.name: archive.extractfile(m).read() for m in archive.getmembers() if m.isfile()}  # type: ignore[union-attr]
    if info.container == "file":
        return {location.name: location.read_bytes()}
    return {p.relative_to(location).as_posix(): p.read_bytes() for p in sorted(location.rglob("*")) if p.is_file()}


def decode(data: bytes) -> str:
    encoding, _ = tokenize.detect_encoding(io.BytesIO(data).readline)  # PEP 263
    return data.decode(encoding)


def notebook_cells(data: bytes) -> list[tuple[str, str]]:
    """(cell_type, source) for each entry of the notebook's cell list (v4, or v3's one worksheet)."""
    document = json.loads(data)
    if document["nbformat"] >= 4:
        cells = document["cells"]
    else:
        cells = [cell for sheet in document["worksheets"] for cell in sheet["cells"]]
    out = []
    for cell in cells:
        source = cell.get("source", cell.get("input", ""))
        out.append((cell["cell_type"], source if isinstance(source, str) else "".join(source)))
    return out


def source_lines(files: dict[str, bytes], path: str, cell: int | None) -> list[str]:
    if cell is None:
        return decode(files[path]).splitlines()
    kind, text = notebook_cells(files[path])[cell]
    assert kind == "code", (path, cell, kind)
    return text.splitlines()


def tree_digest(root: Path) -> str:
    digest = hashlib.sha256()
    for path in sorted(root.rglob("*")):
        if path.is_file():
            digest.update(path.relative_to(root).as_posix().encode() + b"\0" + path.read_bytes() + b"\0")
    return digest.hexdigest()


# ---------------------------------------------------------------------------------------------
# Determinism and the truth file.


def test_same_seed_gives_identical_bytes(tmp_path: Path, corpus: tuple[Path, GroundTruth]) -> None:
    root, _ = corpus
    again = tmp_path / "again" / "corpus"
    generate_corpus(again, projects=PROJECTS, seed=SEED)
    assert tree_digest(again) == tree_digest(root)
    assert truth_path(again).read_bytes() == truth_path(root).read_bytes()


def test_another_seed_gives_another_corpus(tmp_path: Path, corpus: tuple[Path, GroundTruth]) -> None:
    root, _ = corpus
    other = tmp_path / "corpus"
    generate_corpus(other, projects=PROJECTS, seed=SEED + 1)
    assert tree_digest(other) != tree_digest(root)


def test_truth_is_written_beside_the_root_and_round_trips(corpus: tuple[Path, GroundTruth]) -> None:
    root, truth = corpus
    assert truth_path(root) == root.parent / "corpus.truth.json"
    assert not any(path.name.endswith(".truth.json") for path in root.iterdir())
    loaded = load_truth(truth_path(root))
    assert loaded.to_json() == truth.to_json()
    assert json.loads(json.dumps(truth.to_json())) == truth.to_json()
    for site in truth.expected:
        item = site.to_json()
        assert {"project", "file", "cell", "line", "change", "confidence", "unknowable"} <= set(item)


def test_refuses_a_non_empty_root_and_too_few_projects(tmp_path: Path) -> None:
    (tmp_path / "busy").mkdir()
    (tmp_path / "busy" / "x.txt").write_text("x")
    with pytest.raises(FileExistsError):
        generate_corpus(tmp_path / "busy")
    with pytest.raises(ValueError):
        generate_corpus(tmp_path / "small", projects=MIN_PROJECTS - 1)


def test_library_copy_has_no_caches() -> None:
    sources = library_sources()
    assert "__init__.py" in sources and "core/table.py" in sources
    assert all(path.endswith(".py") and "__pycache__" not in path for path in sources)


# ---------------------------------------------------------------------------------------------
# The corpus holds what the issue asks for.


def test_root_children_are_the_projects(corpus: tuple[Path, GroundTruth]) -> None:
    root, truth = corpus
    assert sorted(path.name for path in root.iterdir()) == sorted(info.entry for info in truth.projects.values())
    assert len(truth.projects) == PROJECTS
    kinds = Counter(info.container for info in truth.projects.values())
    assert kinds["zip"] >= 10 and kinds["tar.gz"] >= 5 and kinds["file"] >= 5
    assert sum(not info.uses_library for info in truth.projects.values()) >= 30


def test_file_counts_equal_what_is_on_disk(corpus: tuple[Path, GroundTruth], contents: dict[str, dict[str, bytes]]) -> None:
    root, truth = corpus
    for name, info in truth.projects.items():
        location = root / info.entry
        if info.container == "directory":
            on_disk = sum(1 for path in location.rglob("*") if path.is_file())
        elif info.container == "zip":
            with zipfile.ZipFile(location) as archive:
                on_disk = sum(1 for item in archive.infolist() if not item.is_dir())
        elif info.container == "tar.gz":
            with tarfile.open(location, "r:gz") as archive:
                on_disk = sum(1 for member in archive.getmembers() if member.isfile())
        else:
            on_disk = 1
        assert truth.files[name] == on_disk == len(contents[name]), name
    assert truth.total_files == sum(truth.files.values())


def test_special_files_are_present(corpus: tuple[Path, GroundTruth], contents: dict[str, dict[str, bytes]]) -> None:
    _, truth = corpus
    every = [(name, path, data) for name, files in contents.items() for path, data in files.items()]
    paths = [path for _, path, _ in every]
    assert any(path.startswith(".git/") for path in paths)
    assert any(path == "venv/pyvenv.cfg" for path in paths)
    assert any(path.startswith("venv/lib/python3.12/site-packages/heronframe/") for path in paths)
    assert any(path.startswith("__pycache__/") and path.endswith(".pyc") for path in paths)
    assert any(path == "heronframe/__init__.py" for path in paths)  # a vendored copy
    assert any(path.endswith("README.md") for path in paths)
    assert any(path.endswith(".csv") for path in paths)
    latin = [data for _, path, data in every if data.startswith(b"# -*- coding: latin-1 -*-")]
    assert latin and all(b"heronframe" in data and b"\xe9" in data for data in latin)
    broken_json, undecodable = 0, 0
    for _, path, data in every:
        if path.endswith(".ipynb"):
            try:
                json.loads(data)
            except ValueError:
                broken_json += 1
        if path.endswith(".py") and not path.startswith(("venv/", "heronframe/")):
            try:
                decode(data)
            except (UnicodeDecodeError, SyntaxError):
                undecodable += 1
    assert broken_json >= 1 and undecodable >= 1
    py2_only = [name for name, info in truth.projects.items() if info.legacy_python and not any(
        site.project == name for site in truth.expected)]
    assert len(py2_only) >= 3
    notebook_only = [name for name, files in contents.items() if truth.projects[name].container == "directory"
                     and any(p.endswith(".ipynb") for p in files) and not any(p.endswith(".py") for p in files)]
    assert len(notebook_only) >= 5


def test_notebooks_of_both_formats(contents: dict[str, dict[str, bytes]]) -> None:
    versions: Counter[int] = Counter()
    for files in contents.values():
        for path, data in files.items():
            if path.endswith(".ipynb") and not path.endswith("broken.ipynb"):
                versions[json.loads(data)["nbformat"]] += 1
    assert versions[4] >= 20 and versions[3] >= 3


# ---------------------------------------------------------------------------------------------
# The truth agrees with the files.


def _python3_compiles(text: str, name: str) -> bool:
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            compile(text, name, "exec", dont_inherit=True)
    except SyntaxError:
        return False
    return True


def _cell_compiles(text: str) -> bool:
    from IPython.core.inputtransformer2 import TransformerManager

    transformed: str = TransformerManager().transform_cell(text)  # type: ignore[no-untyped-call]
    return _python3_compiles(transformed, "<cell>")


def project_text(files: dict[str, bytes]) -> str:
    """All readable Python source of a project, notebook cells included."""
    parts = []
    for path, data in sorted(files.items()):
        try:
            if path.endswith(".py"):
                parts.append(decode(data))
            elif path.endswith(".ipynb"):
                parts.extend(source for _, source in notebook_cells(data))
        except (ValueError, SyntaxError):
            continue
    return "\n".join(parts)


def _binds(project_text: str, token: str, last: str) -> bool:
    """Whether the project binds `token` to something named `last` (`x = a.last`, `last as x`)."""
    assign = re.compile(rf"^\s*{re.escape(token)}\s*=\s*[\w.]*\b{re.escape(last)}\s*$", re.M)
    alias = re.compile(rf"\b{re.escape(last)} as {re.escape(token)}\b")
    return bool(assign.search(project_text) or alias.search(project_text))


def test_sites_point_at_lines_that_show_the_member(corpus: tuple[Path, GroundTruth], contents: dict[str, dict[str, bytes]]) -> None:
    _, truth = corpus
    compiled: dict[tuple[str, str, int | None], bool] = {}
    for site in truth.expected:
        files = contents[site.project]
        lines = source_lines(files, site.file, site.cell)
        assert 1 <= site.line <= len(lines), site
        code = lines[site.line - 1].split("#")[0]
        last = MEMBER_NAMES[site.change]
        assert re.search(rf"\b{re.escape(site.token)}\b", code), (site, code)
        if site.rule == "override":
            assert re.match(rf"\s*def {last}\(self", code), (site, code)
        elif site.token != last:
            assert _binds(project_text(files), site.token, last), site
        if site.change in ("HF-4", "HF-5", "HF-6"):
            assert re.search(rf"\b{re.escape(site.token)}\($", code.rstrip()) or re.search(rf"\b{re.escape(site.token)}\(", code), site
        key = (site.project, site.file, site.cell)
        if key not in compiled:
            if site.cell is None:
                compiled[key] = _python3_compiles(decode(files[site.file]), site.file)
            else:
                compiled[key] = _cell_compiles(notebook_cells(files[site.file])[site.cell][1])
        assert compiled[key], f"a site in a file or cell that does not parse: {site}"


def test_legacy_sites_are_python2_lines(corpus: tuple[Path, GroundTruth], contents: dict[str, dict[str, bytes]]) -> None:
    _, truth = corpus
    assert truth.legacy
    for site in truth.legacy:
        text = decode(contents[site.project][site.file])
        assert not _python3_compiles(text, site.file)
        assert "print " in text
        assert re.search(rf"\b{MEMBER_NAMES[site.change]}\b", text.splitlines()[site.line - 1]), site
        assert truth.projects[site.project].legacy_python
        assert not any(s.project == site.project and s.file == site.file for s in truth.expected)


def test_every_python3_file_parses_except_the_broken_ones(corpus: tuple[Path, GroundTruth], contents: dict[str, dict[str, bytes]]) -> None:
    _, truth = corpus
    legacy_files = {(site.project, site.file) for site in truth.legacy}
    failures: Counter[str] = Counter()
    for name, files in contents.items():
        for path, data in files.items():
            if not path.endswith(".py"):
                continue
            try:
                text = decode(data)
            except (UnicodeDecodeError, SyntaxError):
                failures["encoding"] += 1
                continue
            if not _python3_compiles(text, path):
                kind = "python2" if (name, path) in legacy_files else "syntax"
                failures[kind] += 1
                if kind == "syntax":
                    assert path == "wip_summary.py", (name, path)
    assert failures["encoding"] >= 1 and failures["python2"] >= 5 and failures["syntax"] >= 1


def test_notebook_cells_parse_unless_meant_not_to(contents: dict[str, dict[str, bytes]]) -> None:
    bad_cells = 0
    for files in contents.values():
        for path, data in files.items():
            if not path.endswith(".ipynb") or path.endswith("broken.ipynb"):
                continue
            for kind, text in notebook_cells(data):
                if kind == "code" and not _cell_compiles(text):
                    bad_cells += 1
                    assert re.fullmatch(r"\w+ = \w+\.read_table\(\"[^\"]+\"", text), text
    assert bad_cells >= 3


def test_truth_is_self_consistent(corpus: tuple[Path, GroundTruth]) -> None:
    _, truth = corpus
    keys = [site.key for site in truth.expected]
    assert len(keys) == len(set(keys)), "one confidence per (project, file, cell, line, change)"
    changes = set(MEMBER_NAMES)
    by_project: dict[str, list[ExpectedSite]] = defaultdict(list)
    for site in truth.expected:
        assert site.change in changes and site.confidence in ("resolved", "inferred", "possible")
        assert not site.unknowable or site.confidence == "possible"
        assert site.project in truth.projects
        by_project[site.project].append(site)
    for name, info in truth.projects.items():
        sites = by_project.get(name, [])
        if not info.uses_library:
            assert not sites and info.exposure is None, name
        has_resolved = any(site.confidence == "resolved" for site in sites)
        assert (info.exposure is not None) == has_resolved, name
        assert info.exposure in (None, "exposed", "shielded", "unconstrained")
        if info.exposure == "unconstrained":
            assert info.constraint is None, name
        elif info.exposure is not None:
            assert info.constraint is not None, name
    assert {site.change for site in truth.expected if site.confidence == "resolved"} == changes
    assert sum(info.uses_library for info in truth.projects.values()) >= 150


REQUIRED_RULES = {
    # rule 1: imports
    "import-site": 10, "import-nonsite": 10, "param-import-nonsite": 5,
    # rule 2: chains
    "chain": 10,
    # rule 3: type flow
    "typeflow-read": 5, "typeflow-ctor": 5, "typeflow-annot-param": 5, "typeflow-annot-str": 5,
    "typeflow-optional": 5, "typeflow-union": 5, "typeflow-annassign": 5, "typeflow-with": 5,
    "typeflow-chain": 5, "typeflow-store-load": 5, "typeflow-alias-call": 5,
    # rule 4: aliases and re-exports
    "alias-import-as": 5, "alias-import-plain": 5, "alias-import-submodule": 5, "alias-from-as": 5,
    "alias-from-import": 5, "alias-assign-class": 5, "alias-assign-func": 5, "alias-assign-ref": 5,
    "alias-importlib": 5, "alias-dunder-import": 5, "alias-dunder-import-sub": 5, "alias-local-import": 5,
    "alias-try-except": 5, "reexport-module": 5, "reexport-relative": 5, "reexport-dotted": 5,
    "reexport-absolute": 3, "reexport-source": 5, "param-ref-no-call": 5, "ref-no-call": 5,
    # rule 5: classes
    "class-base": 5, "override": 5, "super-call": 5, "self-call": 5, "self-overridden": 5, "cls-call": 5,
    "subclass-instance": 5,
    # rule 6: parameters
    "param-keyword": 5, "param-positional": 5, "param-nomatch": 5, "param-star": 5, "param-star-decided": 5,
    "default-nosep": 5, "default-sep-keyword": 5, "default-sep-positional": 5, "default-star": 5,
    "default-star-decided": 5, "multiline-call": 5,
    # rule 7: unknown and known receivers
    "unknown-loop": 5, "unknown-subscript": 5, "unknown-call-result": 5, "unknown-comprehension": 5,
    "unknown-param": 5, "unknown-common": 5, "unknown-param-nomatch": 5, "unknown-star": 5,
    "known-literal": 5, "known-literal-name": 5, "known-module": 5, "known-user-class": 5, "known-project-module": 5,
    # rule 8: never sites, shadowing, scopes
    "never-string-comment": 5, "never-docstring": 5, "never-no-import": 30, "never-lookalike-module": 2,
    "shadow-param": 5, "shadow-comprehension": 5, "class-body-noleak": 5, "del-alias": 5, "none-alias": 5,
    # rule 9: notebooks
    "nb-flow": 10, "nb-line-magic": 5, "nb-shell": 5, "nb-after-shell": 3, "nb-timeit": 5, "nb-cell-magic": 5,
    "nb-bash": 5, "nb-syntax-error": 3, "nb-syntax-error-consequence": 3, "nb-raw": 3, "nb-shell-only": 3,
    # rule 10 and the odd files
    "legacy-py2-project": 3, "legacy-py2-file": 3, "syntax-error-file": 2, "latin1": 2, "undecodable-file": 1,
    "invalid-notebook": 1, "git-dir": 1, "venv": 1, "vendored-copy": 1, "pycache": 1, "fork": 9,
    # cases the library's own source settles (issue 3: the surface model)
    "surface-private-ctor": 20, "surface-private-module": 20, "surface-inherited-typeflow": 20,
    "surface-inherited-ctor": 20, "surface-star-import": 40, "surface-return-chain": 60,
    "surface-override": 20, "surface-super-call": 20, "surface-self-call": 20,
}


def test_each_rule_has_enough_instances(corpus: tuple[Path, GroundTruth]) -> None:
    _, truth = corpus
    short = {rule: (truth.rules.get(rule, 0), need) for rule, need in REQUIRED_RULES.items() if truth.rules.get(rule, 0) < need}
    assert not short, short
    by_rule = Counter(site.rule for site in truth.expected)
    for rule, count in by_rule.items():
        assert truth.rules[rule] >= count
    kinds = {(site.change, site.confidence) for site in truth.expected}
    for change in MEMBER_NAMES:
        assert (change, "resolved") in kinds
    for change in ("HF-1", "HF-4", "HF-5", "HF-7"):
        assert (change, "inferred") in kinds, change
    # A module's function reached through an unknown receiver is at most possible.
    assert ("HF-2", "possible") in kinds and ("HF-2", "inferred") not in kinds
    assert ("HF-8", "possible") in kinds
    for change in ("HF-4", "HF-5", "HF-6"):
        assert any(s.change == change and s.unknowable for s in truth.expected), change


def test_unknown_receivers_follow_the_builtin_name_rule(corpus: tuple[Path, GroundTruth]) -> None:
    _, truth = corpus
    builtin_attributes = {name for kind in (list, dict, str, set, tuple, bytes, int, float, object) for name in dir(kind)}
    for site in truth.expected:
        if site.rule.startswith("unknown-") and not site.unknowable:
            common = MEMBER_NAMES[site.change] in builtin_attributes
            assert site.confidence == ("possible" if common else "inferred"), site


# ---------------------------------------------------------------------------------------------
# Forks and exposure.


def test_forks_are_near_copies(corpus: tuple[Path, GroundTruth], contents: dict[str, dict[str, bytes]]) -> None:
    _, truth = corpus
    families: dict[str, list[str]] = defaultdict(list)
    for name, info in truth.projects.items():
        if info.fork_family:
            families[info.fork_family].append(name)
    assert len(families) >= 3
    for family, members in families.items():
        assert 2 <= len(members) <= 4 and family == min(members)
        for a in members:
            for b in members:
                py_a = {p: d for p, d in contents[a].items() if p.endswith(".py")}
                py_b = {p: d for p, d in contents[b].items() if p.endswith(".py")}
                same = sum(1 for p in py_a if py_b.get(p) == py_a[p])
                assert same / len(set(py_a) | set(py_b)) >= 0.9, (a, b)
    assert any(family != min(members, key=len) for family, members in families.items())


def _requirements_file(files: dict[str, bytes], path: str) -> list[str]:
    """PEP 508 lines of a pip requirements file, following `-r` includes."""
    out: list[str] = []
    for raw in files[path].decode().splitlines():
        line = re.sub(r"(^|\s)#.*$", "", raw).strip()
        if not line:
            continue
        if line.startswith(("-r ", "--requirement ")):
            include = (Path(path).parent / line.split(None, 1)[1]).as_posix()
            out += _requirements_file(files, include)
        elif line.startswith("-"):
            continue
        else:
            out.append(re.split(r"\s+--", line)[0])
    return out


def _poetry(value: object) -> str:
    """A hand table of the Poetry forms the corpus uses (Poetry's documented caret/tilde rules)."""
    text = value["version"] if isinstance(value, dict) else str(value)
    table = {"^2.3": ">=2.3,<3.0", "^3.0": ">=3.0,<4.0", ">=2.2,<4": ">=2.2,<4", "~2.4": ">=2.4,<2.5",
             "*": "", "^2.4": ">=2.4,<3.0", "2.4.1": "==2.4.1"}
    return table[text]


def declared(files: dict[str, bytes]) -> list[str] | None:
    """heronframe-relevant requirements from whichever manifest the project has, None for none."""
    if "requirements.txt" in files:
        return _requirements_file(files, "requirements.txt")
    if "pyproject.toml" in files:
        data = tomllib.loads(files["pyproject.toml"].decode())
        if "project" in data:
            return list(data["project"].get("dependencies", []))
        deps = data["tool"]["poetry"]["dependencies"]
        return [f"heronframe{_poetry(deps['heronframe'])}"] if "heronframe" in deps else []
    if "setup.cfg" in files:
        parser = configparser.ConfigParser()
        parser.read_string(files["setup.cfg"].decode())
        return [line.strip() for line in parser["options"]["install_requires"].splitlines() if line.strip()]
    return None


def test_exposure_recomputed_independently(corpus: tuple[Path, GroundTruth], contents: dict[str, dict[str, bytes]]) -> None:
    _, truth = corpus
    environment = {"python_version": "3.12", "python_full_version": "3.12.0", "sys_platform": "linux",
                   "platform_system": "Linux", "os_name": "posix", "implementation_name": "cpython",
                   "platform_python_implementation": "CPython"}
    seen: Counter[str] = Counter()
    for name, info in truth.projects.items():
        requirements = declared(contents[name]) or []
        spec, applicable = SpecifierSet(), False
        for text in requirements:
            requirement = Requirement(text)
            if canonicalize_name(requirement.name) == "heronframe" and (
                requirement.marker is None or requirement.marker.evaluate(environment)
            ):
                spec &= requirement.specifier
                applicable = True
        if not applicable or not str(spec):
            want, constraint = "unconstrained", None
        else:
            want, constraint = ("exposed" if "3.0" in spec else "shielded"), str(spec)
        assert SpecifierSet(info.constraint or "") == SpecifierSet(constraint or ""), name
        if info.exposure is not None:
            assert info.exposure == want, (name, requirements)
            seen[want] += 1
    assert seen["exposed"] >= 10 and seen["shielded"] >= 10 and seen["unconstrained"] >= 10
    assert {info.manifest for info in truth.projects.values()} >= {
        None, "requirements.txt", "pyproject.toml (PEP 621)", "pyproject.toml (Poetry)", "setup.cfg"}


def test_pep440_examples_the_corpus_relies_on() -> None:
    # PEP 440: "~=2.4" means ">=2.4, ==2.*"; "!=3.0" excludes exactly 3.0; "==3.*" is a prefix match.
    assert "3.0" not in SpecifierSet("~=2.4") and "2.9" in SpecifierSet("~=2.4")
    assert "3.0" not in SpecifierSet("!=3.0,>=2.3") and "3.0.1" in SpecifierSet("!=3.0,>=2.3")
    assert "3.0" in SpecifierSet("==3.*") and "3.0" in SpecifierSet(">=3.0.0rc1")
    # PEP 508: a requirement whose marker is false does not apply.
    assert not Requirement('heronframe<3; python_version < "3.8"').marker.evaluate({"python_version": "3.12"})  # type: ignore[union-attr]


# ---------------------------------------------------------------------------------------------
# Filler files for benchmarks.


def test_filler_files_add_plain_modules(tmp_path: Path) -> None:
    root = tmp_path / "corpus"
    plain = generate_corpus(tmp_path / "plain", projects=MIN_PROJECTS, seed=3)
    filled = generate_corpus(root, projects=MIN_PROJECTS, seed=3, filler_files=4)
    assert plain.to_json()["expected"] != [] and len(filled.projects) == MIN_PROJECTS
    for name, info in filled.projects.items():
        files = read_project(root, info)
        support = [path for path in files if path.startswith("support/")]
        if info.container != "file":
            assert len(support) >= 4, name
        for path in support:
            assert b"heronframe" not in files[path] and _python3_compiles(files[path].decode(), path)
    assert filled.total_files > plain.total_files
