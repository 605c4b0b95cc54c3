"""Core metadata of a built distribution: a wheel's `METADATA`, an sdist's `PKG-INFO`."""

from __future__ import annotations

from impactscope.exposure.reader import Reader


def _header_lines(text: str, field_name: str) -> list[int]:
    """The line numbers at which header `field_name` starts, in the header block (up to the
    first empty line; a line that starts with white space continues the header before it)."""
    wanted = field_name.lower()
    found = []
    for number, line in enumerate(text.splitlines(), start=1):
        if not line.strip():
            break
        if line[0] in " \t":
            continue
        name, colon, _ = line.partition(":")
        if colon and name.strip().lower() == wanted:
            found.append(number)
    return found


def read_core_metadata(path: str, reader: Reader) -> None:
    """`Requires-Dist` and `Requires-Python` of a wheel's METADATA or an sdist's PKG-INFO.

    The core metadata specification defines the format as email headers, as the standard
    library's `email.parser` reads them with the compat32 policy, in UTF-8; packaging's
    `parse_email` reads it so. In an sdist (core metadata 2.2, PEP 643) a field marked `Dynamic`
    may differ in the wheels built from it: its declarations are still read (they are what the
    sdist says) and the problem list says so.
    """
    from packaging.metadata import parse_email  # noqa: PLC0415 - only distributions need it

    data = reader.files[path]
    raw, unparsed = parse_email(data)
    for key in ("requires-dist", "requires-python"):
        if key in unparsed:
            reader.problem(f"{path}: cannot read {key.title()} (not valid UTF-8, or given more than once where once is allowed); not read")
    text = data.decode("utf-8", "replace")
    requirements = list(raw.get("requires_dist") or [])
    lines = _header_lines(text, "Requires-Dist")
    before = len(reader.declared)
    for index, requirement in enumerate(requirements):
        source = f"{path}:{lines[index]}" if len(lines) == len(requirements) else f"{path} [Requires-Dist]"
        reader.add_requirement(requirement.strip(), source)
    python = raw.get("requires_python")
    if isinstance(python, str):
        python_lines = _header_lines(text, "Requires-Python")
        source = f"{path}:{python_lines[0]}" if len(python_lines) == 1 else f"{path} [Requires-Python]"
        reader.add_python(python.strip(), source)
    dynamic = {name.strip().lower() for name in raw.get("dynamic") or []}
    if path.rsplit("/", 1)[-1] == "PKG-INFO" and "requires-dist" in dynamic and len(reader.declared) > before:
        reader.problem(
            f"{path}: Requires-Dist is marked Dynamic, so a wheel built from this sdist may declare "
            "other requirements (core metadata 2.2)"
        )
