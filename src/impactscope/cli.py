"""Command line: parse arguments, call the library, turn bad input into exit code 2."""

from __future__ import annotations

import os
import sys
import tempfile
from enum import Enum
from pathlib import Path
from typing import Callable, List, Optional, TypeVar

import typer

app = typer.Typer(
    add_completion=False,
    no_args_is_help=True,
    pretty_exceptions_enable=False,
    help="Size the downstream impact of planned changes to a Python library's public API.",
)

T = TypeVar("T")


class Format(str, Enum):
    table = "table"
    json = "json"
    markdown = "markdown"


def _guarded(action: Callable[[], T]) -> T:
    """Bad input is the user's to fix: one line saying what and where, exit 2, no traceback."""
    try:
        return action()
    except ValueError as exc:  # every input error type of this package subclasses ValueError
        typer.echo(f"impactscope: error: {exc}", err=True)
        raise typer.Exit(2) from None
    except OSError as exc:
        typer.echo(f"impactscope: error: {exc.filename or ''}: {exc.strerror}", err=True)
        raise typer.Exit(2) from None


@app.command()
def scan(
    changes: Path = typer.Argument(..., help="The change list (TOML)."),
    roots: List[Path] = typer.Argument(..., help="Corpus roots: folders or archives of projects."),
    out: Path = typer.Option(Path("impactscope-results.sqlite"), "--out", help="Results file to write."),
    single: bool = typer.Option(False, "--single", help="Treat each root as one project."),
    jobs: int = typer.Option(0, "--jobs", help="Worker processes (0: one per core)."),
    quiet: bool = typer.Option(False, "--quiet", help="Print nothing but errors."),
) -> None:
    """Scan downstream code for uses of the changed members and write a results file."""
    from impactscope.scan.run import run_scan, stderr_progress

    summary = _guarded(
        lambda: run_scan(
            changes, roots, out, single=single, jobs=jobs or (os.cpu_count() or 1),
            progress=None if quiet else stderr_progress(),
        )
    )
    if not quiet:
        typer.echo(
            f"scanned {summary.projects} projects, {summary.files} files in {summary.seconds:.1f} s; "
            f"{summary.findings} findings -> {summary.out}",
            err=True,
        )


@app.command()
def report(
    results: Path = typer.Argument(..., help="A results file written by `scan`."),
    format: Format = typer.Option(Format.table, "--format", help="table, json or markdown."),
    output: Optional[Path] = typer.Option(None, "--output", help="Write here instead of standard output."),
) -> None:
    """Print the impact report from a results file."""
    from impactscope.report.aggregate import build_report
    from impactscope.report.render import to_json, to_markdown, to_table
    from impactscope.store import ResultStore

    def build() -> str:
        store = ResultStore.open(results)
        try:
            document = build_report(store)
        finally:
            store.close()
        render = {Format.table: to_table, Format.json: to_json, Format.markdown: to_markdown}[format]
        return render(document)

    text = _guarded(build)
    if output is not None:
        _guarded(lambda: output.write_text(text, encoding="utf-8"))
    else:
        sys.stdout.write(text)


@app.command()
def demo(
    projects: int = typer.Option(240, "--projects", help="How many fictional projects to generate."),
    seed: int = typer.Option(7, "--seed", help="Seed of the corpus generator."),
    workdir: Optional[Path] = typer.Option(None, "--dir", help="Where to write the corpus (default: a temp dir)."),
) -> None:
    """Generate a corpus for the fictional library heronframe, scan it, print the report."""
    from impactscope.demo.run import run_demo

    base = workdir or Path(tempfile.mkdtemp(prefix="impactscope-demo-"))
    _guarded(lambda: run_demo(base, projects=projects, seed=seed, echo=typer.echo))


def main() -> None:
    app()


if __name__ == "__main__":
    main()
