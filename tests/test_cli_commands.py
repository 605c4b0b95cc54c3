"""The library-facing commands: surface, compare, harvest, sample, report options."""

from __future__ import annotations

import json
import tomllib
from importlib import resources
from pathlib import Path

from typer.testing import CliRunner

from impactscope.changes import load_change_list
from impactscope.cli import app

runner = CliRunner()
DEMO = Path(str(resources.files("impactscope.demo")))
OLD = DEMO / "heronframe"
NEW = DEMO / "heronframe_3_0" / "heronframe"


def test_surface_prints_a_table_and_json() -> None:
    table = runner.invoke(app, ["surface", str(OLD)])
    assert table.exit_code == 0, table.output
    assert "heronframe.core.table.Table.stack_rows" in table.stdout
    as_json = runner.invoke(app, ["surface", str(OLD), "--format", "json"])
    assert as_json.exit_code == 0
    data = json.loads(as_json.stdout)
    assert data["aliases"]["heronframe.Table"] == "heronframe.core.table.Table"


def test_surface_of_an_installed_distribution_is_read_without_importing_it() -> None:
    result = runner.invoke(app, ["surface", "--installed", "packaging", "--format", "json"])
    assert result.exit_code == 0, result.output
    assert "packaging.version.Version" in json.loads(result.stdout)["members"]


def test_compare_writes_a_draft_that_loads_and_points_at_the_old_source(tmp_path: Path) -> None:
    out = tmp_path / "draft.toml"
    result = runner.invoke(app, ["compare", str(OLD), str(NEW), "--release", "3.0", "--output", str(out)])
    assert result.exit_code == 0, result.output
    changes = load_change_list(out)  # loads without edits
    assert changes.source == OLD.resolve()
    kinds = {(c.member, c.kind.value) for c in changes.changes}
    assert ("heronframe.Table.sort_by", "parameter-removed") in kinds
    assert ("heronframe.Table.pivot", "parameter-renamed") in kinds
    assert ("heronframe.plotting.scatter_grid", "moved") in kinds


def test_harvest_lists_what_the_library_already_deprecates(tmp_path: Path) -> None:
    out = tmp_path / "harvest.toml"
    result = runner.invoke(app, ["harvest", str(OLD), "--output", str(out)])
    assert result.exit_code == 0, result.output
    members = {c["member"] for c in tomllib.loads(out.read_text())["change"]}
    assert "heronframe.stack" in members


def test_library_commands_reject_missing_sources_with_exit_2(tmp_path: Path) -> None:
    for args in (["surface", str(tmp_path / "nope")], ["compare", str(tmp_path / "a"), str(NEW)],
                 ["harvest", str(tmp_path / "nope")], ["surface"]):
        result = runner.invoke(app, args)
        assert result.exit_code == 2, (args, result.output)
        assert "Traceback" not in result.output


def test_sample_is_reproducible_and_sizes_from_a_margin(tmp_path: Path) -> None:
    population = tmp_path / "all.txt"
    population.write_text("".join(f"project-{i}\n" for i in range(1000)))
    first = runner.invoke(app, ["sample", str(population), "--size", "20", "--seed", "3"])
    second = runner.invoke(app, ["sample", str(population), "--size", "20", "--seed", "3"])
    assert first.exit_code == 0 and first.stdout == second.stdout
    assert len(first.stdout.split()) == 20
    # Cochran's formula with the finite population correction: 385 -> 278 for N = 1000 (95%, 5%).
    sized = runner.invoke(app, ["sample", str(population), "--margin", "0.05"])
    assert sized.exit_code == 0
    assert len(sized.stdout.split()) == 278
    both = runner.invoke(app, ["sample", str(population), "--size", "5", "--margin", "0.05"])
    assert both.exit_code == 2


def test_report_sizing_options(scanned_demo_corpus, tmp_path: Path) -> None:
    results = str(scanned_demo_corpus.results)
    plain = json.loads(runner.invoke(app, ["report", results, "--format", "json"]).stdout)
    corrected = json.loads(
        runner.invoke(app, ["report", results, "--format", "json", "--population", "300"]).stdout
    )
    for a, b in zip(plain["changes"], corrected["changes"]):
        assert b["share"]["population"] == 300
        wide = a["share"]["resolved"]["high"] - a["share"]["resolved"]["low"]
        narrow = b["share"]["resolved"]["high"] - b["share"]["resolved"]["low"]
        assert narrow <= wide  # the finite population correction can only narrow the interval
    weights = tmp_path / "w.csv"
    weights.write_text("project,weight\n" + "".join(f"{p['project']},{i + 1}\n" for i, p in enumerate(plain["projects"])))
    weighted = json.loads(
        runner.invoke(app, ["report", results, "--format", "json", "--weights", str(weights)]).stdout
    )
    assert all("weighted_share" in c for c in weighted["changes"])
    bad = runner.invoke(app, ["report", results, "--population", "5"])
    assert bad.exit_code == 2 and "smaller than" in bad.output
    markdown = runner.invoke(app, ["report", results, "--format", "markdown"])
    assert markdown.exit_code == 0 and markdown.stdout.startswith("# Impact of heronframe 3.0")


def test_scan_reads_an_installed_library_without_importing_it(tmp_path: Path) -> None:
    # `packaging` is a dependency, so it is installed; its surface says Version.public exists
    # and that packaging.version.parse returns a Version (its own annotation).
    changes = tmp_path / "changes.toml"
    changes.write_text(
        '[library]\nname = "packaging"\n\n[[change]]\nid = "P-1"\nmember = "packaging.version.Version.public"\n'
        'kind = "removed"\n'
    )
    project = tmp_path / "corpus" / "uses-packaging"
    project.mkdir(parents=True)
    (project / "main.py").write_text("from packaging import version\nv = version.parse('1.0')\nprint(v.public)\n")
    out = tmp_path / "r.sqlite"
    plain = runner.invoke(app, ["scan", str(changes), str(tmp_path / "corpus"), "--out", str(out), "--quiet"])
    assert plain.exit_code == 0, plain.output
    without = json.loads(runner.invoke(app, ["report", str(out), "--format", "json"]).stdout)
    assert without["changes"][0]["projects"]["resolved"] == 0  # no [types]: the return type is unknown
    scanned = runner.invoke(app, ["scan", str(changes), str(tmp_path / "corpus"), "--out", str(out), "--quiet",
                                  "--library-installed", "packaging"])
    assert scanned.exit_code == 0, scanned.output
    found = json.loads(runner.invoke(app, ["report", str(out), "--format", "json"]).stdout)
    assert found["changes"][0]["projects"]["resolved"] == 1
    assert found["findings"][0]["line"] == 3


# ---------------------------------------------------------------------------------------------
# Conventions shared by every command.


def test_version_prints_the_package_version() -> None:
    from impactscope import __version__

    done = runner.invoke(app, ["--version"])
    assert done.exit_code == 0 and done.stdout == f"impactscope {__version__}\n"


def test_help_texts_print_as_written() -> None:
    """No markup is read in help texts ("[library]" keeps its brackets) and flags show no <bool>."""
    for command in ("scan", "report", "surface", "compare", "harvest", "sample", "rewrite", "demo", "gate"):
        done = runner.invoke(app, [command, "--help"], env={"COLUMNS": "200"})
        assert done.exit_code == 0, (command, done.output)
        assert "<bool>" not in done.stdout, command
        assert "--out " not in done.stdout and "--out\n" not in done.stdout, command  # the old name is hidden
    scan_help = " ".join(runner.invoke(app, ["scan", "--help"], env={"COLUMNS": "200"}).stdout.split())
    assert "(overrides [library] source in the change list)" in scan_help
    assert "--output FILE" in scan_help


def _tiny_corpus(tmp_path: Path) -> tuple[Path, Path]:
    changes = tmp_path / "changes.toml"
    changes.write_text('[library]\nname = "heronframe"\n\n[[change]]\nid = "C-1"\nmember = "heronframe.stack"\n'
                       'kind = "removed"\n', encoding="utf-8")
    project = tmp_path / "corpus" / "only"
    project.mkdir(parents=True)
    (project / "a.py").write_text("import heronframe\nheronframe.stack([])\n", encoding="utf-8")
    return changes, tmp_path / "corpus"


def test_output_is_the_option_name_and_out_a_hidden_alias(tmp_path: Path) -> None:
    changes, corpus = _tiny_corpus(tmp_path)
    new = runner.invoke(app, ["scan", str(changes), str(corpus), "--output", str(tmp_path / "a.sqlite")])
    assert new.exit_code == 0, new.output
    # One project, one file, one finding: singular words.
    assert "scanned 1 project, 1 file in " in new.stderr and "; 1 finding, 0 files with an analysis error" in new.stderr
    old = runner.invoke(app, ["scan", str(changes), str(corpus), "--out", str(tmp_path / "b.sqlite"), "--quiet"])
    assert old.exit_code == 0 and (tmp_path / "b.sqlite").exists()
    both = runner.invoke(app, ["scan", str(changes), str(corpus), "--out", "x.sqlite", "--output", "y.sqlite"])
    assert both.exit_code == 2 and "disagree" in both.output
    no_folder = runner.invoke(app, ["rewrite", str(changes), str(corpus)])
    assert no_folder.exit_code == 2 and "--output DIR" in no_folder.output


def test_weights_show_in_every_format_and_must_match_a_project(scanned_demo_corpus, tmp_path: Path) -> None:
    results = str(scanned_demo_corpus.results)
    users = [p["project"] for p in scanned_demo_corpus.report["projects"] if p["uses_library"]]
    weights = tmp_path / "downloads.csv"
    weights.write_text("project,weight\n" + "".join(f"{p},{i + 1}\n" for i, p in enumerate(users[:50])) + "other,3\n")
    line = f"weighted by downloads.csv: 51 entries, matching 50 of the {len(users)} projects that use heronframe"
    for fmt in ("table", "markdown", "html", "json"):
        done = runner.invoke(app, ["report", results, "--format", fmt, "--weights", str(weights)])
        assert done.exit_code == 0, (fmt, done.output)
        if fmt == "json":
            assert json.loads(done.stdout)["weights"] == {"file": "downloads.csv", "entries": 51, "matched": 50}
        else:
            assert line in " ".join(done.stdout.split()), fmt
    notes = runner.invoke(app, ["report", results, "--format", "release-notes", "--weights", str(weights)]).stdout
    assert "; weighted by downloads.csv: " in notes
    table = runner.invoke(app, ["report", results, "--weights", str(weights)]).stdout
    assert "weighted share (95% interval)" in table
    stranger = tmp_path / "nobody.csv"
    stranger.write_text("project,weight\nnot-in-the-corpus,10\n")
    refused = runner.invoke(app, ["report", results, "--weights", str(stranger)])
    assert refused.exit_code == 2 and "Traceback" not in refused.output
    assert "--weights nobody.csv: none of its 1 project names is a project of these results" in refused.output


def test_a_scan_in_process_gives_back_the_sigterm_handler_it_found(tmp_path: Path) -> None:
    import signal

    corpus = tmp_path / "corpus" / "app"
    corpus.mkdir(parents=True)
    (corpus / "main.py").write_text("import heronframe\n", encoding="utf-8")
    changes = tmp_path / "changes.toml"
    changes.write_text('[library]\nname = "heronframe"\n\n[[change]]\nmember = "heronframe.stack"\nkind = "removed"\n',
                       encoding="utf-8")

    def mine(signum, frame):  # type: ignore[no-untyped-def]
        pass

    before = signal.signal(signal.SIGTERM, mine)
    try:
        done = CliRunner().invoke(app, ["scan", str(changes), str(tmp_path / "corpus"), "--output",
                                        str(tmp_path / "r.sqlite"), "--jobs", "1", "--quiet"])
        assert done.exit_code == 0, done.output
        assert signal.getsignal(signal.SIGTERM) is mine
    finally:
        signal.signal(signal.SIGTERM, before)
