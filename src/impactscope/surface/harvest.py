"""Harvest the deprecations a library already announces in its own source.

Three signals, all read statically: a `warnings.warn(..., DeprecationWarning |
PendingDeprecationWarning | FutureWarning)` call in a member's body; a PEP 702 `@deprecated("msg")`
decorator (from `warnings` or `typing_extensions`); and the library's own deprecation helpers. A
helper is a function that issues such a warning with a message it is given (a decorator factory,
a `warn_deprecated(what, instead)` function); a decorator or function that calls a helper counts
too, one level deep. Members that call or are wrapped by a helper are deprecated, as are
class-level aliases made by one (`failUnless = _deprecate(assertTrue)`).

What a warning announces is read from the condition it fires under, and for a helper from how
each call site fills the helper's parameters:

- no condition: the member goes (`removed`);
- the count of positional arguments (`len(args) > n` in a wrapper): positional use goes, drafted
  as the removal of the first positional slot that is not in the list of names the call site
  passes (`parameter-removed` with its position);
- a keyword looked up in `**kwargs` (`"x" in kwargs`, `kwargs.pop(name)`): that keyword goes; when
  the wrapper stores the value under another name the call site gives (`kwargs[new] = ...`), it
  is renamed (`parameter-removed` / `parameter-renamed`);
- a parameter compared with its own default: passed (`x is not None`, `x is not no_default`)
  means the parameter goes; left at its default (`x is no_default`) means the default changes
  (`default-changed`);
- any other condition (a value of a parameter, the state of the object): nothing is drafted; the
  draft lists it in comments at its end, because a removal would misstate it.

A message built at run time is kept as evidence, with its holes shown (`{name}`), never guessed
from; a successor is taken only from the literal text of a message ("use X instead") and only
when X is a public member of the library. A message that says the removal comes in a later
release than the one the draft is for lowers the entry to `low`.

Modules are read one at a time, in two passes (helpers first, then their uses), so memory stays
bounded by the surface and one module's syntax tree.
"""

from __future__ import annotations

import ast
import re
import string
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, replace
from pathlib import Path

from packaging.version import InvalidVersion, Version

from .build import ParsedModule, build_for_drafts, discover_modules, dotted_name, iter_parsed, sources_first
from .compare import Announcement, DraftChange, render_draft as _render
from .discovery import ModuleFile
from .model import Surface
from .scope import Scope

CATEGORIES = frozenset({"DeprecationWarning", "PendingDeprecationWarning", "FutureWarning"})
_HINTS = ("deprecat", "warn")
_GUESS = "what the deprecation becomes is a guess"
_NONE_LIKE = ("None", "False")
# "use X instead", "in favor of X", "replaced by X", "renamed to X": common wording of deprecation messages.
_LEAD = re.compile(r"\b(?:use|in favou?r of|replaced (?:by|with)|renamed to|moved to|is now|import (?:it|them) from)\b",
                   re.IGNORECASE)
_TOKEN = re.compile(r"[A-Za-z_.][\w.]*")
# "in a future version this will return a view", "will be a logical operation": what changes is behaviour.
_BEHAVIOUR = re.compile(r"\bwill (?:now |instead )?(?:return|change|behave|be a logical|default to|be treated|be interpreted|be defined|"
                        r"include|exclude|match|keep|no longer|be the same|be consistent|always|retain|preserve)|"
                        r"\bis expected to\b|\bmay therefore change\b", re.IGNORECASE)
_GOES = re.compile(r"\b(?:will be removed|removed in|be dropped|no longer be (?:available|supported))\b", re.IGNORECASE)
_LATER = re.compile(r"\b(?:removed|dropped|deleted|gone|disallowed|raise|error|expire[sd]?)\b[^.]*?\b(?:in|by|from|with|after)\s+"
                    r"(?:\w+\s+){0,2}v?(\d+\.\d+(?:\.\d+)?)", re.IGNORECASE)


@dataclass(frozen=True)
class HarvestedChange:
    """A deprecation found in the library's source, as a draft change-list entry.

    `announces` is what the warning says will happen: "removed", "parameter-removed",
    "parameter-renamed", "default-changed" or "keyword-only" (positional use goes).
    """

    member: str  # the most natural public path
    kind: str
    note: str
    certainty: str
    why: str
    module: str
    line: int
    mechanism: str  # "warnings.warn", "@deprecated (PEP 702)", or "helper <canonical name>"
    replacement: str | None = None
    parameter: str | None = None
    position: int | None = None
    new_parameter: str | None = None
    announces: str = "removed"
    evidence: tuple[str, ...] = ()

    dynamic: bool = False

    def to_draft(self) -> DraftChange:
        return DraftChange(self.member, self.kind, self.note, self.certainty, self.why, replacement=self.replacement,
                           parameter=self.parameter, new_parameter=self.new_parameter, position=self.position,
                           evidence=self.evidence, dynamic=self.dynamic)

    def announcement(self, surface: Surface) -> Announcement:
        """For `compare`: what the old version said, keyed by the member's canonical name."""
        return Announcement(surface.canonical(self.member), self.announces, self.note, self.replacement,
                            self.parameter, self.new_parameter)


@dataclass(frozen=True)
class Unread:
    """A deprecation warning whose condition says nothing drafted entries can express."""

    member: str
    condition: str
    line: int


@dataclass(frozen=True)
class Harvest:
    """What harvest found: the entries, and the warnings it saw but did not draft."""

    changes: tuple[HarvestedChange, ...]
    unread: tuple[Unread, ...]
    surface: Surface
    files: tuple[ModuleFile, ...] = ()  # the library's modules it read them from


def render_draft(changes: Iterable[HarvestedChange], library: str, release: str | None = None,
                 *, unread: Iterable[Unread] = ()) -> str:
    """The harvested deprecations as a change-list TOML draft; unread warnings as closing comments."""
    seen = list(unread)
    text = _render((c.to_draft() for c in changes), library, release, origin="harvesting deprecation warnings",
                   left_out={"deprecation warnings under a condition no entry can express (listed at the end)": len(seen)})
    if not seen:
        return text
    lines = ["", "# Deprecation warnings under a condition no entry can express; drafting them as removals would",
             "# overstate them. Check each by hand:"]
    lines += [f"#   {u.member} (line {u.line}): warns when {' '.join(u.condition.split())[:160]}"
              for u in sorted(seen, key=lambda u: (u.member, u.line))]
    return text + "\n".join(lines) + "\n"


# -- messages -------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Template:
    """A warning message: literal text and holes (expressions filled in at run time)."""

    parts: tuple[str | ast.expr, ...]
    pending: bool = False  # issued as a PendingDeprecationWarning: the deprecation itself is still to come

    @property
    def literal(self) -> bool:
        return all(isinstance(p, str) for p in self.parts)

    @property
    def text(self) -> str:
        """Only the literal parts (what a successor may be read from)."""
        return "".join(p if isinstance(p, str) else " " for p in self.parts)

    def render(self, given: dict[str, ast.expr] | None = None) -> str:
        out = []
        for part in self.parts:
            if isinstance(part, str):
                out.append(part)
                continue
            value = _fill(part, given or {})
            out.append(value if value is not None else "{" + ast.unparse(part) + "}")
        return "".join(out)


def _fill(hole: ast.expr, given: dict[str, ast.expr]) -> str | None:
    """A hole's text when it names a helper parameter the call site passes a literal (or a name) for."""
    if isinstance(hole, ast.Name) and hole.id in given:
        arg = given[hole.id]
        if isinstance(arg, ast.Constant) and isinstance(arg.value, str):
            return arg.value
    if isinstance(hole, ast.Attribute) and hole.attr == "__name__" and isinstance(hole.value, ast.Name) and hole.value.id in given:
        text = dotted_name(given[hole.value.id])
        if text is not None:
            return text.rpartition(".")[2]
    return None


def _template(node: ast.expr | None) -> _Template | None:
    if node is None:
        return None
    if isinstance(node, ast.Constant) and isinstance(node.value, str):
        return _Template((node.value,))
    if isinstance(node, ast.JoinedStr):
        parts: list[str | ast.expr] = []
        for v in node.values:
            if isinstance(v, ast.Constant):
                parts.append(str(v.value))
            elif isinstance(v, ast.FormattedValue):
                parts.append(v.value)
        return _Template(tuple(parts))
    if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Add):
        left, right = _template(node.left), _template(node.right)
        return _Template(left.parts + right.parts) if left and right else left or right
    if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Mod):
        return _template(node.left)
    if (isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute) and node.func.attr == "format"
            and isinstance(node.func.value, ast.Constant) and isinstance(node.func.value.value, str)):
        parts = []
        auto = 0
        try:
            fields = list(string.Formatter().parse(node.func.value.value))
        except ValueError:
            return _Template((node.func.value.value,))
        for text, field, _, _ in fields:
            parts.append(text)
            if field is None:
                continue
            key = field.split(".")[0].split("[")[0]
            if key == "":
                key, auto = str(auto), auto + 1
            arg = (node.args[int(key)] if key.isdigit() and int(key) < len(node.args)
                   else next((k.value for k in node.keywords if k.arg == key), None))
            parts.append(arg if arg is not None else "{" + field + "}")
        return _Template(tuple(parts))
    return _Template((node,))


# -- what a warning's condition means ---------------------------------------------------------


@dataclass(frozen=True)
class _Meaning:
    """What a warning announces, in terms of the names around it.

    kind: "member" (no condition), "positional" (positional arguments counted), "keyword"
    (`key` is looked up in **kwargs: a string constant or the name of a helper parameter;
    `rename` the helper parameter naming where the value goes), "passed" / "left-out" (the
    parameter `key` compared with its default), or "other".
    """

    kind: str
    key: str | ast.expr | None = None
    rename: str | None = None
    condition: str = ""
    partial: bool = False  # the warning also needs something else (`dtype is None and data is empty`)


def _frame_of(stack: tuple[ast.AST, ...]) -> ast.FunctionDef | ast.AsyncFunctionDef | ast.Lambda | None:
    return next((f for f in reversed(stack) if isinstance(f, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda))), None)


def _kw_sources(frame: ast.AST, var_kw: str | None) -> dict[str, ast.expr]:
    """Locals read out of **kwargs in a function: `v = kwargs.pop(key, ...)` -> {v: key}."""
    out: dict[str, ast.expr] = {}
    if var_kw is None:
        return out
    for node in ast.walk(frame):
        if isinstance(node, ast.Assign) and len(node.targets) == 1 and isinstance(node.targets[0], ast.Name):
            key = _kw_key(node.value, var_kw)
            if key is not None:
                out[node.targets[0].id] = key
    return out


def _kw_key(node: ast.AST, var_kw: str) -> ast.expr | None:
    """`kwargs.pop(key)`, `kwargs.get(key)`, `kwargs[key]` -> key."""
    if (isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute) and node.func.attr in ("pop", "get")
            and isinstance(node.func.value, ast.Name) and node.func.value.id == var_kw and node.args):
        return node.args[0]
    if isinstance(node, ast.Subscript) and isinstance(node.value, ast.Name) and node.value.id == var_kw:
        return node.slice
    return None


def _renames(frame: ast.AST, var_kw: str | None, key: str | ast.expr | None) -> str | None:
    """The name of the variable under which a wrapper stores a value back under another key:
    `kwargs[new] = ...` (not `kwargs[old] = ...`, which puts it back where it was)."""
    if var_kw is None:
        return None
    same = key.id if isinstance(key, ast.Name) else None
    for node in ast.walk(frame):
        if isinstance(node, ast.Assign):
            for t in node.targets:
                if (isinstance(t, ast.Subscript) and isinstance(t.value, ast.Name) and t.value.id == var_kw
                        and isinstance(t.slice, ast.Name) and t.slice.id != same):
                    return t.slice.id
    return None


def _meaning(conditions: tuple[ast.expr, ...], frame: ast.AST | None, defaults: dict[str, str | None],
             helper: bool = False) -> _Meaning:
    """What the conditions around a warning say it is about (see `_Meaning`). `defaults` maps the
    parameters of the function the warning is in to their default's text (None: required); in a
    `helper`, a parameter stands for a caller's argument, whose default it does not know."""
    own = [c for c in conditions if not getattr(c, "guard", False)]
    guards = [c for c in conditions if getattr(c, "guard", False)]
    if not conditions:
        return _Meaning("member")
    args = getattr(frame, "args", None)
    var_pos = args.vararg.arg if args is not None and args.vararg is not None else None
    var_kw = args.kwarg.arg if args is not None and args.kwarg is not None else None
    sources = _kw_sources(frame, var_kw) if frame is not None else {}

    def best(tests: list[ast.expr]) -> tuple[_Meaning | None, bool]:
        found: _Meaning | None = None
        unread = False
        keys: set[str] = set()
        for test in tests:
            for node in _conjuncts(test):
                m = _one(node, var_pos, var_kw, sources, defaults, helper)
                if m is None:
                    unread = True
                    continue
                keys.add(ast.dump(m.key) if isinstance(m.key, ast.AST) else repr(m.key))
                if found is None or _RANK[m.kind] < _RANK[found.kind]:
                    found = m
        return found, unread or len(keys) > 1  # a test on two parameters: an entry names only one

    # The warning's own tests first; an early return above it (`if p is None: return`) only when
    # they say nothing. A guard that keeps a parameter at its default (`if fast: return`) marks
    # the usual path: the member itself is what the warning is about.
    found, unread = best(own)
    shown = " and ".join(ast.unparse(c) for c in own or guards)
    if found is None and guards:
        found, _ = best(guards)
        unread = False
        if found is not None and found.kind == "left-out":
            return _Meaning("member")
        if found is None and not own:
            return _Meaning("member")
    if found is None:
        return _Meaning("other", condition=shown)
    rename = _renames(frame, var_kw, found.key) if found.kind == "keyword" and frame is not None else None
    return _Meaning(found.kind, found.key, rename, shown, partial=unread)


_RANK = {"positional": 0, "keyword": 1, "passed": 2, "left-out": 3}


def _conjuncts(test: ast.expr) -> list[ast.expr]:
    if isinstance(test, ast.BoolOp) and isinstance(test.op, ast.And):
        return [n for v in test.values for n in _conjuncts(v)]
    if (isinstance(test, ast.UnaryOp) and isinstance(test.op, ast.Not) and isinstance(test.operand, ast.BoolOp)
            and isinstance(test.operand.op, ast.Or)):
        return [n for v in test.operand.values for n in _conjuncts(ast.UnaryOp(ast.Not(), v))]  # De Morgan
    return [test]


def _one(node: ast.expr, var_pos: str | None, var_kw: str | None, sources: dict[str, ast.expr],
         defaults: dict[str, str | None], helper: bool) -> _Meaning | None:
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.Not) and not isinstance(node.operand, ast.Name):
        return _polarity(node, defaults, helper)  # the else branch of a test on arguments says nothing sure of them
    for sub in ast.walk(node):
        if (var_pos is not None and isinstance(sub, ast.Call) and isinstance(sub.func, ast.Name) and sub.func.id == "len"
                and sub.args and isinstance(sub.args[0], ast.Name) and sub.args[0].id == var_pos):
            return _Meaning("positional")
    if var_kw is not None:
        for sub in ast.walk(node):
            if (isinstance(sub, ast.Compare) and len(sub.ops) == 1 and isinstance(sub.ops[0], (ast.In, ast.NotIn))
                    and isinstance(sub.comparators[0], ast.Name) and sub.comparators[0].id == var_kw):
                return _Meaning("keyword", _key(sub.left))
            key = _kw_key(sub, var_kw)
            if key is not None:
                return _Meaning("keyword", _key(key))
            if isinstance(sub, ast.Name) and sub.id in sources:
                return _Meaning("keyword", _key(sources[sub.id]))
    return _polarity(node, defaults, helper)


def _key(node: ast.expr) -> str | ast.expr:
    return node.value if isinstance(node, ast.Constant) and isinstance(node.value, str) else node


def _polarity(node: ast.expr, defaults: dict[str, str | None], helper: bool = False) -> _Meaning | None:
    """`p is not D` / `p` (passed) or `p is D` (left at its default D), for a parameter p with default D."""
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.Not):
        inner = _polarity(node.operand, defaults, helper)
        if inner is None:
            return None
        return _Meaning("left-out" if inner.kind == "passed" else "passed", inner.key)
    if isinstance(node, ast.Name) and node.id in defaults and _falsy(defaults[node.id]):
        return _Meaning("passed", node.id)
    if not (isinstance(node, ast.Compare) and len(node.ops) == 1 and isinstance(node.left, ast.Name)
            and node.left.id in defaults):
        return None
    name, op, right = node.left.id, node.ops[0], node.comparators[0]
    default = defaults[name]
    text = ast.unparse(right)
    if default is None:
        if not helper:
            return None
        # A helper's own parameter has no default; it stands for a caller's, which (by common
        # practice) defaults to None or the sentinel it is compared with.
        if text not in _NONE_LIKE[:1] and not _sentinel_text(text):
            return None
    elif not _same_default(text, default):
        return None
    if isinstance(op, (ast.IsNot, ast.NotEq)):
        return _Meaning("passed", name)
    if isinstance(op, (ast.Is, ast.Eq)):
        return _Meaning("left-out", name)
    return None


def _falsy(default: str | None) -> bool:
    return default is not None and (default in _NONE_LIKE or _sentinel_text(default))


def _sentinel_text(text: str) -> bool:
    from .compare import is_sentinel_name
    return is_sentinel_name(text.rpartition(".")[2])


def _same_default(text: str, default: str) -> bool:
    """`no_default` and `lib.no_default` are one sentinel; `None` is None."""
    if text == default:
        return True
    if _sentinel_text(text) and _sentinel_text(default):
        return True
    return text.rpartition(".")[2] == default.rpartition(".")[2] and "." in text + default


# -- one module ------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Site:
    """A call inside a function: the conditions it sits under, the functions around it."""

    call: ast.Call
    conditions: tuple[ast.expr, ...]
    stack: tuple[ast.AST, ...]  # enclosing function nodes, outermost first (the unit itself first)

    @property
    def nested(self) -> bool:
        return len(self.stack) > 1


@dataclass(frozen=True)
class _Unit:
    """A function or method of the library, with the calls in its body."""

    path: str  # canonical
    module: str
    cls: str | None
    node: ast.FunctionDef | ast.AsyncFunctionDef
    sites: tuple[_Site, ...]

    @property
    def arg_names(self) -> list[str]:
        a = self.node.args
        return [x.arg for x in (*a.posonlyargs, *a.args)] + [x.arg for x in a.kwonlyargs]

    @property
    def self_name(self) -> str | None:
        a = self.node.args
        positional = [*a.posonlyargs, *a.args]
        return positional[0].arg if self.cls is not None and positional else None

    def defaults(self) -> dict[str, str | None]:
        """Parameter -> its default's source (None when required), self/cls left out."""
        a = self.node.args
        positional = [*a.posonlyargs, *a.args]
        out: dict[str, str | None] = {x.arg: None for x in positional}
        for x, d in zip(positional[len(positional) - len(a.defaults):], a.defaults):
            out[x.arg] = ast.unparse(d)
        for x, d in zip(a.kwonlyargs, a.kw_defaults):
            out[x.arg] = None if d is None else ast.unparse(d)
        if self.self_name is not None:
            out.pop(self.self_name, None)
        return out


def _sites(body: Iterable[ast.AST], conditions: tuple[ast.expr, ...], stack: tuple[ast.AST, ...]) -> Iterator[_Site]:
    for node in body:
        yield from _visit(node, conditions, stack)
        if isinstance(node, ast.If) and not node.orelse and _leaves(node.body):
            # `if p is None: return ...` guards the rest: it runs only when the test is false.
            guard = ast.UnaryOp(ast.Not(), node.test)
            guard.guard = True  # type: ignore[attr-defined]  # read after the warning's own tests (_meaning)
            conditions = (*conditions, guard)


def _leaves(body: list[ast.stmt]) -> bool:
    """Whether a block always leaves its function (ends in return or raise, also in every branch of a try)."""
    if not body:
        return False
    last = body[-1]
    if isinstance(last, (ast.Return, ast.Raise)):
        return True
    if isinstance(last, ast.If):
        return _leaves(last.body) and _leaves(last.orelse)
    if isinstance(last, ast.Try):
        return _leaves(last.body) and all(_leaves(h.body) for h in last.handlers)
    return False


def _visit(node: ast.AST, conditions: tuple[ast.expr, ...], stack: tuple[ast.AST, ...]) -> Iterator[_Site]:
    if isinstance(node, ast.Call):
        yield _Site(node, conditions, stack)
    if isinstance(node, ast.If):
        yield from _visit(node.test, conditions, stack)
        yield from _sites(node.body, (*conditions, node.test), stack)
        yield from _sites(node.orelse, (*conditions, ast.UnaryOp(ast.Not(), node.test)), stack)
        return
    if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)):
        stack = (*stack, node)
    yield from _sites(ast.iter_child_nodes(node), conditions, stack)


@dataclass(frozen=True)
class _Assignment:
    """`a = b = helper(x)` at module or class level."""

    names: tuple[str, ...]
    call: ast.Call
    scope: str
    in_class: bool
    line: int


class _Module:
    """What harvest needs of one module: its functions, helper-made assignments and imports.

    Only functions whose source spells one of `needles` (`warn`, a helper's name) have their
    calls collected: the others can hold no warning and call no helper.
    """

    def __init__(self, parsed: ParsedModule, needles: tuple[bytes, ...]) -> None:
        self.name = parsed.file.name
        self.units: list[_Unit] = []
        self.assignments: list[_Assignment] = []
        self.top_calls: list[ast.Call] = []
        self.imports: dict[str, str] = {}
        self.literals: dict[str, tuple[str, ...]] = {}
        self._lines = parsed.text.lines
        tree = parsed.tree
        self._imports(tree.body)
        # `from warnings import warn as _w`: the local name is what a call spells.
        aliases = tuple(local.encode() for local, full in self.imports.items() if full in ("warnings", "warnings.warn"))
        self._needles = needles + aliases
        self._block(tree.body, self.name, False)

    def _imports(self, body: Iterable[ast.AST]) -> None:
        """Imports at module level (also under if/try), or inside one function (`import warnings`)."""
        for node in body:
            if isinstance(node, (ast.Import, ast.ImportFrom)):
                self._import(node)
            elif isinstance(node, (ast.If, ast.Try, ast.With)) or type(node).__name__ == "TryStar":
                self._imports(ast.iter_child_nodes(node))

    def _spells(self, node: ast.FunctionDef | ast.AsyncFunctionDef) -> bool:
        first = min([node.lineno, *(d.lineno for d in node.decorator_list)]) - 1
        last = node.end_lineno or node.lineno
        return any(needle in line for line in self._lines[first:last] for needle in self._needles)

    def _import(self, node: ast.AST) -> None:
        if isinstance(node, ast.Import):
            for a in node.names:
                name = a.asname or a.name.partition(".")[0]
                self.imports.setdefault(name, a.name if a.asname else name)
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            for a in node.names:
                self.imports.setdefault(a.asname or a.name, f"{node.module}.{a.name}")

    def _block(self, body: list[ast.stmt], scope: str, in_class: bool) -> None:
        for st in body:
            if isinstance(st, (ast.FunctionDef, ast.AsyncFunctionDef)):
                if self._spells(st):
                    for node in ast.walk(st):
                        if isinstance(node, (ast.Import, ast.ImportFrom)):
                            self._import(node)
                    sites = tuple(_sites(st.body, (), (st,)))
                else:
                    sites = ()
                self.units.append(_Unit(f"{scope}.{st.name}", self.name, scope if in_class else None, st, sites))
            elif isinstance(st, ast.ClassDef):
                self._block(st.body, f"{scope}.{st.name}", True)
            elif isinstance(st, ast.Assign) and isinstance(st.value, ast.Call):
                names = tuple(t.id for t in st.targets if isinstance(t, ast.Name))
                if names:
                    self.assignments.append(_Assignment(names, st.value, scope, in_class, st.lineno))
            elif isinstance(st, ast.Assign) and not in_class and isinstance(st.value, (ast.List, ast.Tuple, ast.Set, ast.Dict)):
                keys = st.value.keys if isinstance(st.value, ast.Dict) else st.value.elts
                found = tuple(k.value for k in keys if isinstance(k, ast.Constant) and isinstance(k.value, str))
                for t in st.targets:
                    if isinstance(t, ast.Name) and found:
                        self.literals[t.id] = found
            elif isinstance(st, ast.Expr) and isinstance(st.value, ast.Call) and not in_class:
                self.top_calls.append(st.value)
            elif isinstance(st, ast.If):
                self._block(st.body, scope, in_class)
                self._block(st.orelse, scope, in_class)
            elif isinstance(st, (ast.Try, ast.With, ast.AsyncWith, ast.For, ast.While)) or type(st).__name__ == "TryStar":
                for field in ("body", "orelse", "finalbody"):
                    self._block(getattr(st, field, []), scope, in_class)
                for handler in getattr(st, "handlers", []):
                    self._block(handler.body, scope, in_class)


# -- finding deprecations ---------------------------------------------------------------------


@dataclass(frozen=True)
class _Warning:
    site: _Site
    template: _Template | None


@dataclass(frozen=True)
class _Helper:
    """A deprecation helper, kept between the passes without its module's syntax tree."""

    template: _Template | None
    meaning: _Meaning
    params: tuple[str, ...]  # positional parameter names, self excluded when a method
    method: bool


@dataclass(frozen=True)
class _Relay:
    """A call from a function that may turn out to relay a helper (decided once all helpers are known)."""

    path: str
    callee: str
    call: ast.Call
    conditions: tuple[ast.expr, ...]
    params: tuple[str, ...]
    method: bool
    defaults: dict[str, str | None]


class _Harvester:
    def __init__(self, surface: Surface, scope: Scope, release: str | None) -> None:
        self.surface = surface
        self.scope = scope
        try:
            self.release = Version(release) if release else None
        except InvalidVersion:
            self.release = None
        self.helpers: dict[str, _Helper] = {}
        self.relays: list[_Relay] = []
        self.out: dict[tuple[str, str, str | None], HarvestedChange] = {}
        self.unread: dict[tuple[str, str], Unread] = {}

    # recognising warnings and helpers ---------------------------------------------------

    def _is_warn(self, module: _Module, func: ast.expr) -> bool:
        text = dotted_name(func)
        if text is None:
            return False
        first, _, rest = text.partition(".")
        base = module.imports.get(first)
        full = ".".join(filter(None, (base, rest))) if base else text
        return full == "warnings.warn"

    def _is_category(self, module: _Module, unit: _Unit | None, node: ast.expr | None) -> bool:
        text = dotted_name(node)
        if text is None:
            return False
        if text in CATEGORIES or (text.startswith("builtins.") and text[9:] in CATEGORIES):
            return True
        if unit is not None and isinstance(node, ast.Name):
            # `def _warn(msg, category=DeprecationWarning): warnings.warn(msg, category)`
            a = unit.node.args
            positional = [*a.posonlyargs, *a.args]
            pairs = list(zip(positional[len(positional) - len(a.defaults):], a.defaults)) + list(zip(a.kwonlyargs, a.kw_defaults))
            for arg, default in pairs:
                if arg.arg == node.id and default is not None:
                    return self._is_category(module, None, default)
        cls = self.surface.canonical(f"{module.name}.{text}")
        member = self.surface.members.get(cls)
        if member is None or member.kind != "class":
            return False
        return any(b.rpartition(".")[2] in CATEGORIES for k in self.surface.mro(cls)
                   for b in self.surface.members[k].bases if b not in self.surface.members)

    def _warnings(self, module: _Module, unit: _Unit) -> list[_Warning]:
        found = []
        for site in unit.sites:
            if self._is_warn(module, site.call.func):
                template = self._deprecation(module, unit, site.call)
                if template is not None:
                    found.append(_Warning(site, template))
        return found

    def _deprecation(self, module: _Module, unit: _Unit | None, call: ast.Call) -> _Template | None:
        """The message template of a deprecation `warn(...)` call; None if it is another category.

        A message may be the warning itself: `warn(FutureWarning("msg"))` takes its category.
        """
        message = call.args[0] if call.args else next((k.value for k in call.keywords if k.arg == "message"), None)
        category = call.args[1] if len(call.args) > 1 else next((k.value for k in call.keywords if k.arg == "category"), None)
        if category is None and isinstance(message, ast.Call) and self._is_category(module, unit, message.func):
            category, message = message.func, message.args[0] if message.args else None
        elif not self._is_category(module, unit, category):
            return None
        if isinstance(message, ast.Name) and unit is not None:
            # `msg = "..."; warn(msg, ...)`: one plain assignment in the function is the message's text.
            values = [n.value for n in ast.walk(unit.node) if isinstance(n, (ast.Assign, ast.AugAssign, ast.AnnAssign))
                      and any(isinstance(t, ast.Name) and t.id == message.id
                              for t in (n.targets if isinstance(n, ast.Assign) else [n.target]))]
            if len(values) == 1 and values[0] is not None:
                message = values[0]
        found = _template(message) or _Template(())
        pending = (dotted_name(category) or "").rpartition(".")[2] == "PendingDeprecationWarning"
        return replace(found, pending=pending) if pending else found

    @staticmethod
    def _hinted(unit: _Unit) -> bool:
        """Might relay a helper: its name says so, or it is private and makes a wrapper."""
        lowered = unit.node.name.lower()
        return any(h in lowered for h in _HINTS) or (unit.node.name.startswith("_") and any(s.nested for s in unit.sites))

    @staticmethod
    def _helper_like(unit: _Unit, found: list[_Warning]) -> bool:
        """A helper warns with a message it is given, and looks like one: its name says so, or it is
        private and warns unconditionally or from a wrapper it makes."""
        if not any(_given_message(w, unit) for w in found):
            return False
        lowered = unit.node.name.lower()
        if any(h in lowered for h in _HINTS):
            return True
        if any(w.site.nested and _returns_wrapper(unit.node) for w in found):
            return True  # a decorator: it hands back a function that warns
        # A public function that warns inside a closure it keeps is a member that warns, not a helper.
        return unit.node.name.startswith("_") and not unit.node.name.startswith("__") and (
            any(w.site.nested for w in found) or any(not w.site.conditions for w in found))

    def _callee(self, module: _Module, cls: str | None, self_name: str | None, func: ast.expr) -> str | None:
        text = dotted_name(func)
        if text is None:
            return None
        first, _, rest = text.partition(".")
        if cls is not None and self_name is not None and first == self_name:
            return self.surface.canonical(f"{cls}.{rest}") if rest else None
        if cls is not None and self.surface.member(f"{cls}.{text}") is not None:
            return self.surface.canonical(f"{cls}.{text}")
        return self.surface.canonical(f"{module.name}.{text}")

    # pass 1: helpers ----------------------------------------------------------------------

    def learn(self, module: _Module) -> frozenset[str]:
        """Find the helpers a module defines; return what the second pass may need it for: "warn"
        when it issues a deprecation warning, and what it calls or decorates with (canonical)."""
        needs: set[str | None] = set()
        for call in module.top_calls:
            if self._is_warn(module, call.func):
                needs.add("warn")
        for a in module.assignments:
            needs.add(self._callee(module, a.scope if a.in_class else None, None, a.call.func))
        for unit in module.units:
            needs.update(self._callee(module, unit.cls, None, d.func if isinstance(d, ast.Call) else d)
                         for d in unit.node.decorator_list)
            needs.update(self._callee(module, unit.cls, unit.self_name, site.call.func) for site in unit.sites)
        for unit in module.units:
            found = self._warnings(module, unit)
            if found:
                needs.add("warn")
            if found and self._helper_like(unit, found):
                first = sorted(found, key=lambda w: len(w.site.conditions))[0]
                params = [x.arg for x in (*unit.node.args.posonlyargs, *unit.node.args.args)]
                method = unit.self_name is not None
                meaning = _meaning(first.site.conditions, _frame_of(first.site.stack), unit.defaults(), helper=True)
                self.helpers[unit.path] = _Helper(first.template, meaning, tuple(params), method)
            elif self._hinted(unit):
                params = [x.arg for x in (*unit.node.args.posonlyargs, *unit.node.args.args)]
                method = unit.self_name is not None
                for site in unit.sites:
                    callee = self._callee(module, unit.cls, unit.self_name, site.call.func)
                    member = self.surface.members.get(callee or "")
                    if member is not None and member.kind in ("function", "method", "staticmethod", "classmethod"):
                        self.relays.append(_Relay(unit.path, callee or "", site.call, site.conditions,
                                                  tuple(params), method, unit.defaults()))
        return frozenset(n for n in needs if n)

    def settle(self) -> None:
        """One level further: functions that call a helper (a decorator factory around it) are helpers too."""
        for relay in self.relays:
            helper = self.helpers.get(relay.callee)
            if relay.path in self.helpers or helper is None:
                continue
            given = self._given(helper, relay.call)
            template = self._through(helper.template, given)
            meaning = helper.meaning
            if meaning.kind == "member" and relay.conditions:
                meaning = _meaning(relay.conditions, None, relay.defaults, helper=True)
            elif meaning.kind in ("passed", "left-out") and meaning.key is not None:
                passed = given.get(str(meaning.key))
                meaning = (_Meaning(meaning.kind, passed.id, None, meaning.condition)
                           if isinstance(passed, ast.Name) and passed.id in relay.defaults
                           else _Meaning("other", condition=meaning.condition))
            elif meaning.kind == "keyword" and isinstance(meaning.key, ast.Name) and meaning.key.id in given:
                # the relay passes its own parameter on: the key is now that parameter's
                passed = given[meaning.key.id]
                key: str | ast.expr = _key(passed)
                rename = meaning.rename
                if rename is not None and rename in given and isinstance(given[rename], ast.Name):
                    rename = given[rename].id
                meaning = _Meaning("keyword", key, rename, meaning.condition)
            self.helpers[relay.path] = _Helper(template, meaning, relay.params, relay.method)
        self.relays = []

    @staticmethod
    def _given(helper: _Helper, call: ast.Call) -> dict[str, ast.expr]:
        """The helper's parameters as this call fills them (`self.helper(...)` passes self implicitly)."""
        params = helper.params[1:] if helper.method and isinstance(call.func, ast.Attribute) else helper.params
        given = dict(zip(params, call.args))
        given.update({k.arg: k.value for k in call.keywords if k.arg})
        return given

    @staticmethod
    def _through(template: _Template | None, given: dict[str, ast.expr]) -> _Template | None:
        """The helper's message with this call's arguments filled in."""
        if template is None:
            return None
        parts: list[str | ast.expr] = []
        for part in template.parts:
            if isinstance(part, str):
                parts.append(part)
                continue
            filled = _fill(part, given)
            if filled is not None:
                parts.append(filled)
            elif isinstance(part, ast.Name) and part.id in given:
                parts.append(given[part.id])  # still a hole, but now the caller's expression
            else:
                parts.append(part)
        return _Template(tuple(parts), template.pending)

    # pass 2: entries ----------------------------------------------------------------------

    def collect(self, module: _Module) -> None:
        for unit in module.units:
            self._unit(module, unit)
        for assignment in module.assignments:
            self._assignment(module, assignment)
        for call in module.top_calls:
            self._top_call(module, call)

    def decorated(self) -> None:
        for name, member in self.surface.members.items():
            if member.deprecated is not None:
                self._add(name, name.rpartition(".")[0] if member.kind != "module" else name, member.line,
                          "@deprecated (PEP 702)", _Template((member.deprecated,)) if member.deprecated else None,
                          "high", "decorated with PEP 702 @deprecated", fallback=f"{name} is deprecated")

    def results(self) -> tuple[list[HarvestedChange], list[Unread]]:
        changes = sorted(self.out.values(), key=lambda c: (c.member, c.kind, c.parameter or ""))
        drafted = {c.member for c in changes}
        unread = [u for u in self.unread.values() if u.member not in drafted]
        return changes, unread

    def _unit(self, module: _Module, unit: _Unit) -> None:
        if unit.path in self.helpers:
            return
        target = unit.path
        name = unit.node.name
        if unit.cls is not None and name in ("__init__", "__new__"):
            target = unit.cls  # a warning on construction deprecates the class
        if unit.cls is None and name == "__getattr__":
            self._module_getattr(module, unit)
            return
        defaults = unit.defaults()
        if any(isinstance(d, ast.Attribute) and d.attr in ("setter", "deleter") for d in unit.node.decorator_list):
            # `@x.setter` that warns: setting goes, reading stays; no entry kind says that.
            if self._warnings(module, unit):
                self._unread(target, f"{name} is set (the property's setter warns)", unit.node.lineno)
            return
        # (template, meaning, mechanism, helper or None, line)
        found: list[tuple[_Template | None, _Meaning, str, str | None, int]] = []
        for w in self._warnings(module, unit):
            found.append((w.template, _meaning(w.site.conditions, _frame_of(w.site.stack), defaults), "warnings.warn",
                          None, w.site.call.lineno))
        for site in unit.sites:
            callee = self._callee(module, unit.cls, unit.self_name, site.call.func)
            helper = self.helpers.get(callee or "")
            if helper is not None and callee != unit.path:
                meaning = self._at_site(helper, site.call, defaults)
                if meaning.kind == "member" and site.conditions:
                    meaning = _meaning(site.conditions, _frame_of(site.stack), defaults)
                found.append((self._through(helper.template, self._given(helper, site.call)), meaning,
                              f"helper {callee}", callee, site.call.lineno))
        for deco in unit.node.decorator_list:
            func = deco.func if isinstance(deco, ast.Call) else deco
            callee = self._callee(module, unit.cls, None, func)
            helper = self.helpers.get(callee or "")
            if helper is not None:
                call = deco if isinstance(deco, ast.Call) else ast.Call(func, [], [])
                found.append((self._through(helper.template, self._given(helper, call)), self._at_site(helper, call, defaults),
                              f"helper {callee} (decorator)", callee, unit.node.lineno))
        for template, meaning, mechanism, helper, line in found:
            self._announce(unit, target, module, template, meaning, mechanism, helper, line)

    def _at_site(self, helper: _Helper, call: ast.Call, defaults: dict[str, str | None]) -> _Meaning:
        """A helper's meaning with this call's arguments in place of the helper's parameters."""
        m = helper.meaning
        given = self._given(helper, call)
        if m.kind == "keyword":
            key = m.key
            if isinstance(key, ast.Name):
                key = _key(given[key.id]) if key.id in given else None
            rename = None
            if m.rename is not None and m.rename in given:
                value = given[m.rename]
                rename = value.value if isinstance(value, ast.Constant) and isinstance(value.value, str) else None
            if isinstance(key, str):
                return _Meaning("keyword", key, rename if rename != key else None, m.condition)
            return _Meaning("other", condition=m.condition)
        if m.kind in ("passed", "left-out"):
            # `self._deprecated_arg(kind, "kind", ...)`: the helper's parameter is the caller's
            value = given.get(str(m.key)) if m.key is not None else None
            if isinstance(value, ast.Name) and value.id in defaults:
                return _Meaning(m.kind, value.id, None, m.condition)
            return _Meaning("other", condition=m.condition)
        if m.kind == "positional":
            names = next((s for s in (_string_list(a) for a in [*call.args, *(k.value for k in call.keywords)]) if s), None)
            return _Meaning("positional", tuple(names) if names else None, None, m.condition)  # type: ignore[arg-type]
        return m

    def _announce(self, unit: _Unit, target: str, module: _Module, template: _Template | None, meaning: _Meaning,
                  mechanism: str, helper: str | None, line: int) -> None:
        direct = helper is None
        how = "calls warnings.warn with a deprecation category" if direct else f"uses the deprecation {mechanism}"
        # The scan would count every such call; only those that meet the rest of the test are hit.
        partial = meaning.partial and meaning.kind in ("passed", "left-out", "keyword")
        if meaning.kind == "member":
            literal = template.text if template is not None else ""
            if _BEHAVIOUR.search(literal) and not _GOES.search(literal):
                self._add(target, module.name, line, mechanism, template, "low",
                          f"{how}; the message announces a change of behaviour, not a removal",
                          fallback=f"{target} changes behaviour", announces="behaviour-changed")
                return
            self._add(target, module.name, line, mechanism, template, "high" if direct else "medium", how,
                      fallback=f"{target} is deprecated")
            return
        if meaning.kind == "positional":
            params = [p for p in self.surface.parameters(target) or () if p.position is not None]
            allowed = set(meaning.key) if isinstance(meaning.key, tuple) else None
            slot = next((p for p in params if (p.name not in allowed if allowed is not None else p.default is not None)), None)
            if slot is None:
                self._unread(target, meaning.condition or "positional arguments are passed", line)
                return
            basis = "the names the call site lists" if allowed is not None else "a guess: the first parameter with a default"
            self._add(target, module.name, line, mechanism, template, "medium",
                      f"{how}, which warns when arguments are passed by position; the first slot that goes is "
                      f"`{slot.name}` ({basis})", fallback=f"passing {slot.name} or later arguments of {target} by position "
                      "is deprecated", parameter=slot.name, position=slot.position, announces="keyword-only")
            return
        if meaning.kind == "keyword" and isinstance(meaning.key, str):
            position = next((p.position for p in self.surface.parameters(target) or () if p.name == meaning.key), None)
            if meaning.rename:
                self._add(target, module.name, line, mechanism, template, "medium",
                          f"{how}, which warns when the keyword `{meaning.key}` is passed and passes its value on as "
                          f"`{meaning.rename}`", fallback=f"`{meaning.key}` of {target} is deprecated; use `{meaning.rename}`",
                          parameter=meaning.key, new_parameter=meaning.rename, position=position,
                          announces="parameter-renamed", partial=partial)
                return
            self._add(target, module.name, line, mechanism, template, "medium",
                      f"{how}, which warns when the keyword `{meaning.key}` is passed",
                      fallback=f"`{meaning.key}` of {target} is deprecated", parameter=meaning.key, position=position,
                      announces="parameter-removed", partial=partial)
            return
        if meaning.kind in ("passed", "left-out") and isinstance(meaning.key, str):
            position = next((p.position for p in self.surface.parameters(target) or () if p.name == meaning.key), None)
            if meaning.kind == "passed":
                self._add(target, module.name, line, mechanism, template, "medium",
                          f"{how} when `{meaning.key}` is passed ({meaning.condition})",
                          fallback=f"`{meaning.key}` of {target} is deprecated", parameter=meaning.key, position=position,
                          announces="parameter-removed", partial=partial)
            else:
                self._add(target, module.name, line, mechanism, template, "medium",
                          f"{how} when `{meaning.key}` is left at its default ({meaning.condition}): the default changes",
                          fallback=f"the default of `{meaning.key}` of {target} changes", parameter=meaning.key,
                          position=position, announces="default-changed", partial=partial)
            return
        self._unread(target, meaning.condition or "a condition", line)

    def _unread(self, target: str, condition: str, line: int) -> None:
        paths = self.scope.paths(self.surface, target)
        if paths:
            self.unread.setdefault((paths[0], condition), Unread(paths[0], condition, line))

    def _add(self, canonical: str, module: str, line: int, mechanism: str, template: _Template | None, certainty: str,
             why: str, *, fallback: str, parameter: str | None = None, position: int | None = None,
             replacement: str | None = None, new_parameter: str | None = None, announces: str = "removed",
             partial: bool = False) -> None:
        paths = self.scope.paths(self.surface, canonical)
        if not paths:
            return  # not something downstream code may name
        self._add_path(paths[0], canonical, module, line, mechanism, template, certainty, why, fallback=fallback,
                       parameter=parameter, position=position, replacement=replacement, new_parameter=new_parameter,
                       announces=announces, partial=partial)

    def _add_path(self, path: str, canonical: str | None, module: str, line: int, mechanism: str,
                  template: _Template | None, certainty: str, why: str, *, fallback: str, parameter: str | None = None,
                  position: int | None = None, replacement: str | None = None, new_parameter: str | None = None,
                  announces: str = "removed", partial: bool = False) -> None:
        note = _note(template, fallback)
        evidence = ["deprecation warning" if mechanism != "@deprecated (PEP 702)" else "PEP 702 decorator"]
        if template is not None and not template.literal:
            evidence.append("message built at run time")
        literal = template.text if template is not None else ""
        if replacement is None and announces == "removed" and canonical is not None:
            replacement = self._successor(literal, canonical)
        if replacement is not None:
            evidence.append(f"the message names {replacement}")
        certainty, why = self._when(template, literal, certainty, why)
        if partial:
            certainty, why = "low", f"{why}; the warning also depends on the rest of its test, so a scan overcounts"
        kind = {"removed": "removed", "parameter-renamed": "parameter-renamed", "default-changed": "default-changed",
                "behaviour-changed": "behaviour-changed"}.get(announces, "parameter-removed")
        change = HarvestedChange(path, kind, note, certainty, f"{why}; {_GUESS}", self.surface.module_of(module) or module,
                                 line, mechanism, replacement=replacement, parameter=parameter, position=position,
                                 new_parameter=new_parameter, announces=announces, evidence=tuple(evidence))
        key = (path, kind, parameter)
        kept = self.out.get(key)
        if kept is None or _CERTAIN[certainty] < _CERTAIN[kept.certainty]:
            self.out[key] = change

    def _when(self, template: _Template | None, literal: str, certainty: str, why: str) -> tuple[str, str]:
        """How sure an entry is for the release the draft is for: the message may say when it goes.

        high: the message names a release up to this one; low: a later one, or the warning is only
        a PendingDeprecationWarning; otherwise at most medium (a deprecation that does not say when
        may outlive this release). Without a release, only the category counts.
        """
        if template is not None and template.pending:
            return "low", f"{why}; only a PendingDeprecationWarning, so the removal is further off"
        found = _LATER.search(literal)
        when = None
        if found is not None:
            try:
                when = Version(found.group(1))
            except InvalidVersion:
                when = None
        if self.release is None:
            return certainty, why
        if when is not None and when > self.release:
            return "low", f"{why}; the message says it goes in {when}, after {self.release}"
        if when is not None:
            return ("high" if certainty != "low" else certainty), f"{why}; the message says it goes in {when}"
        if certainty == "high":
            return "medium", f"{why}; the message does not say when it goes"
        return certainty, why

    def _successor(self, text: str, canonical: str) -> str | None:
        """A public member the literal message names as the way forward (not the member itself):
        the first of the few words after "use", "in favor of", ... that is one, read from the
        member's class, its module or the library's top level (`.items` -> `Frame.items`)."""
        owner = canonical.rpartition(".")[0]
        module = self.surface.module_of(canonical) or owner
        for lead in _LEAD.finditer(text):
            for token in _TOKEN.findall(text[lead.end(): lead.end() + 120])[:4]:
                words = [w for w in token.split(".") if w]
                for start in range(len(words)):
                    dotted = ".".join(words[start:])
                    for base in (owner, module, self.surface.library, ""):
                        path = f"{base}.{dotted}" if base else dotted
                        found = self.surface.canonical(path)
                        if found not in self.surface.members or found == canonical or canonical.startswith(found + "."):
                            continue
                        if self.surface.members[found].kind == "module" and base and dotted.count(".") == 0 and base != "":
                            continue  # a bare word that happens to name a submodule
                        paths = self.scope.paths(self.surface, found)
                        if paths:
                            return paths[0]
        return None

    def _module_getattr(self, module: _Module, unit: _Unit) -> None:
        """PEP 562 `__getattr__` that warns for particular names: each name is deprecated."""
        a = unit.node.args
        positional = [*a.posonlyargs, *a.args]
        if not positional:
            return
        arg = positional[0].arg
        for site in unit.sites:
            callee = self._callee(module, None, None, site.call.func)
            if self._is_warn(module, site.call.func):
                template = self._deprecation(module, unit, site.call)
                if template is None:
                    continue
            elif callee in self.helpers:
                helper = self.helpers[callee or ""]
                template = self._through(helper.template, self._given(helper, site.call))
            else:
                continue
            for name in _names_tested(site.conditions, arg, module.literals):
                path = f"{module.name}.{name}"
                filled = _Template(tuple(_fill(p, {arg: ast.Constant(name)}) or p if not isinstance(p, str) else p
                                         for p in template.parts)) if template is not None else None
                why = f"the module's __getattr__ warns when `{name}` is looked up"
                # Only a name the module serves now (a branch that warns and then raises serves
                # none), and only a warning about the name going, not about what it will mean.
                literal = filled.text if filled is not None else ""
                if _BEHAVIOUR.search(literal) and not _GOES.search(literal):
                    continue
                if self.surface.member(path) is not None:
                    self._add(self.surface.canonical(path), module.name, site.call.lineno, "module __getattr__", filled,
                              "high", why, fallback=f"{path} is deprecated")

    def _assignment(self, module: _Module, a: _Assignment) -> None:
        callee = self._callee(module, a.scope if a.in_class else None, None, a.call.func)
        helper = self.helpers.get(callee or "")
        if helper is None:
            return
        if helper.meaning.kind != "member":
            for name in a.names:
                self._unread(self.surface.canonical(f"{a.scope}.{name}"), helper.meaning.condition or "a condition", a.line)
            return
        template = self._through(helper.template, self._given(helper, a.call))
        original = None
        if a.call.args:
            text = dotted_name(a.call.args[0])
            if text is not None:
                found = self.surface.canonical(f"{a.scope}.{text}" if a.in_class else f"{module.name}.{text}")
                if found in self.surface.members:
                    original = found
        name_of = (callee or "").rpartition(".")[2]
        for name in a.names:
            path = f"{a.scope}.{name}"
            replacement = None
            if original is not None:
                paths = self.scope.paths(self.surface, original)
                replacement = paths[0] if paths else None
            lead = (f"deprecated alias of {replacement or original}, made by {name_of}()" if original
                    else f"made by the deprecation helper {name_of}()")
            message = _note(template, "")
            note = f"{lead}: {message}" if message else lead
            self._add(self.surface.canonical(path), module.name, a.line, f"helper {callee}", _Template((note,)), "medium",
                      f"assigned from the deprecation helper {name_of}()", fallback=note, replacement=replacement)

    def _top_call(self, module: _Module, call: ast.Call) -> None:
        """A deprecation warning issued at import time deprecates the module itself."""
        template = self._deprecation(module, None, call) if self._is_warn(module, call.func) else None
        if template is None:
            return
        self._add(module.name, module.name, call.lineno, "warnings.warn", template, "high",
                  "the module warns when it is imported", fallback=f"{module.name} is deprecated")


_CERTAIN = {"high": 0, "medium": 1, "low": 2}


def _returns_wrapper(node: ast.FunctionDef | ast.AsyncFunctionDef) -> bool:
    """Whether a function returns a function it defines (the shape of a decorator)."""
    inner = {d.name for d in ast.walk(node) if isinstance(d, (ast.FunctionDef, ast.AsyncFunctionDef)) and d is not node}
    return any(isinstance(r, ast.Return) and isinstance(r.value, ast.Name) and r.value.id in inner for r in ast.walk(node))


def _given_message(warning: _Warning, unit: _Unit) -> bool:
    """Whether a warning's message is built from what the function is given (a parameter, or a
    local of it or of a function around the call), not only from `self`."""
    if warning.template is None or warning.template.literal:
        return False
    bound: set[str] = set()
    for fn in warning.site.stack:
        a = fn.args  # type: ignore[attr-defined]
        bound.update(x.arg for x in (*a.posonlyargs, *a.args, *a.kwonlyargs))
        bound.update(x.arg for x in (a.vararg, a.kwarg) if x is not None)
    for node in ast.walk(unit.node):
        if isinstance(node, ast.Name) and isinstance(node.ctx, ast.Store):
            bound.add(node.id)
    if unit.self_name in ("self", "cls"):  # common practice; a function in a class body may take another first name
        bound.discard(unit.self_name)
    return any(isinstance(n, ast.Name) and n.id in bound
               for part in warning.template.parts if not isinstance(part, str) for n in ast.walk(part))


def _string_list(node: ast.expr) -> list[str] | None:
    if isinstance(node, (ast.List, ast.Tuple)) and node.elts and all(
            isinstance(e, ast.Constant) and isinstance(e.value, str) for e in node.elts):
        return [e.value for e in node.elts]  # type: ignore[union-attr]
    return None


def _note(template: _Template | None, fallback: str) -> str:
    """A message as one line of text; when none of it is literal, say so beside the fallback."""
    if template is None:
        return fallback
    text = " ".join(template.render().split())
    literal = "".join(p for p in template.parts if isinstance(p, str)).strip()
    if literal:
        return text
    if not text:
        return fallback
    return f"{fallback} (the message is built at run time: {text})" if fallback else f"message built at run time: {text}"


def _names_tested(conditions: tuple[ast.expr, ...], arg: str, literals: dict[str, tuple[str, ...]]) -> list[str]:
    """String constants a condition compares `arg` with: `arg == "x"`, `arg in ("x", "y")`, `arg in TABLE`."""
    out: list[str] = []
    for test in conditions:
        if isinstance(test, ast.UnaryOp) and isinstance(test.op, ast.Not):
            continue  # an `else` branch: not the names tested
        for node in ast.walk(test):
            if not (isinstance(node, ast.Compare) and isinstance(node.left, ast.Name) and node.left.id == arg and len(node.ops) == 1):
                continue
            right = node.comparators[0]
            if isinstance(node.ops[0], ast.Eq) and isinstance(right, ast.Constant) and isinstance(right.value, str):
                out.append(right.value)
            elif isinstance(node.ops[0], ast.In) and isinstance(right, (ast.Tuple, ast.List, ast.Set)):
                out.extend(e.value for e in right.elts if isinstance(e, ast.Constant) and isinstance(e.value, str))
            elif isinstance(node.ops[0], ast.In) and isinstance(right, ast.Name) and right.id in literals:
                out.extend(literals[right.id])
    return out


def harvest(source: Path | str, library: str | None = None, *, release: str | None = None,
            include_private: bool = False, surface: Surface | None = None) -> Harvest:
    """Deprecations the library at `source` announces in its own code (read, never run).

    `surface` is the library's surface when the caller has it already (built from `source`).
    """
    # Test packages are read only when asked for, as private names are (scope.py).
    name, files = discover_modules(Path(source), library, include_tests=include_private)
    scanned = surface
    if surface is None:
        surface, scanned = build_for_drafts(source, library, include_tests=include_private)
    harvester = _Harvester(surface, Scope(include_private), release)
    first = (b"warn", b"deprecat")
    needs: dict[str, frozenset[str]] = {}
    for parsed in iter_parsed(sources_first(files), [], lambda data: any(n in data for n in first)):
        needs[parsed.file.name] = harvester.learn(_Module(parsed, first))
    harvester.settle()
    # Pass 2 reads again only the modules that warn or call (or decorate with) a helper, so no
    # syntax tree outlives its module. A use of a helper spells its name: one whose name says
    # neither `warn` nor `deprecat` is looked for in the modules pass 1 did not read, too.
    helpers = set(harvester.helpers)
    wanted = {m for m, need in needs.items() if "warn" in need or need & helpers}
    names = {h.rpartition(".")[2] for h in helpers}
    extra = tuple(sorted(n.encode() for n in names if not any(f.decode() in n.lower() for f in first)))
    again = [f for f in sources_first(files) if f.name in wanted or (f.name not in needs and extra)]
    for parsed in iter_parsed(again, [], lambda data: any(n in data for n in first + extra)):
        harvester.collect(_Module(parsed, first + extra))
    harvester.decorated()
    changes, unread = harvester.results()
    if scanned is not None and scanned is not surface:
        changes = [c if scanned.member(c.member) is not None else
                   replace(c, dynamic=True, note=f"{c.note} (the library's stubs leave {c.member} out)") for c in changes]
    return Harvest(tuple(changes), tuple(unread), surface, files)


def harvest_deprecations(source: Path | str, library: str | None = None, *, release: str | None = None,
                         include_private: bool = False, surface: Surface | None = None) -> list[HarvestedChange]:
    """The draft entries of `harvest` (see there)."""
    return list(harvest(source, library, release=release, include_private=include_private, surface=surface).changes)

