"""pyproject.toml: PEP 621 `[project]`, PEP 735 `[dependency-groups]`, and Poetry's tables (see `poetry`)."""

from __future__ import annotations

from impactscope.exposure.poetry import read_poetry
from impactscope.exposure.reader import Reader
from impactscope.exposure.toml_tables import load_toml


def _requirement_list(value: object, path: str, table: str, reader: Reader) -> None:
    if not isinstance(value, list):
        reader.problem(f"{path} [{table}]: expected a list of requirement strings, got {type(value).__name__}")
        return
    for item in value:
        if isinstance(item, str):
            reader.add_requirement(item.strip(), f"{path} [{table}]")
        elif not isinstance(item, dict):  # PEP 735 {include-group = ...} tables are read via their group
            reader.problem(f"{path} [{table}]: expected a requirement string, got {item!r}")


def read_pyproject(path: str, reader: Reader) -> None:
    data = load_toml(path, reader)
    if data is None:
        return
    project = data.get("project")
    if isinstance(project, dict):
        dynamic = project.get("dynamic", [])
        for key in ("dependencies", "optional-dependencies"):
            if isinstance(dynamic, list) and key in dynamic:
                reader.problem(f"{path} [project]: {key} are dynamic (filled in by the build backend); not read")
        if "dependencies" in project:
            _requirement_list(project["dependencies"], path, "project.dependencies", reader)
        python = project.get("requires-python")
        if isinstance(python, str):
            reader.add_python(python, f"{path} [project.requires-python]")
        optional = project.get("optional-dependencies", {})
        if isinstance(optional, dict):
            for extra, value in optional.items():
                _requirement_list(value, path, f"project.optional-dependencies.{extra}", reader)
    groups = data.get("dependency-groups")
    if isinstance(groups, dict):
        for group, value in groups.items():
            _requirement_list(value, path, f"dependency-groups.{group}", reader)
    poetry = data.get("tool", {}).get("poetry") if isinstance(data.get("tool"), dict) else None
    if isinstance(poetry, dict):
        read_poetry(path, poetry, reader)
