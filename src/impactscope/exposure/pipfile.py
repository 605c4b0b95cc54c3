"""Pipfile `[packages]` and `[dev-packages]`, markers given as keys included."""

from __future__ import annotations

from packaging.markers import InvalidMarker
from packaging.specifiers import InvalidSpecifier, SpecifierSet

from impactscope.exposure.reader import Reader
from impactscope.exposure.records import Declared
from impactscope.exposure.toml_tables import combine_markers, entry_version, load_toml, toml_value


# Pipfile tables may carry marker variables as keys, e.g. sys_platform = "== 'win32'".
_MARKER_KEYS = (
    "os_name", "sys_platform", "platform_machine", "platform_python_implementation",
    "platform_release", "platform_system", "platform_version", "python_version",
    "python_full_version", "implementation_name", "implementation_version",
)


def read_pipfile(path: str, reader: Reader) -> None:
    data = load_toml(path, reader)
    if data is None:
        return
    for table_name in ("packages", "dev-packages"):
        table = data.get(table_name)
        if not isinstance(table, dict):
            continue
        source = f"{path} [{table_name}]"
        for name, value in table.items():
            if not reader.is_target(name):
                continue
            text = f"{name} = {toml_value(value)}"
            body: dict = {"version": value} if isinstance(value, str) else value if isinstance(value, dict) else {}
            if not body:
                reader.problem(f"{source}: {name} has an unreadable value {value!r}")
                continue
            try:
                marker = combine_markers(
                    body.get("markers") if isinstance(body.get("markers"), str) else None,
                    *(f"{key} {body[key]}" for key in _MARKER_KEYS if isinstance(body.get(key), str)),
                )
            except InvalidMarker as exc:
                reader.problem(f"{source}: cannot read the markers of {text}: {exc}")
                continue
            version = entry_version(name, body, text, source, reader, marker)
            if version is None:
                continue
            version = version.strip()
            if version in ("", "*"):
                reader.declared.append(Declared(source, text, None, marker, False))
                continue
            try:
                specifier = SpecifierSet(version)
            except InvalidSpecifier as exc:
                reader.problem(f"{source}: invalid version specifier in {text}: {exc}")
                continue
            reader.declared.append(Declared(source, text, specifier, marker, False))
