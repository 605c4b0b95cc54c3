"""The layers of docs/architecture.md hold: data flows one way, so no module imports from a
layer above its own (the results store never reaches into scan/, reports never into scan/ or
resolve/). Read with `ast` from the source, so a lazy import inside a function counts too."""

from __future__ import annotations

import ast
from pathlib import Path

import impactscope

PACKAGE = Path(impactscope.__file__).parent

# Lowest first. A unit is a top-level module or subpackage of impactscope; within one layer
# units do not import each other.
LAYERS: tuple[frozenset[str], ...] = (
    frozenset({"errors"}),
    frozenset({"tomlinput"}),
    frozenset({"changes", "findings", "import_names", "estimate", "reasons", "dunder_all"}),
    frozenset({"outcomes", "corpus", "exposure", "forks", "sampling"}),
    frozenset({"surface"}),
    frozenset({"resolve"}),
    frozenset({"store"}),
    frozenset({"scan"}),
    frozenset({"report"}),
    frozenset({"rewrite", "gate"}),
    frozenset({"demo"}),
    frozenset({"cli"}),
)
RANK = {unit: i for i, layer in enumerate(LAYERS) for unit in layer}


def _imports() -> list[tuple[str, str, str]]:
    """(importing unit, imported unit, file) for every import between two units."""
    out = []
    for path in sorted(PACKAGE.rglob("*.py")):
        parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
        module = list(parts[:-1]) if parts[-1] == "__init__" else list(parts)
        package = module if parts[-1] == "__init__" else module[:-1]
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            targets: list[str] = []
            if isinstance(node, ast.ImportFrom):
                if node.level:
                    base = package[: len(package) - node.level + 1]
                    targets.append(".".join(base + ([node.module] if node.module else [])))
                elif node.module:
                    targets.append(node.module)
            elif isinstance(node, ast.Import):
                targets.extend(alias.name for alias in node.names)
            for target in targets:
                names = target.split(".")
                if names[0] != "impactscope" or len(names) < 2 or len(module) < 2:
                    continue  # outside the package, or `from impactscope import __version__`
                if module[1] != names[1]:
                    out.append((module[1], names[1], str(path.relative_to(PACKAGE))))
    return out


def test_every_unit_has_a_layer() -> None:
    units = {p.stem if p.is_file() else p.name for p in PACKAGE.iterdir()
             if (p.suffix == ".py" and p.stem != "__init__") or (p.is_dir() and (p / "__init__.py").exists())}
    assert units - set(RANK) == set(), "add new modules to LAYERS (and docs/architecture.md)"


def test_no_import_reaches_up_a_layer() -> None:
    found = _imports()
    assert found, "the import reading found nothing: it is broken"
    upward = sorted({(a, b, f) for a, b, f in found if RANK[b] >= RANK[a]})
    assert upward == []
