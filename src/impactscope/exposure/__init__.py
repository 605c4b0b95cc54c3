"""Whether a downstream project's declared requirements admit a release of the library.

A project that uses a removed member is only hit by the release if it can install the release.
This module reads what a project declares about the library in its manifest files and classifies
the project as exposed (its constraints admit the release), shielded (they exclude it) or
unconstrained (nothing it declares limits the version).

Manifests are read as data, never run: requirement files in pip's format, `pyproject.toml`
(PEP 621 `[project]`, PEP 735 `[dependency-groups]`, Poetry's `[tool.poetry]`), `setup.cfg`,
`Pipfile`, `setup.py`, from which only literal `install_requires=[...]` lists are read with
libcst, and the core metadata of a built distribution: a wheel's `<name>.dist-info/METADATA` and
an sdist's `PKG-INFO`, at the top of the project (`Requires-Dist`, `Requires-Python`). A manifest
that cannot be read is not an error: `read_manifests` returns what it could read together with a
list of problems, each naming the file (and line where there is one).

Optional requirements count like the others: an entry of `[project.optional-dependencies]`,
`extras_require`, or a `Requires-Dist` under an extra (`lib<2; extra == "plot"`) is a declaration
of the project. The code that uses the library is often the optional part, and every install that
has the extra, and so runs that code, is held to the constraint. `classify` therefore treats an
`extra == "..."` marker as true.

The project's supported Pythons (`Requires-Python`, PEP 621 `requires-python`, setuptools'
`python_requires`, Poetry's `python` dependency) are read too: a project whose Pythons and the
release's own `Requires-Python` have none in common can never install the release.

The package has one module per manifest format (`requirements`, `pyproject`, `poetry`, `pipfile`,
`setup_cfg`, `setup_py`, `core_metadata`), the reader they share (`reader`, `toml_tables`), which
files are manifests (`files`), the reading of them all (`manifests`), the records (`records`) and
the classification against a release (`verdict`).
"""

from .files import MANIFEST_PATTERNS, is_manifest
from .manifests import declared_requirements, read_manifests
from .records import Declared, DeclaredPython, Exposure, ExposureError, Manifests
from .verdict import classify, environment_for_python

__all__ = [
    "MANIFEST_PATTERNS",
    "Declared",
    "DeclaredPython",
    "Exposure",
    "ExposureError",
    "Manifests",
    "classify",
    "declared_requirements",
    "environment_for_python",
    "is_manifest",
    "read_manifests",
]
