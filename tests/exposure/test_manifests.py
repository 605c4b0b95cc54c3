"""Tests of exposure.manifests: every format read together, and a wheel's exposure end to end."""

from __future__ import annotations

from packaging.specifiers import SpecifierSet

from impactscope.exposure import read_manifests

from .helpers import metadata


def test_python_declarations_in_every_format():
    files = {
        "pyproject.toml": b'[project]\nname = "p"\nrequires-python = ">=3.8"\n'
                          b'[tool.poetry.dependencies]\npython = "^3.9"\n',
        "setup.cfg": b"[options]\npython_requires = >=3.7\n",
        "setup.py": b"from setuptools import setup\nsetup(\n    python_requires='>=3.6',\n)\n",
    }
    read = read_manifests(files, "heronframe")
    assert [(d.source, d.specifier) for d in read.python] == [
        ("pyproject.toml [project.requires-python]", SpecifierSet(">=3.8")),
        ("pyproject.toml [tool.poetry.dependencies]", SpecifierSet(">=3.9,<4")),  # Poetry's caret (above)
        ("setup.cfg [options.python_requires]", SpecifierSet(">=3.7")),
        ("setup.py:3", SpecifierSet(">=3.6")),
    ]


def test_a_wheel_that_pins_below_the_release_is_shielded(tmp_path):
    import json
    import zipfile

    from typer.testing import CliRunner

    from impactscope.cli import app

    changes = tmp_path / "changes.toml"
    changes.write_text(
        '[library]\nname = "heronframe"\nrelease = "2.0"\nrequires_python = ">=3.9"\n\n'
        '[types]\n"heronframe.Table" = "heronframe.Table"\n\n'
        '[[change]]\nid = "HF-1"\nmember = "heronframe.Table.stack_rows"\nkind = "removed"\n'
    )
    code = "import heronframe\nt = heronframe.Table()\nt.stack_rows()\n"
    wheels = {
        "pinned-1.0-py3-none-any.whl": metadata("Requires-Dist: heronframe<2"),
        "open-1.0-py3-none-any.whl": metadata("Requires-Dist: heronframe>=1.5"),
        "plain-1.0-py3-none-any.whl": metadata("Requires-Dist: numpy"),
        "extra-1.0-py3-none-any.whl": metadata('Requires-Dist: heronframe<2; extra == "plot"'),
        "oldpy-1.0-py3-none-any.whl": metadata("Requires-Python: <3.8"),
    }
    root = tmp_path / "wheels"
    root.mkdir()
    for name, meta in wheels.items():
        stem = name.split("-py3")[0]
        with zipfile.ZipFile(root / name, "w") as archive:
            archive.writestr(f"{stem.split('-')[0]}/__init__.py", code)
            archive.writestr(f"{stem}.dist-info/METADATA", meta)
    runner = CliRunner()
    out = tmp_path / "r.sqlite"
    scanned = runner.invoke(app, ["scan", str(changes), str(root), "--out", str(out), "--jobs", "1"])
    assert scanned.exit_code == 0, scanned.output
    report = json.loads(runner.invoke(app, ["report", str(out), "--format", "json"]).stdout)
    exposure = {p["project"]: p["exposure"] for p in report["projects"]}
    assert exposure == {
        "pinned-1.0-py3-none-any": "shielded",
        "open-1.0-py3-none-any": "exposed",
        "plain-1.0-py3-none-any": "unconstrained",
        "extra-1.0-py3-none-any": "shielded",
        "oldpy-1.0-py3-none-any": "shielded",
    }
    (change,) = report["changes"]
    assert change["exposure"] == {"exposed": 1, "shielded": 3, "unconstrained": 1}
