"""Templates for the demo corpus.

Each template is a small function that writes lines of downstream code into a `SourceBuilder`
and records, on the line it writes, what the resolver is expected to report there (`Expect`).
Line numbers therefore come from the builder, never from counting by hand. Templates draw
every choice from the `random.Random` in their `Ctx`, so a seed fixes the output.

The expectations follow the resolver semantics of the demo issue:

- a finding is keyed by (file, cell, line, change); two sites of one change on one line are one;
- for parameter and default kinds (HF-4, HF-5, HF-6) only calls are sites, on the line where the
  callee expression starts; for every other kind each reference is a site;
- a receiver that cannot be known gives `inferred` when the member is a class's member whose last
  name is not an attribute of a builtin type nor a builtin function name, else `possible` (a
  module's function reached through an unknown receiver is some object's method); a call whose
  `*args`/`**kwargs` could decide a parameter match is `possible` and marked unknowable.

All the names here (the projects' words, columns, paths) are invented for the demo.
"""

from __future__ import annotations

import json
import random
import re
from collections import Counter
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from types import MappingProxyType
from typing import Mapping

RESOLVED = "resolved"
INFERRED = "inferred"
POSSIBLE = "possible"

#: The last name of each demo change's member: what a site's line must show.
MEMBER_NAMES: Mapping[str, str] = MappingProxyType(
    {
        "HF-1": "stack_rows",
        "HF-2": "stack",
        "HF-3": "scatter_grid",
        "HF-4": "sort_by",
        "HF-5": "pivot",
        "HF-6": "read_table",
        "HF-7": "describe",
        "HF-8": "copy",
    }
)

#: Module aliases downstream code gives heronframe (`import heronframe as <alias>`).
MODULE_ALIASES: tuple[str, ...] = ("hf", "hf", "hf", "heron", "hfr", "hframe", "whatever", "H", "frames")

#: Names the templates use with a fixed meaning; `Namer.fresh` never hands them out.
RESERVED_NAMES: frozenset[str] = frozenset(
    {
        *MODULE_ALIASES,
        "heronframe", "Table", "Store", "GroupedTable", "Optional", "typing", "importlib", "copy", "np", "pd",
        "numpy", "pandas", "h", "helpers", "load_table", "load_clean", "describe", "stack",
        "scatter_grid", "read_table", "plotting", "self", "cls", "other", "parts", "path",
        "tables", "opts", "keys", "cols", "extra", "args", "kw", "left", "right", "tbl", "item",
        "row", "fetch_remote", "fetch_latest", "main", "json", "os", "sys", "Path", "print",
        "list", "dict", "len", "sum", "min", "max", "sorted", "annotations", "summary", "clone",
        "batch", "backend", "mode", "name", "rows",
    }
)

TABLE_WORDS: tuple[str, ...] = (
    "tides", "sales", "counts", "readings", "visits", "samples", "catch", "stations", "nests",
    "sightings", "transects", "plots", "quadrats", "soundings", "gauges", "flows", "banding",
    "census", "logbook", "survey",
)
COLUMNS: tuple[str, ...] = (
    "station", "depth", "salinity", "count", "species", "month", "region", "site_id",
    "temp_c", "visits", "observer", "tide_m", "year", "week", "habitat",
)
PLACE_WORDS: tuple[str, ...] = (
    "north_bay", "saltmarsh", "east_spit", "old_pier", "reedbed", "mudflat", "harbour",
    "lagoon", "west_dune", "estuary", "kelp_bed", "shingle",
)
SEPARATORS: tuple[str, ...] = (";", "|", "\\t", ",")
STORE_KEYS: tuple[str, ...] = ("daily", "weekly", "raw", "clean", "latest", "archive", "qc")


@dataclass(frozen=True)
class Expect:
    """What the resolver should report on the line it is attached to."""

    change: str
    rule: str
    confidence: str = RESOLVED
    token: str = ""
    unknowable: bool = False

    @property
    def word(self) -> str:
        """The identifier the line must contain: the member's last name unless an alias is used."""
        return self.token or MEMBER_NAMES[self.change]


def res(change: str, rule: str, token: str = "") -> Expect:
    return Expect(change, rule, RESOLVED, token)


#: Demo changes whose member is a module's function, not a class's member.
MODULE_MEMBERS: frozenset[str] = frozenset({"HF-2", "HF-3", "HF-6"})


def inf(change: str, rule: str, token: str = "") -> Expect:
    """An unknown receiver with a name specific to the library."""
    return Expect(change, rule, POSSIBLE if change in MODULE_MEMBERS else INFERRED, token)


def pos(change: str, rule: str, token: str = "", *, unknowable: bool = False) -> Expect:
    return Expect(change, rule, POSSIBLE, token, unknowable)


def renamed(old: str, new: str) -> Callable[[str], str]:
    """The expected rewrite of a line: the first `old` spelled `new`."""

    def change(text: str) -> str:
        if old not in text:
            raise ValueError(f"{old!r} is not in {text!r}")
        return text.replace(old, new, 1)

    return change


def sep_passed_first(text: str) -> str:
    """As `sep_passed`, for the first call of a chain: `read_table("...")` gets `sep=","`."""
    open_ = text.index("read_table(")
    close = text.index(")", open_)
    return text[:close] + ', sep=","' + text[close:]


def sep_passed(text: str) -> str:
    """The expected rewrite of a call that relied on `sep`'s old default: `sep=","` passed last."""
    close = text.rindex(")")
    return text[:close] + ', sep=","' + text[close:]


class SourceBuilder:
    """Lines of one module or one notebook cell, with the expectations attached to them."""

    def __init__(self) -> None:
        self._lines: list[str] = []
        self._sites: list[tuple[int, Expect]] = []
        self._legacy: list[tuple[int, Expect]] = []
        self._becomes: list[tuple[int, str]] = []
        # line, old module, the module it moved to, and whether the line names it in a string
        self._module_imports: list[tuple[int, str, str, bool]] = []
        self.group: list[SourceBuilder] = [self]  # the builders of one module (a notebook's code cells)

    @property
    def next_line(self) -> int:
        return len(self._lines) + 1

    def line(self, text: str = "", *expects: Expect, becomes: Callable[[str], str] | None = None) -> int:
        """Append one line; `expects` are findings on it. Returns its 1-based number.

        `becomes` gives the text `impactscope rewrite` is expected to turn the line into (with
        the demo change list plus the old defaults `inplace = false` and `sep = ","`); a line
        without it stays as it is."""
        if "\n" in text:
            raise ValueError(f"one line at a time: {text!r}")
        self._lines.append(text)
        number = len(self._lines)
        self._sites.extend((number, expect) for expect in expects)
        if becomes is not None:
            self._becomes.append((number, becomes(text)))
        return number

    def module_import(self, old: str, new: str) -> int:
        """`import old`, where `old` is a module whose members moved to `new`. When the rewrite
        turns a chain `old.member` of this module into `new.member`, the import follows (see
        `rewrites`)."""
        number = self.line(f"import {old}")
        self._module_imports.append((number, old, new, False))
        return number

    def string_import(self, text: str, old: str, new: str) -> int:
        """A line importing `old` by a string literal `"old"` (`__import__("old")`, ...). The
        string follows the chains as `import old` does when nothing reads `old` after the
        rewrite; when something does, the chains stay as they are (see `rewrites`)."""
        number = self.line(text)
        self._module_imports.append((number, old, new, True))
        return number

    def legacy(self, text: str, *expects: Expect) -> int:
        """Append a line of Python 2 code; `expects` are textual uses listed under `legacy`."""
        number = self.line(text)
        self._legacy.extend((number, expect) for expect in expects)
        return number

    def lines(self, *texts: str) -> None:
        for text in texts:
            self.line(text)

    def gap(self, count: int = 1) -> None:
        """Blank lines between top-level blocks (none at the very top)."""
        if self._lines:
            for _ in range(count):
                self.line("")

    @property
    def sites(self) -> tuple[tuple[int, Expect], ...]:
        return tuple(self._sites)

    @property
    def legacy_sites(self) -> tuple[tuple[int, Expect], ...]:
        return tuple(self._legacy)

    @property
    def rewrites(self) -> tuple[tuple[int, str], ...]:
        """(line, expected text after the rewrite) of the lines a rewrite changes. An
        `import old` of `module_import` becomes `import new` when a chain through `old` is
        rewritten in the module and no line reads `old` after the rewrite, and gains an
        `import new` after it when one still does; a `string_import` names `new` in its string
        when nothing reads `old`, and when something does the chains through `old` of the
        module are not rewritten (docs/rewrite.md)."""
        out = list(self._becomes)
        for number, old, new, by_string in self._module_imports:
            rewritten, read = _chains_after(self.group, old, new)
            if rewritten and by_string and not read:
                out.append((number, self._lines[number - 1].replace(f'"{old}"', f'"{new}"')))
            elif rewritten and not by_string and not _withdrawn(self.group, old, new):
                out.append((number, f"import {new}" if not read else f"import {old}\nimport {new}"))
        for old, new in {(o, n) for b in self.group for _, o, n, _ in b._module_imports}:
            if _withdrawn(self.group, old, new):
                chain, moved = _chain_pattern(old), re.compile(rf"\w\.{re.escape(new.partition('.')[2])}\.")
                out = [(n, t) for n, t in out if not (chain.search(self._lines[n - 1]) and moved.search(t))]
        return tuple(sorted(out))

    @property
    def source_lines(self) -> tuple[str, ...]:
        return tuple(self._lines)

    def text(self) -> str:
        return "".join(f"{line}\n" for line in self._lines)


def _chain_pattern(module: str) -> re.Pattern[str]:
    return re.compile(rf"\w\.{re.escape(module.partition('.')[2])}\b")


def _withdrawn(group: Sequence[SourceBuilder], old: str, new: str) -> bool:
    """Whether the chains through `old` go to review: a string import of `old` while a line
    still reads it."""
    by_string = any(o == old and s for b in group for _, o, _, s in b._module_imports)
    return by_string and _chains_after(group, old, new)[1]


def _chains_after(group: Sequence[SourceBuilder], old: str, new: str) -> tuple[bool, bool]:
    """Whether a chain `x.<old's rest>.member` of `group` becomes `x.<new's rest>.member`,
    and whether a line still reads `x.<old's rest>` after the rewrite (imports and comments
    aside; the demo writes no `#` inside strings)."""
    old_chain = _chain_pattern(old)
    new_chain = re.compile(rf"\w\.{re.escape(new.partition('.')[2])}\.")
    rewritten = read = False
    for b in group:
        after = dict(b._becomes)
        imports = {number for number, *_ in b._module_imports}
        for number, text in enumerate(b.source_lines, start=1):
            code = after.get(number, text).split("#")[0]
            if number in imports or code.lstrip().startswith(("import ", "from ")):
                continue
            rewritten |= number in after and bool(old_chain.search(text)) and bool(new_chain.search(code))
            read |= bool(old_chain.search(code))
    return rewritten, read


class Namer:
    """Hands out identifiers unique within one module or notebook."""

    def __init__(self, reserved: Sequence[str] = ()) -> None:
        self._used: set[str] = set(RESERVED_NAMES) | set(reserved)

    def reserve(self, name: str) -> None:
        self._used.add(name)

    def fresh(self, base: str) -> str:
        if base not in self._used:
            self._used.add(base)
            return base
        index = 2
        while f"{base}{index}" in self._used:
            index += 1
        name = f"{base}{index}"
        self._used.add(name)
        return name


@dataclass
class Ctx:
    """What a template needs: the random source, the file's namer, the module alias, a tally."""

    rng: random.Random
    names: Namer
    tally: Counter[str]
    mod: str = "hf"

    def fresh(self, base: str) -> str:
        return self.names.fresh(base)

    def choice(self, options: Sequence[str]) -> str:
        return options[self.rng.randrange(len(options))]

    def chance(self, p: float) -> bool:
        return self.rng.random() < p

    def note(self, rule: str) -> None:
        """Count an instance of a rule that produces no finding (a negative case)."""
        self.tally[rule] += 1

    def table(self) -> str:
        return self.fresh(self.choice(TABLE_WORDS))

    def col(self) -> str:
        return self.choice(COLUMNS)

    def cols(self, count: int) -> list[str]:
        return self.rng.sample(COLUMNS, count)

    def path(self, suffix: str = ".csv") -> str:
        return f"data/{self.choice(PLACE_WORDS)}_{self.rng.randint(2016, 2024)}{suffix}"

    def sep(self) -> str:
        return self.choice(SEPARATORS)


Snippet = Callable[[SourceBuilder, Ctx], None]
# text, expectation, rule noted when there is none[, the line's expected rewrite]
Line = tuple[str, Expect | None, str] | tuple[str, Expect | None, str, Callable[[str], str]]


def _emit(b: SourceBuilder, c: Ctx, lines: Sequence[Line]) -> None:
    for text, expect, note, *becomes in lines:
        after = becomes[0] if becomes else None
        if expect is not None:
            b.line(text, expect, becomes=after)
        else:
            b.line(text, becomes=after)
            if note:
                c.note(note)


def _pick(c: Ctx, pool: Sequence[Sequence[Line]], low: int, high: int, must: int = 0) -> list[Sequence[Line]]:
    """`must` entries from the front of the pool that carry a positive, then random others."""
    first = [pool[c.rng.randrange(must)]] if must else []
    rest = [entry for entry in pool if entry not in first]
    count = max(0, c.rng.randint(low, high) - len(first))
    chosen = first + c.rng.sample(rest, min(count, len(rest)))
    c.rng.shuffle(chosen)
    return chosen


# ---------------------------------------------------------------------------------------------
# Headers: how a module binds heronframe. Each returns the alias and writes one probe site that
# carries the header's rule, so every binding style is exercised by at least one finding.


def _probe(b: SourceBuilder, c: Ctx, alias: str, rule: str) -> None:
    kind = c.rng.randrange(4)
    if kind == 0:
        b.line(f"{c.fresh('combined')} = {alias}.stack({c.fresh('batches')})", res("HF-2", rule))
    elif kind == 1:
        b.line(f'{c.fresh("raw")} = {alias}.read_table("{c.path()}")', res("HF-6", rule), becomes=sep_passed)
    elif kind == 2:
        b.line(f'{c.fresh("empty")} = {alias}.Table({{"{c.col()}": []}}).copy()', res("HF-8", rule))
    else:
        b.line(f'{alias}.plotting.scatter_grid({alias}.Table(), "{c.col()}", "{c.col()}")', res("HF-3", rule), becomes=renamed(".plotting.", ".viz."))


HEADER_KINDS: tuple[str, ...] = (
    "import-as", "import-as", "import-as", "import-as", "import", "import-sub", "importlib",
    "dunder", "dunder-sub", "try",
)


def header(b: SourceBuilder, c: Ctx, kind: str) -> str:
    """Bind heronframe at module level in the style `kind`; returns the name bound."""
    if kind == "import-as":
        alias = c.choice(MODULE_ALIASES)
        b.line(f"import heronframe as {alias}")
        rule = "alias-import-as"
    elif kind == "import":
        alias = "heronframe"
        b.line("import heronframe")
        rule = "alias-import-plain"
    elif kind == "import-sub":
        alias = "heronframe"
        b.module_import("heronframe.plotting", "heronframe.viz")
        c.note("import-nonsite")
        rule = "alias-import-submodule"
    elif kind == "importlib":
        alias = c.choice(MODULE_ALIASES)
        b.line("import importlib")
        b.line("")
        b.line(f'{alias} = importlib.import_module("heronframe")')
        rule = "alias-importlib"
    elif kind == "dunder":
        alias = c.choice(MODULE_ALIASES)
        b.line(f'{alias} = __import__("heronframe")')
        rule = "alias-dunder-import"
    elif kind == "dunder-sub":
        # The Language Reference: __import__("a.b") returns the top-level package `a`.
        alias = c.choice(MODULE_ALIASES)
        b.string_import(f'{alias} = __import__("heronframe.plotting")', "heronframe.plotting", "heronframe.viz")
        rule = "alias-dunder-import-sub"
    elif kind == "try":
        alias = c.choice(MODULE_ALIASES)
        b.lines("try:", f"    import heronframe as {alias}", "except ImportError:  # optional dependency", f"    {alias} = None")
        rule = "alias-try-except"
    else:
        raise ValueError(f"unknown header kind {kind!r}")
    c.names.reserve(alias)
    c.mod = alias
    b.line("")
    _probe(b, c, alias, rule)
    return alias


def prologue(b: SourceBuilder, c: Ctx, title: str) -> None:
    """Module docstring, a __future__ import and some standard imports, each optional."""
    if c.chance(0.6):
        mention = " with heronframe" if c.chance(0.4) else ""
        b.line(f'"""{title}: {c.choice(TABLE_WORDS)} processing{mention}."""')
        if mention:
            c.note("never-docstring")
    if c.chance(0.3):
        b.line("from __future__ import annotations")
    if b.source_lines:
        b.line("")
    for module in c.rng.sample(["os", "json", "sys"], c.rng.randint(0, 2)):
        b.line(f"import {module}")
    if c.chance(0.3):
        b.line("from pathlib import Path")


# ---------------------------------------------------------------------------------------------
# Body templates: module-level code that uses `c.mod`, the module's heronframe alias.


def s_read_then_stack(b: SourceBuilder, c: Ctx) -> None:
    m, t, u = c.mod, c.table(), c.table()
    b.line(f'{t} = {m}.read_table("{c.path()}")', res("HF-6", "default-nosep"), becomes=sep_passed)
    if c.chance(0.5):
        b.line(f'{u} = {m}.read_table("{c.path()}", sep="{c.sep()}")')
        c.note("default-sep-keyword")
    else:
        b.line(f'{u} = {m}.read_table("{c.path()}", "{c.sep()}")')
        c.note("default-sep-positional")
    b.line(f"{t}.stack_rows({u})", res("HF-1", "typeflow-read"), becomes=renamed("stack_rows", "append_rows"))


def s_stack_call(b: SourceBuilder, c: Ctx) -> None:
    f = c.fresh(c.choice(["combine", "merge_batches", "concat_days", "join_surveys"]))
    b.line(f"def {f}(parts):")
    b.line(f"    return {c.mod}.stack(parts)", res("HF-2", "chain"))


def s_plot_chain(b: SourceBuilder, c: Ctx) -> None:
    f = c.fresh(c.choice(["plot_overview", "draw_grid", "quick_look"]))
    x, y = c.cols(2)
    b.line(f"def {f}(tbl):")
    b.line(f'    {c.mod}.plotting.scatter_grid(tbl, "{x}", "{y}")', res("HF-3", "chain"), becomes=renamed(".plotting.", ".viz."))
    b.line("    return tbl")


def s_from_import_stack(b: SourceBuilder, c: Ctx) -> None:
    variant = c.rng.randrange(3)
    if variant == 0:
        name = "stack"
        b.line("from heronframe import stack", res("HF-2", "import-site"))
    elif variant == 1:
        name = c.fresh(c.choice(["stack_tables", "hstack", "glue"]))
        b.line(f"from heronframe import stack as {name}", res("HF-2", "import-site"))
    else:
        name = "stack"
        b.line("from heronframe import Table, stack", res("HF-2", "import-site"))
    f = c.fresh(c.choice(["join_pair", "append_batch", "merge_two"]))
    b.line("")
    b.line("")
    b.line(f"def {f}(left, right):")
    b.line(f"    return {name}([left, right])", res("HF-2", "alias-from-import", token=name))


def s_from_import_plot(b: SourceBuilder, c: Ctx) -> None:
    if c.chance(0.5):
        name = "scatter_grid"
        b.line("from heronframe.plotting import scatter_grid", res("HF-3", "import-site"), becomes=renamed("plotting", "viz"))
    else:
        name = c.fresh(c.choice(["grid_plot", "sgrid", "plot_points"]))
        b.line(f"from heronframe.plotting import scatter_grid as {name}", res("HF-3", "import-site"),
               becomes=renamed("plotting", "viz"))
    f = c.fresh(c.choice(["show_points", "preview", "plot_pair"]))
    x, y = c.cols(2)
    b.line("")
    b.line("")
    b.line(f"def {f}(tbl):")
    b.line(f'    return {name}(tbl, "{x}", "{y}")', res("HF-3", "alias-from-import", token=name))


def s_import_plotting(b: SourceBuilder, c: Ctx) -> None:
    variant = c.rng.randrange(3)
    x, y = c.cols(2)
    f = c.fresh(c.choice(["render", "plot_station", "grid_view"]))
    if variant == 0:
        b.module_import("heronframe.plotting", "heronframe.viz")
        callee = "heronframe.plotting"
    elif variant == 1:
        callee = c.fresh(c.choice(["hp", "hplot", "plots"]))
        b.line(f"import heronframe.plotting as {callee}")
    elif c.chance(0.5):
        callee = "plotting"
        b.line("from heronframe import plotting")
    else:
        callee = c.fresh("hfplot")
        b.line(f"from heronframe import plotting as {callee}")
    c.note("import-nonsite")
    b.line("")
    b.line("")
    b.line(f"def {f}(tbl):")
    b.line(f'    return {callee}.scatter_grid(tbl, "{x}", "{y}")', res("HF-3", "chain"),
           becomes=renamed(".plotting.", ".viz.") if variant == 0 else None)


def s_sort_params(b: SourceBuilder, c: Ctx) -> None:
    f, t, col = c.fresh(f"rank_{c.choice(TABLE_WORDS)}"), c.table(), c.col()
    b.line(f"def {f}(path):")
    b.line(f'    {t} = {c.mod}.read_table(path, sep="{c.sep()}")')
    c.note("default-sep-keyword")
    pool: list[list[Line]] = [
        [(f'    {t}.sort_by("{col}", inplace=True)', res("HF-4", "param-keyword"), "")],
        [(f'    {t}.sort_by("{col}", False, True)', res("HF-4", "param-positional"), "")],
        [(f'    {t}.sort_by("{col}", ascending=False, inplace=False)', res("HF-4", "param-keyword"), "",
          renamed(", inplace=False", ""))],
        [
            (f"    {t}.sort_by(", res("HF-4", "multiline-call"), ""),
            (f'        "{col}",', None, ""),
            ("        inplace=True,", None, ""),
            ("    )", None, ""),
        ],
        [(f'    {t}.sort_by("{col}")', None, "param-nomatch")],
        [(f'    {t}.sort_by("{col}", False)', None, "param-nomatch")],
        [(f'    {t}.sort_by(column="{col}", ascending=True)', None, "param-nomatch")],
    ]
    for entry in _pick(c, pool, 2, 4, must=4):
        _emit(b, c, entry)
    b.line(f"    return {t}")


def s_sort_star(b: SourceBuilder, c: Ctx) -> None:
    f, t, col = c.fresh(f"order_{c.choice(TABLE_WORDS)}"), c.table(), c.col()
    b.line(f"def {f}(path, keys, **opts):")
    b.line(f'    {t} = {c.mod}.read_table(path, sep="{c.sep()}")')
    pool: list[list[Line]] = [
        [(f'    {t}.sort_by("{col}", **opts)', pos("HF-4", "param-star", unknowable=True), "")],
        [(f"    {t}.sort_by(*keys)", pos("HF-4", "param-star", unknowable=True), "")],
        [(f'    {t}.sort_by("{col}", ascending=False, **opts)', pos("HF-4", "param-star", unknowable=True), "")],
        [(f"    {t}.sort_by(*keys, **opts)", pos("HF-4", "param-star", unknowable=True), "")],
        [(f'    {t}.sort_by("{col}", inplace=True, **opts)', res("HF-4", "param-star-decided"), "")],
        [(f'    {t}.sort_by("{col}", True, False, *keys)', res("HF-4", "param-star-decided"), "")],
        [(f"    {t}.sort_by(*keys, inplace=True)", res("HF-4", "param-star-decided"), "")],
    ]
    for entry in _pick(c, pool, 2, 3, must=4):
        _emit(b, c, entry)
    b.line(f"    return {t}")


def s_pivot(b: SourceBuilder, c: Ctx) -> None:
    f, t = c.fresh(f"reshape_{c.choice(TABLE_WORDS)}"), c.table()
    i, k, v = c.cols(3)
    b.line(f"def {f}({t}: {c.mod}.Table, cols, extra):")
    w = c.fresh("wide")
    pool: list[list[Line]] = [
        [(f'    {w} = {t}.pivot("{i}", "{k}", "{v}", 0)', res("HF-5", "param-positional"), "")],
        [(f'    {w} = {t}.pivot(index="{i}", columns="{k}", values="{v}", fill=0.0)', res("HF-5", "param-keyword"), "",
          renamed("fill=", "fill_value="))],
        [
            (f"    {w} = {t}.pivot(", res("HF-5", "multiline-call"), ""),
            (f'        "{i}",', None, ""),
            (f'        "{k}",', None, ""),
            (f'        values="{v}",', None, ""),
            ("        fill=0,", None, "", renamed("fill=", "fill_value=")),
            ("    )", None, ""),
        ],
        [(f'    {w} = {t}.pivot("{i}", "{k}", "{v}")', None, "param-nomatch")],
        [(f"    {w} = {t}.pivot(*cols)", pos("HF-5", "param-star", unknowable=True), "")],
        [(f'    {w} = {t}.pivot("{i}", "{k}", **extra)', pos("HF-5", "param-star", unknowable=True), "")],
        [(f'    {w} = {t}.pivot("{i}", "{k}", "{v}", fill=None, **extra)', res("HF-5", "param-star-decided"), "")],
    ]
    for entry in _pick(c, pool, 2, 3, must=3):
        _emit(b, c, entry)
    b.line(f"    return {w}")


def s_read_variants(b: SourceBuilder, c: Ctx) -> None:
    f = c.fresh(f"load_{c.choice(TABLE_WORDS)}")
    b.line(f"def {f}(path, args, kw):")
    a = c.fresh("frame")
    s = c.sep()
    pool: list[list[Line]] = [
        [(f"    {a} = {c.mod}.read_table(path, header=True)", res("HF-6", "default-nosep"), "", sep_passed)],
        [
            (f"    {a} = {c.mod}.read_table(", res("HF-6", "multiline-call"), ""),
            ("        path,", None, ""),
            ("        header=False,", None, "", lambda text: text + '\n        sep=",",'),
            ("    )", None, ""),
        ],
        [(f"    {a} = {c.mod}.read_table(path, **kw)", pos("HF-6", "default-star", unknowable=True), "")],
        [(f"    {a} = {c.mod}.read_table(*args)", pos("HF-6", "default-star", unknowable=True), "")],
        [(f'    {a} = {c.mod}.read_table(path, "{s}")', None, "default-sep-positional")],
        [(f'    {a} = {c.mod}.read_table(path, sep="{s}", header=False)', None, "default-sep-keyword")],
        [(f'    {a} = {c.mod}.read_table(path, "{s}", *args)', None, "default-star-decided")],
        [(f'    {a} = {c.mod}.read_table(path, sep="{s}", **kw)', None, "default-star-decided")],
    ]
    for entry in _pick(c, pool, 2, 4, must=4):
        _emit(b, c, entry)
    b.line(f"    return {a}")


def s_func_alias(b: SourceBuilder, c: Ctx) -> None:
    m, rt, t = c.mod, c.fresh(c.choice(["rt", "reader", "load"])), c.table()
    b.line(f"{rt} = {m}.read_table")
    c.note("param-ref-no-call")
    b.line(f'{t} = {rt}("{c.path()}")', res("HF-6", "alias-assign-func", token=rt), becomes=sep_passed)
    b.line(f"{t}.describe()", res("HF-7", "typeflow-alias-call"))
    if c.chance(0.6):
        st, r = c.fresh(c.choice(["stack_fn", "concat", "glue_all"])), c.fresh("merged")
        b.line(f"{st} = {m}.stack", res("HF-2", "alias-assign-ref"))
        b.line(f"{r} = {st}([{t}, {t}])", res("HF-2", "alias-assign-func", token=st))
    if c.chance(0.5):
        sg = c.fresh(c.choice(["grid", "plot_fn"]))
        x, y = c.cols(2)
        b.line(f"{sg} = {m}.plotting.scatter_grid", res("HF-3", "alias-assign-ref"), becomes=renamed(".plotting.", ".viz."))
        b.line(f'{sg}({t}, "{x}", "{y}")', res("HF-3", "alias-assign-func", token=sg))


def s_class_alias(b: SourceBuilder, c: Ctx) -> None:
    big = c.fresh(c.choice(["T", "HTable", "Frame"]))
    b.line(f"from heronframe import Table as {big}")
    x, y, col = c.table(), c.table(), c.col()
    b.line(f'{x} = {big}({{"{col}": [1, 2, 3]}})')
    b.line(f"{x}.describe()", res("HF-7", "alias-from-as"))
    other = c.fresh("TableType")
    b.line(f"{other} = {c.mod}.Table")
    b.line(f"{y} = {other}()")
    b.line(f"{c.fresh('dup')} = {y}.copy()", res("HF-8", "alias-assign-class"))


def s_annotations(b: SourceBuilder, c: Ctx) -> None:
    m = c.mod
    variants = c.rng.sample(range(5), c.rng.randint(2, 3))
    for index, variant in enumerate(variants):
        t = c.table()
        if index:
            b.gap(2)
        if variant == 0:
            b.line(f"def {c.fresh('summarize')}({t}: {m}.Table) -> None:")
            b.line(f"    print({t}.describe())", res("HF-7", "typeflow-annot-param"))
        elif variant == 1:
            b.line(f'def {c.fresh("extend")}({t}: "{m}.Table", other):')
            b.line(f"    return {t}.stack_rows(other)", res("HF-1", "typeflow-annot-str"), becomes=renamed("stack_rows", "append_rows"))
        elif variant == 2:
            if c.chance(0.5):
                b.line("from typing import Optional")
                ann = f"Optional[{m}.Table]"
            else:
                b.line("import typing")
                ann = f"typing.Optional[{m}.Table]"
            b.line("")
            b.line("")
            b.line(f"def {c.fresh('snapshot')}({t}: {ann} = None):")
            b.line(f"    if {t} is None:")
            b.line("        return None")
            b.line(f"    return {t}.copy()", res("HF-8", "typeflow-optional"))
        elif variant == 3:
            b.line(f"def {c.fresh('profile')}({t}: {m}.Table | None) -> object:")
            b.line(f"    if {t} is None:")
            b.line("        return None")
            b.line(f"    return {t}.describe()", res("HF-7", "typeflow-union"))
        else:
            b.line(f"{t}: {m}.Table = fetch_latest()")
            b.line(f"{t}.stack_rows({t})", res("HF-1", "typeflow-annassign"), becomes=renamed("stack_rows", "append_rows"))


def s_store(b: SourceBuilder, c: Ctx) -> None:
    m, s, t, col = c.mod, c.fresh("store"), c.table(), c.col()
    k1, k2 = c.rng.sample(STORE_KEYS, 2)
    where = f"stores/{c.choice(PLACE_WORDS)}"
    if c.chance(0.6):
        b.line(f'with {m}.open_store("{where}") as {s}:')
        b.line(f'    {t} = {s}.load("{k1}")')
        b.line(f"    {t}.describe()", res("HF-7", "typeflow-with"))
        b.line(f'    {s}.load("{k2}").copy()', res("HF-8", "typeflow-store-load"))
    else:
        s2 = c.fresh("store")
        b.line(f'{s} = {m}.Store("{where}")')
        b.line(f'{s}.load("{k1}").describe()', res("HF-7", "typeflow-ctor"))
        b.line(f'{s2} = {m}.open_store("{where}")')
        b.line(f'{t} = {s2}.load("{k2}").sort_by("{col}")')
        c.note("param-nomatch")
        b.line(f"{t}.copy()", res("HF-8", "typeflow-store-load"))


def s_chain(b: SourceBuilder, c: Ctx) -> None:
    m, col = c.mod, c.col()
    options = c.rng.sample(range(4), c.rng.randint(1, 3))
    for option in options:
        if option == 0:
            b.line(
                f'{c.fresh("joined")} = {m}.read_table("{c.path()}").filter_rows(lambda row: row["{col}"]).stack_rows({m}.Table())',
                res("HF-6", "default-nosep"),
                res("HF-1", "typeflow-chain"),
                becomes=lambda text: sep_passed_first(renamed("stack_rows", "append_rows")(text)),
            )
        elif option == 1:
            b.line(
                f'{c.fresh("ordered")} = {m}.read_table("{c.path()}", sep="{c.sep()}").sort_by("{col}").copy()',
                res("HF-8", "typeflow-chain"),
            )
        elif option == 2:
            b.line(
                f'{c.fresh("stats")} = {m}.open_store("stores/{c.choice(PLACE_WORDS)}").load("{c.choice(STORE_KEYS)}").describe()',
                res("HF-7", "typeflow-chain"),
            )
        else:
            b.line(f'{c.fresh("blank")} = {m}.Table({{"{col}": [0]}}).copy()', res("HF-8", "typeflow-ctor"))


def s_local_import(b: SourceBuilder, c: Ctx) -> None:
    f = c.fresh(c.choice(["lazy_merge", "late_join", "on_demand"]))
    if c.chance(0.6):
        a, t = c.fresh(c.choice(["hf_local", "hfl", "lazy_hf"])), c.table()
        b.line(f"def {f}(path, other):")
        b.line(f"    import heronframe as {a}")
        b.line("")
        b.line(f'    {t} = {a}.read_table(path, sep="{c.sep()}")')
        b.line(f"    return {t}.stack_rows(other)", res("HF-1", "alias-local-import"), becomes=renamed("stack_rows", "append_rows"))
    else:
        b.line(f"def {f}(left, right):")
        b.line("    from heronframe import stack", res("HF-2", "import-site"))
        b.line("")
        b.line("    return stack([left, right])", res("HF-2", "alias-local-import"))


def _class_base(b: SourceBuilder, c: Ctx) -> str:
    if c.chance(0.4):
        b.line("from heronframe import Table")
        b.line("")
        b.line("")
        return "Table"
    return f"{c.mod}.Table"


def s_subclass_describe(b: SourceBuilder, c: Ctx) -> None:
    base = _class_base(b, c)
    name = c.fresh(c.choice(["StationTable", "SurveyTable", "TidyTable", "LedgerTable"]))
    b.line(f"class {name}({base}):")
    c.note("class-base")
    b.line(f'    """A {c.choice(TABLE_WORDS)} table with a house summary."""')
    b.line("")
    b.line("    def describe(self):", res("HF-7", "override"))
    b.line("        summary = super().describe()", res("HF-7", "super-call"))
    b.line(f'        summary["source"] = "{c.choice(PLACE_WORDS)}"')
    b.line("        return summary")
    b.line("")
    b.line("    def with_extra(self, other):")
    b.line("        self.stack_rows(other)", res("HF-1", "self-call"), becomes=renamed("stack_rows", "append_rows"))
    b.line("        return self.describe()")
    c.note("self-overridden")
    b.line("")
    b.line("")
    x = c.fresh("house")
    b.line(f"{x} = {name}()")
    b.line(f"{x}.copy()", res("HF-8", "subclass-instance"))


def s_subclass_stack_rows(b: SourceBuilder, c: Ctx) -> None:
    base = _class_base(b, c)
    name = c.fresh(c.choice(["AuditTable", "BatchTable", "RollingTable"]))
    b.line(f"class {name}({base}):")
    c.note("class-base")
    b.line("    def stack_rows(self, other):", res("HF-1", "override"))
    b.line("        return super().stack_rows(other)", res("HF-1", "super-call"), becomes=renamed("stack_rows", "append_rows"))
    b.line("")
    b.line("    def stack_twice(self, other):")
    b.line("        self.stack_rows(other)")
    b.line("        return self.stack_rows(other)")
    c.note("self-overridden")
    b.line("")
    b.line("    @classmethod")
    b.line("    def from_parts(cls, parts):")
    if c.chance(0.5):
        b.line("        return cls.copy(parts[0])", res("HF-8", "cls-call"))
    else:
        b.line("        return cls.describe(parts[0])", res("HF-7", "cls-call"))


def s_subclass_copy(b: SourceBuilder, c: Ctx) -> None:
    base = _class_base(b, c)
    name = c.fresh(c.choice(["SnapshotTable", "FrozenTable", "SafeTable"]))
    b.line(f"class {name}({base}):")
    c.note("class-base")
    b.line("    def copy(self):", res("HF-8", "override"))
    b.line("        clone = super().copy()", res("HF-8", "super-call"))
    b.line("        return clone")
    b.line("")
    b.line("    def report(self):")
    b.line("        return self.describe()", res("HF-7", "self-call"))


def s_unknown(b: SourceBuilder, c: Ctx) -> None:
    f = c.fresh(c.choice(["refresh_all", "summarise_batch", "process_uploads", "nightly_job"]))
    col = c.col()
    i, k, v = c.cols(3)
    b.line(f"def {f}(tables, other, opts):")
    x1, x2, x3, y = c.fresh("latest"), c.fresh("latest"), c.fresh("latest"), c.fresh("profiles")
    pool: list[list[Line]] = [
        [("    for tbl in tables:", None, ""), ("        tbl.stack_rows(other)", inf("HF-1", "unknown-loop"), "")],
        [("    tables[0].describe()", inf("HF-7", "unknown-subscript"), "")],
        [(f"    {x1} = fetch_remote()", None, ""), (f'    {x1}.sort_by("{col}", inplace=True)', inf("HF-4", "unknown-call-result"), "")],
        [(f"    {x2} = fetch_remote()", None, ""), (f'    {x2}.pivot("{i}", "{k}", "{v}", fill=0)', inf("HF-5", "unknown-call-result"), "")],
        [(f"    {y} = [item.describe() for item in tables]", inf("HF-7", "unknown-comprehension"), "")],
        [("    other.stack_rows(tables[0])", inf("HF-1", "unknown-param"), "")],
        [("    tables[-1].copy()", pos("HF-8", "unknown-common"), "")],
        [("    other.copy()", pos("HF-8", "unknown-common"), "")],
        [(f"    {x3} = fetch_remote()", None, ""), (f'    {x3}.sort_by("{col}")', None, "unknown-param-nomatch")],
        [(f'    other.sort_by("{col}", **opts)', pos("HF-4", "unknown-star", unknowable=True), "")],
    ]
    for entry in _pick(c, pool, 3, 5, must=6):
        _emit(b, c, entry)
    b.line("    return other")


def s_known_other(b: SourceBuilder, c: Ctx) -> None:
    options = c.rng.sample(range(5), c.rng.randint(2, 3))
    for index, option in enumerate(options):
        if index:
            b.gap()
        if option == 0:
            d, col = c.fresh("settings"), c.col()
            b.line(f'{d} = {{"{col}": 1, "mode": "fast"}}')
            b.line(f"{c.fresh('defaults')} = {d}.copy()")
            b.line(f"{c.fresh('empty_list')} = [].copy()")
            c.note("known-literal-name")
            c.note("known-literal")
        elif option == 1:
            b.line("import copy")
            b.line(f"{c.fresh('snapshot_list')} = copy.copy([1, 2, 3])")
            c.note("known-module")
        elif option == 2:
            a = c.fresh("grid")
            b.line("import numpy as np")
            b.line(f"{a} = np.stack([np.zeros(3), np.ones(3)])")
            b.line(f"{c.fresh('grid_copy')} = np.copy({a})")
            c.note("known-module")
        elif option == 3:
            b.line("import pandas as pd")
            b.line(f'{c.fresh("lookup")} = pd.read_table("{c.path(".tsv")}")')
            c.note("known-module")
        else:
            box, item = c.fresh(c.choice(["Ledger", "Basket", "Tally"])), c.fresh("record")
            b.line(f"class {box}:")
            b.line('    """A plain record list; it is not a heronframe table."""')
            b.line("")
            b.line("    def __init__(self, rows=None):")
            b.line("        self.rows = list(rows or [])")
            b.line("")
            b.line("    def copy(self):")
            b.line(f"        return {box}(self.rows)")
            b.line("")
            b.line("    def describe(self):")
            b.line('        return f"{len(self.rows)} rows"')
            b.line("")
            b.line("    def stack_rows(self, other):")
            b.line(f"        return {box}(self.rows + other.rows)")
            b.line("")
            b.line("")
            b.line(f"{item} = {box}([1, 2])")
            b.line(f"{item}.copy()")
            b.line(f"{item}.describe()")
            b.line(f"{item}.stack_rows({box}([3]))")
            c.note("known-user-class")


def s_strings_comments(b: SourceBuilder, c: Ctx) -> None:
    note = c.fresh("MIGRATION_NOTE")
    b.line(f"# heronframe 3.0: replace {c.mod}.stack(...) and t.stack_rows(o) with Table.append_rows")
    b.line(f'{note} = "see heronframe.read_table(path) and t.describe() in the docs"')
    b.line("")
    b.line("")
    b.line(f"def {c.fresh('migration_hint')}():")
    b.line('    """Wraps heronframe.Table.copy(); call .describe() on the result."""')
    b.line(f"    return {note}  # not {c.mod}.plotting.scatter_grid")
    c.note("never-string-comment")


def s_shadow_param(b: SourceBuilder, c: Ctx) -> None:
    f = c.fresh(c.choice(["merge_with", "combine_using", "stack_via"]))
    b.line(f"def {f}({c.mod}, parts):")
    b.line(f"    return {c.mod}.stack(parts)", inf("HF-2", "shadow-param"))


def s_shadow_comprehension(b: SourceBuilder, c: Ctx) -> None:
    r, loaders, batches = c.fresh("results"), c.fresh("backends"), c.fresh("batches")
    b.line(f"{r} = [{c.mod}.stack({batches}) for {c.mod} in {loaders}]", inf("HF-2", "shadow-comprehension"))


def s_class_body(b: SourceBuilder, c: Ctx) -> None:
    name = c.fresh(c.choice(["Pipeline", "BatchJob", "Loader"]))
    b.line(f"class {name}:")
    b.line(f"    {c.mod} = None")
    b.line(f'    label = "{c.choice(PLACE_WORDS)}"')
    b.line("")
    b.line("    def build(self, parts):")
    b.line(f"        return {c.mod}.stack(parts)", res("HF-2", "class-body-noleak"))


def s_del_alias(b: SourceBuilder, c: Ctx) -> None:
    a, parts = c.fresh(c.choice(["hf_old", "heron_legacy", "hf_tmp"])), c.fresh("batches")
    b.line(f"import heronframe as {a}")
    b.line("")
    b.line(f"{c.fresh('merged')} = {a}.stack({parts})", res("HF-2", "alias-import-as"))
    if c.chance(0.5):
        b.line(f"del {a}")
        rule = "del-alias"
    else:
        b.line(f"{a} = None")
        rule = "none-alias"
    b.line(f"{c.fresh('merged')} = {a}.stack({parts})", inf("HF-2", rule))


def s_method_ref(b: SourceBuilder, c: Ctx) -> None:
    t = c.table()
    b.line(f"{t} = {c.mod}.Table()")
    b.line(f"{c.fresh('summarize_fn')} = {t}.describe", res("HF-7", "ref-no-call"))
    b.line(f"{c.fresh('sorter')} = {t}.sort_by")
    c.note("param-ref-no-call")


# ---------------------------------------------------------------------------------------------
# Cases only the library's own source settles (the surface model): its private defining paths,
# inherited members, `__all__` for star imports, and return annotations not in [types].


def s_private_path(b: SourceBuilder, c: Ctx) -> None:
    """`Table` imported from its defining module, and that module under an alias."""
    mod, o, j, s = c.fresh(c.choice(["ht", "hft", "table_mod"])), c.table(), c.fresh("joined"), c.fresh("stats")
    col = c.col()
    b.line("from heronframe.core.table import Table")
    b.line(f"import heronframe.core.table as {mod}")
    c.note("import-nonsite")
    b.line("")
    b.line(f'{o} = {c.mod}.read_table("{c.path()}", sep="{c.sep()}")')
    c.note("default-sep-keyword")
    b.line(f'{j} = Table({{"{col}": [1, 2]}}).stack_rows({o})', res("HF-1", "surface-private-ctor"), becomes=renamed("stack_rows", "append_rows"))
    b.line(f"{s} = {mod}.Table.describe({o})", res("HF-7", "surface-private-module"))


def s_grouped(b: SourceBuilder, c: Ctx) -> None:
    """Members a library subclass inherits: `group_by` returns a GroupedTable (annotation only)."""
    m, t, g, key = c.mod, c.table(), c.fresh("groups"), c.col()
    b.line(f'{t} = {m}.read_table("{c.path()}", sep="{c.sep()}")')
    c.note("default-sep-keyword")
    b.line(f'{g} = {t}.group_by("{key}")')
    b.line(f"{c.fresh('merged')} = {g}.stack_rows({t})", res("HF-1", "surface-inherited-typeflow"), becomes=renamed("stack_rows", "append_rows"))
    b.line(
        f'{c.fresh("profile")} = {m}.GroupedTable({{"{key}": [1, 1, 2]}}, key="{key}").describe()',
        res("HF-7", "surface-inherited-ctor"),
    )


def s_star_import(b: SourceBuilder, c: Ctx) -> None:
    """`from heronframe import *`: binds exactly the names in heronframe's `__all__`."""
    t = c.table()
    b.line("from heronframe import *  # noqa: F403")
    c.note("import-nonsite")
    b.line("")
    b.line(f'{t} = read_table("{c.path()}")', res("HF-6", "surface-star-import"), becomes=sep_passed)
    b.line(f"{c.fresh('combined')} = stack([{t}, {t}])", res("HF-2", "surface-star-import"))


def s_annotated_chain(b: SourceBuilder, c: Ctx) -> None:
    """Chains through methods the change list's [types] does not list (`head`, `group_by`)."""
    m, t, key = c.mod, c.table(), c.col()
    b.line(
        f'{c.fresh("preview")} = {m}.read_table("{c.path()}", sep="{c.sep()}").head({c.rng.randint(3, 10)}).describe()',
        res("HF-7", "surface-return-chain"),
    )
    c.note("default-sep-keyword")
    b.line(f'{t} = {m}.read_table("{c.path()}", sep="{c.sep()}")')
    c.note("default-sep-keyword")
    b.line(f'{c.fresh("by_key")} = {t}.group_by("{key}").describe()', res("HF-7", "surface-return-chain"))
    b.line(
        f'{c.fresh("sample")} = {m}.open_store("stores/{c.choice(PLACE_WORDS)}").load("{c.choice(STORE_KEYS)}").head(3).copy()',
        res("HF-8", "surface-return-chain"),
    )


def s_subclass_grouped(b: SourceBuilder, c: Ctx) -> None:
    """A user subclass of the library's subclass: overrides and calls of inherited members."""
    if c.chance(0.4):
        b.line("from heronframe import GroupedTable")
        b.line("")
        b.line("")
        base = "GroupedTable"
    else:
        base = f"{c.mod}.GroupedTable"
    name = c.fresh(c.choice(["SiteGroups", "MonthlyGroups", "StationGroups"]))
    b.line(f"class {name}({base}):")
    c.note("class-base")
    b.line(f'    """Groups of {c.choice(TABLE_WORDS)} rows with a house summary."""')
    b.line("")
    b.line("    def describe(self):", res("HF-7", "surface-override"))
    b.line("        summary = super().describe()", res("HF-7", "surface-super-call"))
    b.line('        summary["groups"] = len(self.aggregate(len))')
    b.line("        return summary")
    b.line("")
    b.line("    def extended(self, other):")
    b.line("        return self.stack_rows(other)", res("HF-1", "surface-self-call"), becomes=renamed("stack_rows", "append_rows"))


#: The module-level body templates, drawn from a shuffled deck so each appears often.
LIBRARY_SNIPPETS: Mapping[str, Snippet] = MappingProxyType(
    {
        "read-then-stack": s_read_then_stack,
        "stack-call": s_stack_call,
        "plot-chain": s_plot_chain,
        "from-import-stack": s_from_import_stack,
        "from-import-plot": s_from_import_plot,
        "import-plotting": s_import_plotting,
        "sort-params": s_sort_params,
        "sort-star": s_sort_star,
        "pivot": s_pivot,
        "read-variants": s_read_variants,
        "func-alias": s_func_alias,
        "class-alias": s_class_alias,
        "annotations": s_annotations,
        "store": s_store,
        "chain": s_chain,
        "local-import": s_local_import,
        "subclass-describe": s_subclass_describe,
        "subclass-stack-rows": s_subclass_stack_rows,
        "subclass-copy": s_subclass_copy,
        "unknown": s_unknown,
        "known-other": s_known_other,
        "strings-comments": s_strings_comments,
        "shadow-param": s_shadow_param,
        "shadow-comprehension": s_shadow_comprehension,
        "class-body": s_class_body,
        "del-alias": s_del_alias,
        "method-ref": s_method_ref,
    }
)

#: Templates whose sites only the library's own source settles. They are dealt from a deck of
#: their own with a random source of their own, one at the end of each library module, so the
#: rest of the corpus is what it was before they were added.
SURFACE_SNIPPETS: Mapping[str, Snippet] = MappingProxyType(
    {
        "private-path": s_private_path,
        "grouped": s_grouped,
        "star-import": s_star_import,
        "annotated-chain": s_annotated_chain,
        "subclass-grouped": s_subclass_grouped,
    }
)


def write_snippet(b: SourceBuilder, c: Ctx, name: str) -> None:
    """One body template, separated from what comes before by two blank lines."""
    b.gap(2)
    (LIBRARY_SNIPPETS[name] if name in LIBRARY_SNIPPETS else SURFACE_SNIPPETS[name])(b, c)


# ---------------------------------------------------------------------------------------------
# Re-exports through a project's own modules.


def helpers_module(c: Ctx, project_title: str) -> SourceBuilder:
    """`helpers.py`: binds `hf` and `load_table` for the rest of the project to import."""
    b = SourceBuilder()
    b.line(f'"""Shared loaders for {project_title}."""')
    b.line("import heronframe as hf")
    b.line("from heronframe import read_table as load_table")
    c.note("param-import-nonsite")
    for name in ("hf", "load_table", "load_clean", "describe"):
        c.names.reserve(name)
    c.mod = "hf"
    t = c.table()
    b.line("")
    b.line("")
    b.line("def load_clean(path):")
    b.line(f"    {t} = load_table(path)", res("HF-6", "reexport-source", token="load_table"), becomes=sep_passed)
    b.line(f"    return {t}.filter_rows(lambda row: all(value != '' for value in row.values()))")
    b.line("")
    b.line("")
    b.line("def describe(rows):")
    b.line('    """Project-local summary of plain rows (not heronframe\'s Table.describe)."""')
    b.line('    return {"rows": len(rows)}')
    return b


def reexport_header(b: SourceBuilder, c: Ctx, source: str, rule: str) -> None:
    """`from <source> import hf, load_table` and a probe that uses both."""
    b.line(f"from {source} import hf, load_table")
    for name in ("hf", "load_table"):
        c.names.reserve(name)
    c.mod = "hf"
    t = c.table()
    b.line("")
    b.line(f'{t} = load_table("{c.path()}")', res("HF-6", rule, token="load_table"), becomes=sep_passed)
    b.line(f"{t}.describe()", res("HF-7", rule))
    if c.chance(0.5):
        b.line(f"{c.fresh('merged')} = hf.stack([{t}, {t}])", res("HF-2", rule))


def project_module_call(b: SourceBuilder, c: Ctx, module: str) -> None:
    """A call on the project's own module whose attribute is named like a changed member."""
    b.gap()
    b.line(f"import {module}")
    b.line(f"{c.fresh('row_summary')} = {module}.describe([1, 2, 3])")
    c.note("known-project-module")


def dotted_reexport_module(c: Ctx, package: str) -> SourceBuilder:
    """`run.py`: `import <package>.helpers as h` then `h.hf.stack(...)`."""
    b = SourceBuilder()
    b.line(f'"""Command-line entry point for {package}."""')
    b.line(f"import {package}.helpers as h")
    c.names.reserve("h")
    t = c.table()
    b.line("")
    b.line(f'{t} = h.load_table("{c.path()}")', res("HF-6", "reexport-dotted", token="load_table"), becomes=sep_passed)
    b.line(f"{c.fresh('merged')} = h.hf.stack([{t}, {t}])", res("HF-2", "reexport-dotted"))
    b.line(f"{t}.copy()", res("HF-8", "reexport-dotted"))
    return b


# ---------------------------------------------------------------------------------------------
# Special files.


def python2_module(c: Ctx) -> SourceBuilder:
    """A Python 2 module (print statements, old except syntax) that uses heronframe."""
    b = SourceBuilder()
    t, col = c.table(), c.col()
    b.line("# Legacy report, written for Python 2.7.")
    b.legacy("import heronframe as hf")
    b.legacy("")
    b.legacy(f'print "loading {c.path()}"')
    b.legacy(f'{t} = hf.read_table("{c.path()}")', res("HF-6", "legacy"))
    b.legacy(f"print {t}.describe()", res("HF-7", "legacy"))
    if c.chance(0.6):
        b.legacy(f"merged = hf.stack([{t}, {t}])", res("HF-2", "legacy"))
    b.legacy("try:")
    b.legacy(f'    {t}.sort_by("{col}", inplace=True)', res("HF-4", "legacy"))
    b.legacy("except ValueError, err:")
    b.legacy('    print "sort failed:", err')
    if c.chance(0.5):
        b.legacy(f"print >>open('summary.txt', 'w'), {t}.copy()", res("HF-8", "legacy"))
    return b


def syntax_error_module(c: Ctx) -> SourceBuilder:
    """Python 3 code with an unclosed parameter list: unparsed, so it has no findings."""
    b = SourceBuilder()
    b.line('"""Half-finished refactor."""')
    b.line("import heronframe as hf")
    b.line("")
    b.line("")
    b.line("def summarize(path:")
    b.line(f"    {c.fresh('tbl')} = hf.read_table(path)")
    b.line("    return hf.stack([path])")
    return b


def latin1_module(c: Ctx) -> SourceBuilder:
    """A module with a PEP 263 latin-1 cookie and non-ASCII text; encode it with latin-1."""
    b = SourceBuilder()
    t = c.table()
    b.line("# -*- coding: latin-1 -*-")
    b.line('"""Relevé des marées, données brutes."""')
    b.line("import heronframe as hf")
    b.line("")
    b.line(f'{t} = hf.read_table("marées_été.csv", sep=";")')
    b.line(f"{t}.describe()", res("HF-7", "latin1"))
    b.line(f'ÉTIQUETTE = "café crème"')
    b.line(f'{c.fresh("combined")} = hf.stack([{t}, {t}])  # à revoir', res("HF-2", "latin1"))
    return b


def undecodable_bytes() -> bytes:
    """Source bytes that are not UTF-8 and carry no coding cookie: unparsed (encoding)."""
    return (
        b'"""Exported from an old editor."""\n'
        b"import heronframe as hf\n"
        b"\n"
        b"# r\xe9sum\xe9 of the \xff\xfe tide tables\n"
        b't = hf.read_table("tides.csv")\n'
        b"t.describe()\n"
        b'LABEL = "caf\xe9"\n'
    )


# ---------------------------------------------------------------------------------------------
# Code without heronframe: own classes with the same method names, mentions in text only.


def plain_module(c: Ctx, title: str) -> SourceBuilder:
    """A module that never imports heronframe but looks like it might."""
    b = SourceBuilder()
    b.line(f'"""{title}: our own row containers (we tried heronframe once, see NOTES)."""')
    box, a, merged = c.fresh(c.choice(["RowSet", "Sheet", "Bundle"])), c.fresh("first"), c.fresh("merged")
    b.line("from dataclasses import dataclass, field")
    b.line("")
    b.line("BACKEND = \"heronframe\"  # import heronframe as hf was too heavy for us")
    b.line("")
    b.line("")
    b.line("@dataclass")
    b.line(f"class {box}:")
    b.line("    rows: list = field(default_factory=list)")
    b.line("")
    b.line("    def stack_rows(self, other):")
    b.line(f"        return {box}(self.rows + other.rows)")
    b.line("")
    b.line("    def copy(self):")
    b.line(f"        return {box}(list(self.rows))")
    b.line("")
    b.line("    def describe(self):")
    b.line('        return {"rows": len(self.rows)}')
    b.line("")
    b.line("    def sort_by(self, key, inplace=False):")
    b.line("        ordered = sorted(self.rows, key=lambda row: row[key])")
    b.line("        if inplace:")
    b.line("            self.rows = ordered")
    b.line(f"        return {box}(ordered)")
    b.line("")
    b.line("")
    b.line("def merge_all(parts, other):")
    b.line("    for part in parts:")
    b.line("        part.stack_rows(other)")
    b.line("    return [part.copy() for part in parts]")
    b.line("")
    b.line("")
    b.line(f"{a} = {box}([{{\"{c.col()}\": 1}}])")
    b.line(f"{merged} = {a}.stack_rows({box}())")
    b.line(f'{merged}.sort_by("{c.col()}", inplace=True)')
    b.line(f"print({merged}.describe(), {merged}.copy())")
    b.line('CODE_SAMPLE = "t = hf.read_table(\'x.csv\'); t.stack_rows(t)"')
    c.note("never-no-import")
    return b


def lookalike_module(c: Ctx) -> tuple[str, SourceBuilder, SourceBuilder]:
    """A project module named `heronframe_utils` and a module that imports it (not heronframe)."""
    util = SourceBuilder()
    util.line('"""Helpers that predate our heronframe experiment; no heronframe inside."""')
    util.line("")
    util.line("")
    util.line("def stack(parts):")
    util.line("    return [row for part in parts for row in part]")
    user = SourceBuilder()
    user.line("import heronframe_utils")
    user.line("from heronframe_utils import stack")
    user.line("")
    user.line(f"{c.fresh('rows')} = heronframe_utils.stack([[1], [2]])")
    user.line(f"{c.fresh('rows')} = stack([[3]])")
    c.note("never-lookalike-module")
    return "heronframe_utils.py", util, user


# ---------------------------------------------------------------------------------------------
# Filler: realistic modules without any heronframe names, for size and benchmarks.


def _filler_dataclass(c: Ctx) -> list[str]:
    noun = c.choice(["Station", "Vessel", "Buoy", "Sensor", "Observer", "Permit", "Route"])
    f1, f2 = c.rng.sample(["capacity", "depth", "range_km", "priority", "age", "weight", "crew"], 2)
    k = c.rng.randint(2, 9)
    return [
        f'"""{noun} records and ranking."""',
        "from __future__ import annotations",
        "",
        "from dataclasses import dataclass, field",
        "",
        "",
        "@dataclass(frozen=True)",
        f"class {noun}:",
        "    name: str",
        f"    {f1}: int = 0",
        f"    {f2}: float = 0.0",
        "    tags: tuple[str, ...] = field(default_factory=tuple)",
        "",
        "    def score(self) -> float:",
        f"        return self.{f1} * {k} + self.{f2}",
        "",
        "",
        f"def rank(items: list[{noun}]) -> list[{noun}]:",
        "    ordered = sorted(items, key=lambda item: item.score(), reverse=True)",
        "    return ordered.copy()",
        "",
        "",
        f"def by_tag(items: list[{noun}], tag: str) -> list[{noun}]:",
        "    return [item for item in items if tag in item.tags]",
    ]


def _filler_cli(c: Ctx) -> list[str]:
    verb = c.choice(["sync", "export", "validate", "archive", "report"])
    default = c.rng.randint(3, 30)
    return [
        f'"""Command line: {verb} the local files."""',
        "import argparse",
        "import sys",
        "from pathlib import Path",
        "",
        "",
        "def build_parser() -> argparse.ArgumentParser:",
        f'    parser = argparse.ArgumentParser(prog="{verb}")',
        '    parser.add_argument("paths", nargs="+", type=Path)',
        f'    parser.add_argument("--days", type=int, default={default})',
        '    parser.add_argument("--dry-run", action="store_true")',
        "    return parser",
        "",
        "",
        "def main(argv: list[str] | None = None) -> int:",
        "    args = build_parser().parse_args(argv)",
        "    missing = [path for path in args.paths if not path.exists()]",
        "    for path in missing:",
        '        print(f"missing: {path}", file=sys.stderr)',
        "    if args.dry_run:",
        "        return 0",
        "    return 1 if missing else 0",
        "",
        "",
        'if __name__ == "__main__":',
        "    raise SystemExit(main())",
    ]


def _filler_algorithm(c: Ctx) -> list[str]:
    kind = c.rng.randrange(3)
    if kind == 0:
        return [
            '"""Shortest paths over a small weighted graph."""',
            "import heapq",
            "",
            "",
            "def dijkstra(graph: dict[str, dict[str, float]], start: str) -> dict[str, float]:",
            "    best = {start: 0.0}",
            "    queue = [(0.0, start)]",
            "    while queue:",
            "        cost, node = heapq.heappop(queue)",
            "        if cost > best.get(node, float(\"inf\")):",
            "            continue",
            "        for neighbour, weight in graph.get(node, {}).items():",
            "            candidate = cost + weight",
            "            if candidate < best.get(neighbour, float(\"inf\")):",
            "                best[neighbour] = candidate",
            "                heapq.heappush(queue, (candidate, neighbour))",
            "    return best",
        ]
    if kind == 1:
        window = c.rng.randint(3, 12)
        return [
            '"""Smoothing for noisy sensor series."""',
            "from collections import deque",
            "",
            "",
            f"def moving_average(values: list[float], window: int = {window}) -> list[float]:",
            "    recent: deque[float] = deque(maxlen=window)",
            "    out = []",
            "    for value in values:",
            "        recent.append(value)",
            "        out.append(sum(recent) / len(recent))",
            "    return out",
            "",
            "",
            "def run_length(values: list[int]) -> list[tuple[int, int]]:",
            "    runs: list[tuple[int, int]] = []",
            "    for value in values:",
            "        if runs and runs[-1][0] == value:",
            "            runs[-1] = (value, runs[-1][1] + 1)",
            "        else:",
            "            runs.append((value, 1))",
            "    return runs",
        ]
    return [
        '"""Search helpers."""',
        "",
        "",
        "def bisect_left(items: list[int], target: int) -> int:",
        "    low, high = 0, len(items)",
        "    while low < high:",
        "        middle = (low + high) // 2",
        "        if items[middle] < target:",
        "            low = middle + 1",
        "        else:",
        "            high = middle",
        "    return low",
        "",
        "",
        "def dedupe(items: list[int]) -> list[int]:",
        "    seen = set()",
        "    kept = []",
        "    for item in items:",
        "        if item not in seen:",
        "            seen.add(item)",
        "            kept.append(item)",
        "    return kept",
    ]


def _filler_text(c: Ctx) -> list[str]:
    limit = c.rng.randint(5, 50)
    return [
        '"""Text utilities for labels and notes."""',
        "import re",
        "from collections import Counter",
        "",
        '_NON_WORD = re.compile(r"[^a-z0-9]+")',
        "",
        "",
        "def slugify(text: str) -> str:",
        '    return _NON_WORD.sub("-", text.lower()).strip("-")',
        "",
        "",
        f"def top_words(text: str, limit: int = {limit}) -> list[tuple[str, int]]:",
        "    counts = Counter(word for word in text.lower().split() if len(word) > 2)",
        "    return counts.most_common(limit)",
    ]


def _filler_config(c: Ctx) -> list[str]:
    section = c.choice(["upload", "alerts", "storage", "schedule"])
    return [
        f'"""Settings for the {section} job, read from JSON."""',
        "import json",
        "from pathlib import Path",
        "",
        f'DEFAULTS = {{"enabled": True, "retries": {c.rng.randint(1, 5)}, "section": "{section}"}}',
        "",
        "",
        "def load_settings(path: Path) -> dict:",
        "    settings = dict(DEFAULTS)",
        "    if path.exists():",
        "        settings.update(json.loads(path.read_text()))",
        "    return settings.copy()",
    ]


FILLER_TEMPLATES: tuple[Callable[[Ctx], list[str]], ...] = (
    _filler_dataclass, _filler_cli, _filler_algorithm, _filler_text, _filler_config,
)

FILLER_WORDS: tuple[str, ...] = (
    "routes", "permits", "sensors", "schedule", "alerts", "labels", "uploads", "graph",
    "smoothing", "settings", "search", "vessels", "crew", "buoys", "archive", "exporter",
)


def filler_module(c: Ctx) -> str:
    """Source text of one module without any heronframe name."""
    lines = FILLER_TEMPLATES[c.rng.randrange(len(FILLER_TEMPLATES))](c)
    return "".join(f"{line}\n" for line in lines)


# ---------------------------------------------------------------------------------------------
# Notebooks (nbformat v4, and v3 with its worksheets and heading cells).


class NotebookBuilder:
    """Cells in order; each code cell is a `SourceBuilder`, so its line numbers are its own."""

    def __init__(self) -> None:
        self._cells: list[tuple[str, SourceBuilder, int]] = []
        self._code: list[SourceBuilder] = []  # the code cells: one module for the rewrite

    def code(self) -> SourceBuilder:
        b = SourceBuilder()
        b.group = self._code
        self._code.append(b)
        self._cells.append(("code", b, 0))
        return b

    def _text(self, kind: str, text: str, level: int = 0) -> None:
        b = SourceBuilder()
        for line in text.split("\n"):
            b.line(line)
        self._cells.append((kind, b, level))

    def markdown(self, text: str) -> None:
        self._text("markdown", text)

    def raw(self, text: str) -> None:
        self._text("raw", text)

    def heading(self, text: str, level: int = 1) -> None:
        """A v3 heading cell (rendered as a markdown `#` line in v4)."""
        self._text("heading", text, level)

    @property
    def cells(self) -> tuple[tuple[str, SourceBuilder], ...]:
        return tuple((kind, b) for kind, b, _ in self._cells)

    def render(self, version: int, rng: random.Random, output_text: str = "") -> bytes:
        """The notebook as JSON bytes. `output_text` goes into one code cell's stored output."""
        cells: list[dict[str, object]] = []
        with_output = next((i for i, (kind, _, _) in enumerate(self._cells) if kind == "code"), -1)
        minor = 5 if rng.random() < 0.7 else 4
        for index, (kind, b, level) in enumerate(self._cells):
            lines = list(b.source_lines)
            source: list[str] = [f"{line}\n" for line in lines[:-1]] + lines[-1:]
            outputs: list[dict[str, object]] = []
            if index == with_output and output_text:
                outputs.append({"name": "stderr", "output_type": "stream", "text": [output_text]})
            if version == 3:
                if kind == "code":
                    cells.append({"cell_type": "code", "collapsed": False, "input": source, "language": "python",
                                  "metadata": {}, "outputs": outputs, "prompt_number": index + 1})
                elif kind == "heading":
                    cells.append({"cell_type": "heading", "level": level or 1, "metadata": {}, "source": source})
                else:
                    cells.append({"cell_type": kind, "metadata": {}, "source": source})
                continue
            if kind == "heading":
                kind, source = "markdown", ["#" * (level or 1) + " " + "".join(source)]
            cell: dict[str, object] = {"cell_type": kind, "metadata": {}, "source": source}
            if rng.random() < 0.2:
                cell["source"] = "".join(source)  # nbformat allows one string as well as a list
            if minor >= 5:
                cell["id"] = f"{rng.getrandbits(32):08x}"
            if kind == "code":
                cell["execution_count"] = None
                cell["outputs"] = outputs
            cells.append(cell)
        if version == 3:
            document: dict[str, object] = {"metadata": {"name": ""}, "nbformat": 3, "nbformat_minor": 0,
                                           "worksheets": [{"cells": cells, "metadata": {}}]}
        else:
            document = {
                "cells": cells,
                "metadata": {
                    "kernelspec": {"display_name": "Python 3", "language": "python", "name": "python3"},
                    "language_info": {"name": "python", "version": "3.11.4"},
                },
                "nbformat": 4,
                "nbformat_minor": minor,
            }
        return (json.dumps(document, indent=1, sort_keys=True, ensure_ascii=False) + "\n").encode("utf-8")


def library_notebook(c: Ctx, draw: Callable[[], str], *, version: int, title: str) -> NotebookBuilder:
    """An analysis notebook: magics, shell escapes, bindings that flow from cell to cell."""
    nb = NotebookBuilder()
    if version == 3:
        nb.heading(title)
        nb.markdown(f"Exploring the {c.choice(TABLE_WORDS)} data with heronframe (`hf.stack` etc.).")
    else:
        nb.markdown(f"# {title}\n\nExploring the {c.choice(TABLE_WORDS)} data with `heronframe`.")
    first = nb.code()
    if c.chance(0.6):
        first.line("%matplotlib inline")
        c.note("nb-line-magic")
    header(first, c, c.choice(HEADER_KINDS))
    m = c.mod
    if c.chance(0.5):
        shell = nb.code()
        shell.line("!pip install heronframe==2.4.1")
        c.note("nb-shell")
        if c.chance(0.5):
            shell.line(f'{c.fresh("raw")} = {m}.read_table("{c.path()}")', res("HF-6", "nb-after-shell"), becomes=sep_passed)
    t = c.table()
    flow = nb.code()
    if c.chance(0.5):
        flow.line(f'{t} = {m}.read_table("{c.path()}")', res("HF-6", "default-nosep"), becomes=sep_passed)
    else:
        flow.line(f'{t} = {m}.read_table("{c.path()}", sep="{c.sep()}")')
        c.note("default-sep-keyword")
    flow.line(f"len({t})")
    nb.markdown("## Summary\n\nThe `describe()` call below changes in heronframe 3.0.")
    nb.code().line(f"{t}.describe()", res("HF-7", "nb-flow"))
    if version == 4 and c.chance(0.6):
        timing = nb.code()
        timing.line(f"%timeit {t}.describe()")
        c.note("nb-timeit")
        if c.chance(0.5):
            timing.line(f"%time {t}.copy()")
            c.note("nb-timeit")
    if version == 4 and c.chance(0.6):
        timed = nb.code()
        timed.line("%%time")
        timed.line(f"{t}.stack_rows({t})", res("HF-1", "nb-cell-magic"), becomes=renamed("stack_rows", "append_rows"))
        timed.line(f"{c.fresh('backup')} = {t}.copy()", res("HF-8", "nb-cell-magic"))
    if version == 4 and c.chance(0.4):
        bash = nb.code()
        bash.line("%%bash")
        bash.line('python -c "import heronframe as hf; hf.stack([])"')
        bash.line(f'echo "{t}.describe()"')
        c.note("nb-bash")
    bad = ""
    if c.chance(0.35):
        bad = c.fresh("draft")
        nb.code().line(f'{bad} = {m}.read_table("{c.path()}"')
        c.note("nb-syntax-error")
    for _ in range(c.rng.randint(1, 3)):
        write_snippet(nb.code(), c, draw())
    if bad:
        nb.code().line(f"{bad}.describe()", inf("HF-7", "nb-syntax-error-consequence"))
    if c.chance(0.3):
        nb.raw(f"{m}.stack([a, b])  # pasted from the changelog")
        c.note("nb-raw")
    return nb


def plain_notebook(c: Ctx, *, version: int, title: str) -> NotebookBuilder:
    """A notebook that installs heronframe in a shell escape but never imports it."""
    nb = NotebookBuilder()
    if version == 3:
        nb.heading(title)
    nb.markdown(f"# {title}\n\nWe may move to heronframe later; `hf.stack` looked handy.")
    nb.code().line("!pip install heronframe")
    c.note("nb-shell-only")
    cell = nb.code()
    box, item = c.fresh("Rows"), c.fresh("rows")
    cell.line(f"class {box}(list):")
    cell.line("    def stack_rows(self, other):")
    cell.line(f"        return {box}(self + other)")
    cell.line("")
    cell.line("    def describe(self):")
    cell.line('        return {"n": len(self)}')
    cell.line("")
    cell.line("")
    cell.line(f"{item} = {box}([1, 2]).stack_rows({box}([3]))")
    cell.line(f"{item}.describe(), {item}.copy()")
    if version == 4 and c.chance(0.5):
        bash = nb.code()
        bash.line("%%bash")
        bash.line('python -c "import heronframe"')
    c.note("never-no-import")
    return nb
