"""Every manifest of a project read into `Manifests`: each file by its format."""

from __future__ import annotations

from collections.abc import Mapping

from impactscope.exposure.core_metadata import read_core_metadata
from impactscope.exposure.files import REQUIREMENT_ROOTS, is_core_metadata, is_manifest, matches
from impactscope.exposure.pipfile import read_pipfile
from impactscope.exposure.pyproject import read_pyproject
from impactscope.exposure.reader import Reader
from impactscope.exposure.records import Declared, Manifests
from impactscope.exposure.requirements import read_requirement_file
from impactscope.exposure.setup_cfg import read_setup_cfg
from impactscope.exposure.setup_py import read_setup_py


def read_manifests(files: Mapping[str, bytes], distribution: str) -> Manifests:
    """Declarations of `distribution` in a project's manifest `files`, and reading problems.

    `files` maps POSIX paths relative to the project to their content; files that are not
    manifests are ignored. Names compare after PEP 503 normalisation. Requirement files are read
    starting from those named like `*requirements*.txt` or lying in a `requirements/` folder
    (but not named like `*constraints*.txt`); any other file is read only when one of those
    includes it with `-r` (a requirement file) or `-c` (a constraints file, whose entries are
    marked `constraint`). Files are visited in sorted path order, includes where they occur, and
    each file once per role, so include cycles end.
    """
    reader = Reader(files, distribution)
    for path in sorted(files):
        if not is_manifest(path):
            continue
        name = path.rsplit("/", 1)[-1].lower()
        if name == "pyproject.toml":
            read_pyproject(path, reader)
        elif name == "pipfile":
            read_pipfile(path, reader)
        elif name == "setup.cfg":
            read_setup_cfg(path, reader)
        elif name == "setup.py":
            read_setup_py(path, reader)
        elif is_core_metadata(path):
            read_core_metadata(path, reader)
        elif matches(path, REQUIREMENT_ROOTS) and not matches(path, ("*constraints*.txt",)):
            read_requirement_file(path, reader, constraint=False)
    return Manifests(tuple(reader.declared), tuple(reader.problems), tuple(reader.python))


def declared_requirements(files: Mapping[str, bytes], distribution: str) -> tuple[Declared, ...]:
    """The declarations `read_manifests` finds, without its problems."""
    return read_manifests(files, distribution).declared
