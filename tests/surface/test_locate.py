"""locate_installed: PEP 561 resolution order over small fake distributions in tmp_path.

Reference: PEP 561, "Type Checker Module Resolution Order": stub packages (`NAME-stubs`) come
before the package's inline stubs and sources. Reference for the metadata layout: the
`.dist-info` directory with METADATA and RECORD (PEP 376 / the core metadata specification).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from impactscope.surface import SurfaceError, build_surface, locate_installed

from .helpers import write_tree


def fake_dist(site: Path, name: str, version: str, files: dict[str, str]) -> None:
    """A distribution as an installer leaves it: its files plus NAME-VERSION.dist-info/{METADATA,RECORD}."""
    write_tree(site, files)
    info = f"{name.replace('-', '_')}-{version}.dist-info"
    record = [f"{path},," for path in files] + [f"{info}/METADATA,,", f"{info}/RECORD,,"]
    write_tree(site, {
        f"{info}/METADATA": f"Metadata-Version: 2.1\nName: {name}\nVersion: {version}\n",
        f"{info}/RECORD": "\n".join(record) + "\n",
    })


def test_stub_package_comes_first(tmp_path):
    site = tmp_path / "site"
    fake_dist(site, "heronframe", "2.4", {
        "heronframe/__init__.py": "def read_table(path, sep=','): ...\n",
        "heronframe/__init__.pyi": "def read_table(path: str, sep: str = ...) -> None: ...\n",
    })
    fake_dist(site, "heronframe-stubs", "2.4.0", {
        "heronframe-stubs/__init__.pyi": "def read_table(path: str) -> None: ...\n",
    })
    found = locate_installed("heronframe", path=[site])
    assert found == site / "heronframe-stubs"
    surface = build_surface(found)
    assert surface.library == "heronframe"
    assert [p.name for p in surface.parameters("heronframe.read_table")] == ["path"]


def test_inline_stubs_before_sources(tmp_path):
    site = tmp_path / "site"
    fake_dist(site, "heronframe", "2.4", {
        "heronframe/__init__.py": "def read_table(path, sep=',', header=True): ...\n",
        "heronframe/__init__.pyi": "def read_table(path: str, sep: str = ...) -> None: ...\n",
    })
    found = locate_installed("heronframe", path=[site])
    assert found == site / "heronframe"
    assert [p.name for p in build_surface(found).parameters("heronframe.read_table")] == ["path", "sep"]


def test_sources_when_there_are_no_stubs(tmp_path):
    site = tmp_path / "site"
    fake_dist(site, "heronframe", "2.4", {"heronframe/__init__.py": "def read_table(path, sep=','): ...\n"})
    assert locate_installed("heronframe", path=[site]) == site / "heronframe"


def test_single_module_distribution_prefers_its_stub(tmp_path):
    site = tmp_path / "site"
    fake_dist(site, "heron-single", "1.0", {"heron_single.py": "def f(a, b): ...\n", "heron_single.pyi": "def f(a: int) -> int: ...\n"})
    found = locate_installed("heron-single", path=[site])  # a distribution name, mapped to its module
    assert found == site / "heron_single.pyi"
    assert [p.name for p in build_surface(found, "heron_single").parameters("heron_single.f")] == ["a"]


def test_package_without_a_record_is_found_by_the_path_finder(tmp_path):
    site = write_tree(tmp_path / "site", {"loose/__init__.py": "X = 1\n"})
    assert locate_installed("loose", path=[site]) == site / "loose"


def test_not_found_says_what_was_looked_for_and_how_to_fix(tmp_path):
    (tmp_path / "site").mkdir()
    with pytest.raises(SurfaceError) as err:
        locate_installed("heronframe", path=[tmp_path / "site"])
    message = str(err.value)
    assert "'heronframe'" in message and "heronframe-stubs/" in message and "heronframe/__init__.pyi" in message
    assert "pip install heronframe" in message


def test_real_installed_distribution():
    # packaging ships its sources (and py.typed) in the venv: the package directory is returned.
    found = locate_installed("packaging")
    assert (found / "version.py").is_file()


def test_one_decision_between_an_installed_library_and_a_source_path(tmp_path):
    from impactscope.surface.locate import library_location

    source = write_tree(tmp_path / "src", {"heronframe/__init__.py": "X = 1\n"}) / "heronframe"
    fallback = tmp_path / "src"
    assert library_location(source, None, fallback) == source  # a path given overrides [library] source
    assert library_location(None, None, fallback) == fallback
    assert library_location() is None  # nothing given: the change list's [types] alone
    assert library_location(None, "packaging") == locate_installed("packaging")
    with pytest.raises(SurfaceError, match="not both"):
        library_location(source, "packaging")
    with pytest.raises(SurfaceError, match="no such file or folder"):
        library_location(tmp_path / "absent", None)
    with pytest.raises(SurfaceError, match="no such file or folder"):
        library_location(None, None, tmp_path / "absent")
