"""check_members: a change list against the library's surface (and through library_model, where
a scan builds its model). Messages follow docs/change-list.md: one line naming the file, the entry and the
fix; the error is an InputError, so the CLI exits 2."""

from __future__ import annotations

from pathlib import Path

import pytest

from impactscope.changes import ChangeListError, parse_change_list
from impactscope.resolve.model import library_model
from impactscope.surface import build_surface
from impactscope.surface.check import UnknownMemberError, check_members

from .helpers import write_tree

LIBRARY = {
    "__init__.py": """
        from .frame import Frame
        from . import util

        def __getattr__(name):
            if name == "datetime":
                from datetime import datetime
                return datetime
            raise AttributeError(name)
        """,
    "generic.py": "class Base:\n    def iterpairs(self): ...\n    def summary(self): ...\n",
    "frame.py": "from .generic import Base\nclass Frame(Base):\n    def append(self, other): ...\n    def lookup(self, r, c): ...\n",
    "util/__init__.py": "",
    "util/testing.py": "def assert_equal(a, b): ...\n",
}


def changes(members: list[str], extra: str = "", name: str = "changes.toml"):
    body = "".join(f'[[change]]\nmember = "{m}"\nkind = "removed"\n{extra}\n' for m in members)
    return parse_change_list(f'[library]\nname = "heronframe"\n\n{body}'.encode(), Path(name))


@pytest.fixture()
def source(tmp_path) -> Path:
    return write_tree(tmp_path / "heronframe", LIBRARY)


def test_present_members_pass(source) -> None:
    # Defined, inherited (Base.iterpairs through Frame), a submodule, a name __getattr__ serves
    # (PEP 562), and the library itself.
    members = ["heronframe.Frame.append", "heronframe.Frame.iterpairs", "heronframe.frame.Frame.summary",
               "heronframe.util.testing", "heronframe.util.testing.assert_equal", "heronframe.datetime", "heronframe"]
    check_members(changes(members), build_surface(source))


def test_a_typo_fails_with_the_closest_names(source) -> None:
    with pytest.raises(UnknownMemberError) as info:
        check_members(changes(["heronframe.Frame.append", "heronframe.Frame.apend"]), build_surface(source), source)
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith("changes.toml: [[change]] #2 (id 'heronframe.Frame.apend'): ")
    assert f"read from {source}" in message
    assert "the class heronframe.Frame has no 'apend'" in message
    assert "did you mean 'heronframe.Frame.append'?" in message
    assert "add dynamic = true" in message
    assert isinstance(info.value, ChangeListError) and isinstance(info.value, ValueError)


def test_a_wrong_class_name_is_found_where_the_path_breaks(source) -> None:
    with pytest.raises(UnknownMemberError) as info:
        check_members(changes(["heronframe.Frme.append"]), build_surface(source))
    assert "the module heronframe has no 'Frme' (did you mean 'heronframe.Frame.append'?)" in str(info.value)


def test_every_absent_member_is_counted(source) -> None:
    with pytest.raises(UnknownMemberError, match=r"\(2 more absent: 'heronframe.Frame.mad', 'heronframe.Panel'\)"):
        check_members(changes(["heronframe.Frame.tshift", "heronframe.Frame.mad", "heronframe.Panel"]), build_surface(source))


def test_dynamic_entries_are_not_checked(source) -> None:
    check_members(changes(["heronframe.Frame.apend"], extra="dynamic = true"), build_surface(source))


def test_the_module_that_computes_names_is_pointed_out(tmp_path) -> None:
    # A __getattr__ that may return a value for a name it does not test computes names at run time;
    # one that serves a fixed set and raises otherwise (LIBRARY's) leaves no name unknown.
    open_getattr = "import importlib\ndef __getattr__(name):\n    return importlib.import_module('heronframe.' + name)\n"
    source = write_tree(tmp_path / "heronframe", {**LIBRARY, "__init__.py": "from .frame import Frame\n" + open_getattr})
    with pytest.raises(UnknownMemberError, match=r"heronframe also computes names at run time"):
        check_members(changes(["heronframe.Panel"]), build_surface(source))


def test_members_of_other_top_level_modules_are_not_checked(tmp_path) -> None:
    source = write_tree(tmp_path / "heronframe", LIBRARY)
    text = '[library]\nname = "heronframe"\nmodules = ["heronframe", "heron_io"]\n\n[[change]]\nmember = "heron_io.read"\nkind = "removed"\n'
    check_members(parse_change_list(text.encode(), Path("c.toml")), build_surface(source))


def test_library_model_runs_the_check(source, tmp_path) -> None:
    path = tmp_path / "changes.toml"
    path.write_text('[library]\nname = "heronframe"\n\n[[change]]\nmember = "heronframe.Frame.apend"\nkind = "removed"\n')
    from impactscope.changes import load_change_list

    with pytest.raises(UnknownMemberError, match=rf"^{path}: \[\[change\]\] #1 .*did you mean 'heronframe.Frame.append'"):
        library_model(load_change_list(path), source=source)
    path.write_text(path.read_text().replace("apend", "append"))
    assert library_model(load_change_list(path), source=source).canonical("heronframe.Frame.append") == "heronframe.frame.Frame.append"


def test_scan_exits_2_on_a_typo_and_names_the_fix(source, tmp_path) -> None:
    # docs/command-line.md: exit code 2 for bad input, one clear message, no traceback. Twice:
    # first with the surface built, then with the surface file a good scan left beside the results.
    from typer.testing import CliRunner

    from impactscope.cli import app

    corpus = write_tree(tmp_path / "corpus", {"p1/a.py": "import heronframe as hf\nhf.Frame().append(1)\n"})
    good, bad = tmp_path / "good.toml", tmp_path / "bad.toml"
    text = '[library]\nname = "heronframe"\n\n[[change]]\nmember = "heronframe.Frame.append"\nkind = "removed"\n'
    good.write_text(text)
    bad.write_text(text.replace(".append", ".apend"))
    out = tmp_path / "r.sqlite"
    runner = CliRunner()
    for changes in (bad, good, bad):
        result = runner.invoke(app, ["scan", str(changes), str(corpus), "--out", str(out), "--jobs", "1",
                                     "--library-source", str(source)])
        if changes is good:
            assert result.exit_code == 0, result.output
            continue
        assert result.exit_code == 2, result.output
        assert "did you mean 'heronframe.Frame.append'?" in result.output and "Traceback" not in result.output
