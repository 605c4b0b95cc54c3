"""Command line: parse arguments, call the library; bad input exits 2, a bug exits 3."""

from __future__ import annotations

import os
import signal
import sys
import tempfile
import threading
from enum import Enum
from pathlib import Path
from typing import Callable, List, Optional, TypeVar

import typer

from impactscope.errors import InputError

app = typer.Typer(
    add_completion=False,
    no_args_is_help=True,
    pretty_exceptions_enable=False,
    # Plain help: texts print as written ("[library] source" keeps its brackets), flags show no
    # <bool> placeholder.
    rich_markup_mode=None,
    help="Size the downstream impact of planned changes to a Python library's public API.",
)

T = TypeVar("T")


class Format(str, Enum):
    table = "table"
    json = "json"
    markdown = "markdown"
    html = "html"
    release_notes = "release-notes"
    towncrier = "towncrier"


def _version(show: bool) -> None:
    if show:
        from impactscope import __version__

        typer.echo(f"impactscope {__version__}")
        raise typer.Exit(0)


@app.callback()
def _options(
    version: bool = typer.Option(False, "--version", is_eager=True, callback=_version, help="Print the version and exit."),
) -> None:
    """Size the downstream impact of planned changes to a Python library's public API."""


def _one_output(output: Optional[Path], old: Optional[Path], default: Optional[Path] = None) -> Optional[Path]:
    """`--output`, or the hidden `--out` it replaced (older scripts); both at once must agree."""
    if output is not None and old is not None and output != old:
        typer.echo(f"impactscope: error: --output {output} and --out {old} disagree; give --output only", err=True)
        raise typer.Exit(2)
    return output or old or default


def _plural(count: int, noun: str) -> str:
    return f"{count} {noun if count == 1 else noun + 's'}"


class Terminated(KeyboardInterrupt):
    """SIGTERM, taken like Ctrl-C (exit 143 rather than 130, by the shell's convention)."""


def _terminated(signum: int, frame: object) -> None:
    raise Terminated()


def _guarded(action: Callable[[], T]) -> T:
    """Bad input is the user's to fix: one line saying what and where, exit 2, no traceback.

    Only `InputError` is input: a plain `ValueError` (or any other exception) is a bug and
    goes on to `main`, which reports it as one (exit 3). A file the system refuses (missing,
    no permission, full disk) is the user's to fix too."""
    try:
        return action()
    except InputError as exc:
        typer.echo(f"impactscope: error: {exc}", err=True)
        raise typer.Exit(2) from None
    except OSError as exc:
        typer.echo(f"impactscope: error: {_os_error(exc)}", err=True)
        raise typer.Exit(2) from None


def _os_error(exc: OSError) -> str:
    """`path: reason`; an OSError made from a message alone has no strerror to show."""
    if exc.strerror is None:
        return str(exc)
    return f"{exc.filename}: {exc.strerror}" if exc.filename is not None else exc.strerror


@app.command()
def scan(
    changes: Path = typer.Argument(..., metavar="CHANGES", help="The change list (TOML)."),
    roots: List[Path] = typer.Argument(..., metavar="ROOT", help="Corpus roots: folders or archives of projects."),
    output: Optional[Path] = typer.Option(
        None, "--output", metavar="FILE",
        help="Results file (default: impactscope-results.sqlite). An existing one from the same change list "
        "and tool version is resumed: unchanged projects are reused.",
    ),
    old_out: Optional[Path] = typer.Option(None, "--out", hidden=True),
    single: bool = typer.Option(False, "--single", help="Treat each root as one project."),
    jobs: int = typer.Option(0, "--jobs", help="Worker processes (0: one per core; not used with --cluster)."),
    fresh: bool = typer.Option(False, "--fresh", help="Ignore an existing results file and scan everything."),
    cluster: Optional[str] = typer.Option(
        None, "--cluster", metavar="ADDRESS",
        help="Run on a Dask scheduler (tcp://host:8786), or `local` for two local Dask workers.",
    ),
    quiet: bool = typer.Option(False, "--quiet", help="Print nothing but errors."),
    library_source: Optional[Path] = typer.Option(
        None, "--library-source", help="Read the library's own source here (overrides [library] source in the change list)."
    ),
    library_installed: Optional[str] = typer.Option(
        None, "--library-installed", metavar="NAME", help="Read an installed distribution's files (never imported)."
    ),
    library_stubs: Optional[Path] = typer.Option(
        None, "--library-stubs", metavar="PATH",
        help="Also read the library's PEP 561 stub package here (e.g. a -stubs folder): its types, with the "
        "source's names (overrides [library] stubs in the change list).",
    ),
    limit: List[str] = typer.Option(
        [], "--limit", metavar="NAME=VALUE",
        help="Change a reading limit, e.g. file_bytes=4000000 or members=500000 (repeatable; see README).",
    ),
) -> None:
    """Scan downstream code for uses of the changed members and write a results file."""
    from impactscope.reasons import Reason
    from impactscope.scan.progress import for_stream
    from impactscope.scan.run import run_scan

    out = _one_output(output, old_out, Path("impactscope-results.sqlite"))
    assert out is not None

    if jobs < 0:
        typer.echo("impactscope: error: --jobs must be 0 (one per core) or a positive number", err=True)
        raise typer.Exit(2)
    from impactscope.corpus.limits import DEFAULT_LIMITS

    limits = _guarded(lambda: DEFAULT_LIMITS.updated(limit))
    # SIGTERM (a CI job cancelled, `kill`) ends a scan as Ctrl-C does: finished projects are
    # committed, the workers stopped, and the same command resumes.
    # The handler before this scan comes back after it: a program that runs scans in process
    # keeps its own SIGTERM behaviour.
    previous = None
    if threading.current_thread() is threading.main_thread():  # only there can Python take signals
        previous = signal.signal(signal.SIGTERM, _terminated)
    try:
        summary = _guarded(
            lambda: run_scan(
                changes, roots, out, single=single, jobs=jobs, fresh=fresh, cluster=cluster,
                progress=for_stream(sys.stderr, quiet=quiet),
                library_source=library_source, library_installed=library_installed, limits=limits,
                library_stubs=library_stubs,
            )
        )
    except KeyboardInterrupt as stop:
        typer.echo(
            f"impactscope: interrupted; finished projects are saved in {out}; "
            "run the same command again to resume",
            err=True,
        )
        raise typer.Exit(143 if isinstance(stop, Terminated) else 130) from None
    finally:
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)
    if not quiet:
        reused = f" ({summary.reused} unchanged, reused)" if summary.reused else ""
        died = summary.faults.get(Reason.WORKER_DIED, 0)
        lost = f", {died} files in projects whose worker died" if died else ""
        typer.echo(
            f"scanned {_plural(summary.projects, 'project')}{reused}, {_plural(summary.files, 'file')} in "
            f"{summary.seconds:.1f} s; {_plural(summary.findings, 'finding')}, "
            f"{_plural(summary.analysis_errors, 'file')} with an analysis error{lost} "
            f"-> {summary.out}",
            err=True,
        )


@app.command()
def report(
    results: Path = typer.Argument(..., metavar="RESULTS", help="A results file written by `scan`."),
    format: Format = typer.Option(
        Format.table, "--format",
        help="table (fits the terminal), json, markdown, html (one self-contained file), release-notes "
        "(Markdown, a section per change) or towncrier (one fragment file per change, in the --output folder).",
    ),
    output: Optional[Path] = typer.Option(
        None, "--output", metavar="PATH", help="Write here instead of standard output (a folder for towncrier)."
    ),
    confidence: float = typer.Option(0.95, "--confidence", help="Confidence level of the intervals."),
    population: Optional[int] = typer.Option(
        None, "--population", help="Size of the population the corpus was sampled from (finite population correction)."
    ),
    weights: Optional[Path] = typer.Option(None, "--weights", help="CSV of project,weight (e.g. downloads)."),
    python: str = typer.Option("3.12", "--python", help="Python version for evaluating requirement markers."),
    sites: int = typer.Option(3, "--sites", metavar="N", help="Example sites per change (table and html)."),
    summary: bool = typer.Option(False, "--summary", help="table: the summary tables alone, no per-change details."),
) -> None:
    """Print the impact report from a results file."""
    from impactscope.report.aggregate import build_report
    from impactscope.report.html import to_html
    from impactscope.report.release_notes import to_release_notes, write_towncrier
    from impactscope.report.render import to_json, to_markdown
    from impactscope.report.sizing import SizingError, SizingOptions, read_weights
    from impactscope.report.terminal import to_table
    from impactscope.store import ResultStore

    def build() -> str:
        if not 0 < confidence < 1:
            raise SizingError(f"--confidence must be between 0 and 1, got {confidence}")
        if population is not None and population < 1:
            raise SizingError(f"--population must be a positive whole number, got {population}")
        if sites < 0:
            raise SizingError(f"--sites must be 0 or more, got {sites}")
        if format is Format.towncrier and output is None:
            raise SizingError("--format towncrier writes one file per change: give the folder with --output DIR")
        options = SizingOptions(
            confidence=confidence,
            population=population,
            python=python,
            weights=read_weights(weights) if weights is not None else None,
            weights_file=weights.name if weights is not None else None,
        )
        store = ResultStore.open(results)
        try:
            if population is not None and population < len(store.projects()):
                raise SizingError(
                    f"--population {population} is smaller than the {len(store.projects())} projects scanned"
                )
            document = build_report(store, options)
        finally:
            store.close()
        if format is Format.towncrier:
            assert output is not None
            written = write_towncrier(document, output)
            return f"wrote {_plural(len(written), 'fragment')} to {output}\n"
        if format is Format.table:
            return to_table(document, sites=sites, summary=summary)
        if format is Format.html:
            return to_html(document, sites=sites)
        render = {Format.json: to_json, Format.markdown: to_markdown, Format.release_notes: to_release_notes}[format]
        return render(document)

    text = _guarded(build)
    if format is Format.towncrier:
        typer.echo(text, nl=False, err=True)
    else:
        _emit(text, output)


@app.command()
def surface(
    source: Optional[Path] = typer.Argument(None, help="The library's source: a package folder, a module, or their parent."),
    installed: Optional[str] = typer.Option(None, "--installed", help="Read an installed distribution instead (never imported)."),
    library: Optional[str] = typer.Option(None, "--library", help="Import name, when SOURCE holds several packages."),
    format: str = typer.Option("table", "--format", help="table or json."),
    output: Optional[Path] = typer.Option(None, "--output", help="Write here instead of standard output."),
) -> None:
    """Print the library's public surface, read statically from its source."""
    from impactscope.surface import SurfaceError, build_surface
    from impactscope.surface.locate import library_location

    def build() -> str:
        if (source is None) == (installed is None):
            raise SurfaceError("give the library's SOURCE path or --installed NAME (one of the two)")
        if format not in ("table", "json"):
            raise SurfaceError(f"--format must be table or json, got {format!r}")
        built = build_surface(library_location(source, installed), library)  # type: ignore[arg-type]
        return built.dumps() + "\n" if format == "json" else built.render_table()

    _emit(_guarded(build), output)


@app.command()
def compare(
    old: Path = typer.Argument(..., help="Source of the released version."),
    new: Path = typer.Argument(..., help="Source of the version about to ship."),
    release: Optional[str] = typer.Option(None, "--release", help="The new version number (PEP 440)."),
    library: Optional[str] = typer.Option(None, "--library", help="Import name, when a folder holds several packages."),
    output: Optional[Path] = typer.Option(None, "--output", help="Write the draft change list here."),
    include_private: bool = typer.Option(False, "--include-private", help="Also private names, tests, examples and benchmarks."),
) -> None:
    """Draft a change list from two versions of the library's source."""
    from impactscope.surface import SurfaceError
    from impactscope.surface.drafting import draft_compare

    def draft():
        for path in (old, new):
            if not path.exists():
                raise SurfaceError(f"{path}: no such file or folder; pass the library's package folder")
        return draft_compare(old, new, library, release, include_private=include_private)

    done = _guarded(draft)
    _emit(_with_source(done.text, old, output), output)
    if output is not None:
        typer.echo(f"wrote {output}: {done.summary}")


@app.command()
def harvest(
    source: Path = typer.Argument(..., help="The library's source."),
    release: Optional[str] = typer.Option(None, "--release", help="The version that will drop them (PEP 440)."),
    library: Optional[str] = typer.Option(None, "--library", help="Import name, when SOURCE holds several packages."),
    output: Optional[Path] = typer.Option(None, "--output", help="Write the draft change list here."),
    include_private: bool = typer.Option(False, "--include-private", help="Also private names, tests, examples and benchmarks."),
) -> None:
    """Draft a change list from the deprecation warnings the library already emits."""
    from impactscope.surface import SurfaceError
    from impactscope.surface.drafting import draft_harvest

    def draft():
        if not source.exists():
            raise SurfaceError(f"{source}: no such file or folder; pass the library's package folder")
        return draft_harvest(source, library, release, include_private=include_private)

    done = _guarded(draft)
    _emit(_with_source(done.text, source, output), output)
    if output is not None:
        typer.echo(f"wrote {output}: {done.summary}")


def _with_source(draft: str, source: Path, output: Optional[Path]) -> str:
    """Point the draft's [library] at the source it came from, so it scans without edits."""
    if "\nsource = " in draft or "[library]" not in draft:
        return draft
    base = (output.parent if output is not None else Path.cwd()).resolve()
    try:
        where = os.path.relpath(source.resolve(), base)
    except ValueError:  # another drive on Windows
        where = str(source.resolve())
    line = 'source = "' + where.replace(os.sep, "/").replace('"', '\\"') + '"'
    head, sep, rest = draft.partition("[library]\n")
    return head + sep + line + "\n" + rest


def _emit(text: str, output: Optional[Path]) -> None:
    if output is not None:
        _guarded(lambda: output.write_text(text, encoding="utf-8"))
    else:
        sys.stdout.write(text)


@app.command()
def sample(
    population_list: Path = typer.Argument(..., help="Project names or paths, one a line (or a CSV with a weight column)."),
    size: Optional[int] = typer.Option(None, "--size", help="How many projects to draw."),
    margin: Optional[float] = typer.Option(
        None, "--margin", help="Instead of --size: the margin of error wanted (Cochran's formula, with FPC)."
    ),
    confidence: float = typer.Option(0.95, "--confidence", help="Confidence level for --margin."),
    seed: int = typer.Option(0, "--seed", help="Seed, for a reproducible draw."),
    stratified: bool = typer.Option(False, "--stratified", help="Stratify by weight (needs a weight column)."),
) -> None:
    """Draw a reproducible random sample of projects to scan."""
    from impactscope.sampling import SamplingError, needed_size, read_population

    def draw() -> list[str]:
        population = read_population(population_list)
        if (size is None) == (margin is None):
            raise SamplingError("give exactly one of --size N or --margin E (e.g. --margin 0.03)")
        n = size if size is not None else needed_size(len(population), margin, confidence)  # type: ignore[arg-type]
        if margin is not None:
            typer.echo(f"sample size for margin {margin} at {confidence:.0%}: {n} of {len(population)}", err=True)
        return population.stratified(n, seed) if stratified else population.sample(n, seed)

    for name in _guarded(draw):
        typer.echo(name)


@app.command()
def rewrite(
    changes: Path = typer.Argument(..., metavar="CHANGES", help="The change list (TOML)."),
    roots: List[Path] = typer.Argument(..., metavar="ROOT", help="Corpus roots: folders or archives of projects."),
    output: Optional[Path] = typer.Option(
        None, "--output", metavar="DIR", help="Folder for PROJECT.patch files and review.md / review.json (required)."
    ),
    old_out: Optional[Path] = typer.Option(None, "--out", hidden=True),
    single: bool = typer.Option(False, "--single", help="Treat each root as one project."),
    jobs: int = typer.Option(1, "--jobs", help="Worker processes (0: one per core)."),
    library_source: Optional[Path] = typer.Option(
        None, "--library-source", help="Read the library's own source here (overrides [library] source in the change list)."
    ),
    library_stubs: Optional[Path] = typer.Option(
        None, "--library-stubs", metavar="PATH",
        help="Also read the library's PEP 561 stub package here, as scan does.",
    ),
    apply: bool = typer.Option(False, "--apply", help="Rewrite folder projects in place instead of writing patches."),
    check: bool = typer.Option(False, "--check", help="Exit 1 when any rewrite is pending (patches are still written)."),
    quiet: bool = typer.Option(False, "--quiet", help="Print nothing but errors."),
) -> None:
    """Rewrite the proven uses of renamed, moved and re-parameterised members: patches and a review list."""
    from impactscope.rewrite.run import run_rewrite
    from impactscope.scan.progress import for_stream

    if jobs < 0:
        typer.echo("impactscope: error: --jobs must be 0 (one per core) or a positive number", err=True)
        raise typer.Exit(2)
    if apply and check:
        typer.echo("impactscope: error: give --apply or --check, not both (--check only reports)", err=True)
        raise typer.Exit(2)
    out = _one_output(output, old_out)
    if out is None:
        typer.echo("impactscope: error: give the folder for the patches with --output DIR", err=True)
        raise typer.Exit(2)
    summary = _guarded(
        lambda: run_rewrite(changes, roots, out, single=single, jobs=jobs, library_source=library_source,
                            library_stubs=library_stubs,
                            apply=apply, progress=for_stream(sys.stderr, quiet=quiet))
    )
    if not quiet:
        done = "rewrote in place" if summary.applied else "patched"
        typer.echo(
            f"{_plural(summary.projects, 'project')}: {done} {_plural(summary.files, 'file')} in "
            f"{_plural(summary.patched, 'project')} ({_plural(summary.rewritten, 'site')}); "
            f"{_plural(summary.review, 'site')} to review -> {summary.out}",
            err=True,
        )
    if check and summary.pending:
        raise typer.Exit(1)


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


@app.command()
def gate(
    results: Path = typer.Argument(..., metavar="RESULTS", help="A results file written by `scan`."),
    policy: Path = typer.Option(..., "--policy", help="The policy (TOML; see docs/policy.md)."),
    sarif: Optional[Path] = typer.Option(None, "--sarif", help="Write the verdict as SARIF 2.1.0 here."),
    junit: Optional[Path] = typer.Option(None, "--junit", help="Write one JUnit test case per change and rule here."),
    markdown: Optional[Path] = typer.Option(None, "--markdown", help="Write the verdict as Markdown here."),
    previous: Optional[Path] = typer.Option(
        None, "--previous", help="The previous release: its source folder, or the change list `harvest` drafted "
        "from it (for the warned_before rule)."
    ),
    head_source: Optional[Path] = typer.Option(
        None, "--head-source", help="The library's source as it will ship: SARIF results point at its lines."
    ),
    source_root: Optional[Path] = typer.Option(
        None, "--source-root", help="The library's repository root; SARIF paths are relative to it (default: here)."
    ),
) -> None:
    """Check the results against a policy: exit 0 when every rule holds, 1 when one fails, 2 on bad input."""
    from impactscope.gate.junit import to_junit
    from impactscope.gate.markdown import to_markdown
    from impactscope.gate.run import run_gate
    from impactscope.gate.sarif import to_sarif
    from impactscope.gate.verdict import to_terminal

    run = _guarded(lambda: run_gate(results, policy, previous=previous, head_source=head_source,
                                    source_root=source_root))
    for path, render in ((sarif, to_sarif), (junit, to_junit), (markdown, to_markdown)):
        if path is not None:
            _emit(render(run), path)
    sys.stdout.write(to_terminal(run))
    raise typer.Exit(0 if run.verdict.holds else 1)

def main() -> None:
    """Run the command line. An exception that is not an input error is a bug of impactscope's:
    one line that says so and asks for a report, exit 3; `--debug` shows the traceback."""
    debug = "--debug" in sys.argv[1:]
    if debug:
        sys.argv.remove("--debug")
    try:
        app()
    except Exception as exc:  # noqa: BLE001 - input errors were handled by the commands (exit 2)
        if debug:
            raise
        message = " ".join(str(exc).split())[:300]
        typer.echo(
            f"impactscope: internal error: {type(exc).__name__}{': ' + message if message else ''}. "
            "This is a bug in impactscope, not a problem with your input: please report it to the "
            "impactscope maintainers with the command you ran (add --debug to see the traceback)",
            err=True,
        )
        raise SystemExit(3) from None


if __name__ == "__main__":
    main()
