"""Draft a change list by comparing the surfaces of two versions of a library.

The draft is a starting point for the maintainer, not a verdict. Every entry carries a
`certainty` key and a comment that says why and on what evidence, and the draft is sorted by
certainty, then by member, so that review can start where the draft is surest. Only paths a
downstream user may name are written (see `scope.py`), and a replacement is always such a path.

What counts as evidence. A member that is gone from its old path has *moved* when a new member
of the same name and kind exists elsewhere and shares more than its name with the old one: the
same signature (with at least one parameter), the same body (`Member.shape`) or the same
docstring (`Member.doc`). It was *renamed* when a new member in the same place shares at least
two of those, one of them the body or the docstring. When the old version's own deprecation
message names a public successor (`harvest`), that settles the successor. A member of a class
never moves to another class: without the class it is removed.

Defaults are compared as values: literals by value (`'a'` equals `"a"`), names through the
library's re-exports. A stub's `...` says only that there is a default, so it is never a change.
A default that is the library's "no explicit default" sentinel (see `is_sentinel`) stands for
"decided at run time": a change to or from it is drafted only when the old version announced it,
that is, warned when the parameter was left out (harvest reads that from the warning's
condition); otherwise it is counted in the draft's header and left out.
"""

from __future__ import annotations

import ast
from collections import Counter
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, replace

from .build import dotted_name
from .model import Member, Parameter, Surface
from .scope import Scope

CERTAINTIES = ("high", "medium", "low")
KINDS = ("removed", "renamed", "moved", "parameter-removed", "parameter-renamed", "default-changed", "behaviour-changed")
_VAR = ("var-positional", "var-keyword")
_CALLABLE = ("function", "method", "classmethod", "staticmethod")
# Common practice: what libraries call the object that stands for "no explicit default"
# (pandas `no_default`, numpy `_NoValue`, dataclasses `MISSING`, `_sentinel`, `NOTSET`).
_SENTINEL_WORDS = frozenset({"nodefault", "novalue", "missing", "sentinel", "notset", "unset", "notgiven", "marker",
                             "undefined", "nothing", "default", "missingtype", "novaluetype", "nodefaulttype"})
_SENTINEL_PARTS = ("sentinel", "nodefault", "novalue")
# Parts of an annotation that say nothing about which class comes back.
_OPAQUE = frozenset({"Any", "Self", "object", "None", "NoReturn", "Never", "TypeVar", "Incomplete"})


@dataclass(frozen=True)
class DraftChange:
    """One `[[change]]` entry of a draft, with how sure it is, why, and on what evidence."""

    member: str
    kind: str
    note: str
    certainty: str
    why: str
    replacement: str | None = None
    parameter: str | None = None
    new_parameter: str | None = None
    position: int | None = None
    evidence: tuple[str, ...] = ()
    dynamic: bool = False  # the scan's reading of the library (stubs first) does not show the member


@dataclass(frozen=True)
class Announcement:
    """What the old version's own deprecation warnings say about a member (from `harvest`).

    `kind` is what the warning announces: "removed" (the member), "parameter-removed",
    "parameter-renamed" or "default-changed" (of `parameter`), or "keyword-only" (positional use).
    """

    member: str  # canonical, in the old surface
    kind: str
    message: str
    replacement: str | None = None
    parameter: str | None = None
    new_parameter: str | None = None


def _toml_string(text: str) -> str:
    out = []
    for ch in text:
        if ch in ('"', "\\"):
            out.append("\\" + ch)
        elif ch == "\n":
            out.append("\\n")
        elif ch == "\t":
            out.append("\\t")
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def _comment(text: str) -> str:
    return " ".join(text.split())


def _order(change: DraftChange) -> tuple:
    rank = CERTAINTIES.index(change.certainty) if change.certainty in CERTAINTIES else len(CERTAINTIES)
    kind = KINDS.index(change.kind) if change.kind in KINDS else len(KINDS)
    return (rank, change.member, kind, change.parameter or "", change.replacement or "")


def counts(changes: Iterable[DraftChange]) -> tuple[Counter[str], Counter[str]]:
    """How many entries of each kind, and of each certainty."""
    listed = list(changes)
    return Counter(c.kind for c in listed), Counter(c.certainty for c in listed)


def summary(changes: Iterable[DraftChange]) -> str:
    """One line: entries by kind and by certainty, e.g. for `--output` to print."""
    kinds, certainties = counts(changes)
    total = sum(kinds.values())
    by_kind = ", ".join(f"{kinds[k]} {k}" for k in KINDS if kinds[k])
    by_certainty = ", ".join(f"{certainties[c]} {c}" for c in CERTAINTIES if certainties[c])
    return f"{total} entries" + (f" ({by_kind}; certainty: {by_certainty})" if total else "")


def render_draft(changes: Iterable[DraftChange], library: str, release: str | None = None,
                 *, origin: str = "impactscope", left_out: Mapping[str, int] | None = None) -> str:
    """The change-list TOML (keys as in docs/change-list.md), sorted by certainty then member, ids C-1, C-2, ...

    Entries may be DraftChange or anything with a `to_draft()` method (a HarvestedChange).
    `left_out` counts what the draft saw and chose not to write, by reason, for the header.
    """
    drafts = [c.to_draft() if hasattr(c, "to_draft") else c for c in changes]
    ordered = sorted(drafts, key=_order)
    lines = [f"# Draft change list for {library}, written by {origin}: {summary(ordered)}.",
             "# Sorted by certainty, then member. Review every entry: the comment above it says why, on what evidence."]
    for reason, number in sorted((left_out or {}).items()):
        if number:
            lines.append(f"# Left out: {number} {reason}.")
    lines += ["", "[library]", f"name = {_toml_string(library)}"]
    if release is not None:
        lines.append(f"release = {_toml_string(release)}")
    for i, change in enumerate(ordered, 1):
        because = _comment(change.why)
        if change.evidence:
            because += f" (evidence: {', '.join(change.evidence)})"
        lines += ["", f"# certainty: {change.certainty} \u2014 {because}", "[[change]]",
                  f'id = "C-{i}"', f"member = {_toml_string(change.member)}", f"kind = {_toml_string(change.kind)}",
                  f"certainty = {_toml_string(change.certainty)}"]
        for key in ("replacement", "parameter", "new_parameter"):
            value = getattr(change, key)
            if value is not None:
                lines.append(f"{key} = {_toml_string(value)}")
        if change.position is not None:
            lines.append(f"position = {change.position}")
        if change.dynamic:
            lines.append("dynamic = true")
        lines.append(f"note = {_toml_string(change.note)}")
    return "\n".join(lines) + "\n"


def draft_changes(old: Surface, new: Surface, release: str | None = None, *, include_private: bool = False,
                  announced: Sequence[Announcement] = ()) -> str:
    """A change-list TOML draft of what changed from `old` to `new`."""
    comparison = _Comparison(old, new, release, Scope(include_private), announced)
    found = comparison.run()
    return render_draft(found, new.library, release, origin="comparing two versions", left_out=comparison.left_out)


def compare_surfaces(old: Surface, new: Surface, release: str | None = None, *, include_private: bool = False,
                     announced: Sequence[Announcement] = ()) -> list[DraftChange]:
    """The changes from `old` to `new`, as draft entries (unordered; `render_draft` orders them)."""
    return _Comparison(old, new, release, Scope(include_private), announced).run()


# -- values -------------------------------------------------------------------------------


SENTINEL = ("sentinel",)


def is_sentinel_name(name: str) -> bool:
    """Whether a name reads as a "no explicit default" marker (common practice, see _SENTINEL_WORDS)."""
    folded = name.lower().replace("_", "")
    return folded in _SENTINEL_WORDS or any(part in folded for part in _SENTINEL_PARTS)


def is_sentinel(surface: Surface, canonical: str) -> bool:
    """A module- or class-level object of the library that stands for "no explicit default":
    a constant (or enum member) whose name, or whose value's class, says so."""
    member = surface.members.get(canonical)
    if member is None or member.kind not in ("constant", "unknown", "dynamic", "property"):
        return False
    names = [canonical.rpartition(".")[2]]
    if member.returns:
        names.append(member.returns.rpartition(".")[2])
    return any(is_sentinel_name(n) for n in names)


def default_value(surface: Surface, module: str, text: str) -> tuple | None:
    """A default as a comparable value; None when it says nothing (a stub's `...`).

    Literals by value and type (`'a'` == `"a"`, `1` != `1.0`); the library's own objects by
    public path; the sentinel as SENTINEL; outside names by their last segment (`np.nan` ==
    `numpy.nan`); anything else by the shape of its syntax tree.
    """
    try:
        node = ast.parse(text.strip(), mode="eval").body
    except SyntaxError:
        return ("text", text)
    if isinstance(node, ast.Constant) and node.value is Ellipsis:
        return None
    try:
        value = ast.literal_eval(node)
    except (ValueError, TypeError, SyntaxError, MemoryError, RecursionError):
        pass
    else:
        return ("literal", type(value).__name__, repr(value))
    dotted = dotted_name(node)
    if dotted is not None:
        canonical = surface.canonical(f"{module}.{dotted}")
        if canonical in surface.members:
            if is_sentinel(surface, canonical):
                return SENTINEL
            paths = surface.public_paths(canonical)
            return ("member", paths[0] if paths else canonical.rpartition(".")[2])
        last = dotted.rpartition(".")[2]
        return SENTINEL if is_sentinel_name(last) else ("name", last)
    return ("expression", ast.dump(node, annotate_fields=False))


def annotation_types(text: str) -> frozenset[str] | None:
    """The class names an annotation allows (last segments; unions, Optional and generics
    opened), or None when some part is opaque (Any, Self, a TypeVar-like single letter)."""
    try:
        node = ast.parse(text, mode="eval").body
    except SyntaxError:
        return None
    names: set[str] = set()

    def walk(n: ast.expr) -> bool:
        if isinstance(n, ast.Constant) and isinstance(n.value, str):
            try:
                return walk(ast.parse(n.value, mode="eval").body)
            except SyntaxError:
                return False
        if isinstance(n, ast.Constant) and n.value is None:
            return True
        if isinstance(n, ast.BinOp) and isinstance(n.op, ast.BitOr):
            return walk(n.left) and walk(n.right)
        if isinstance(n, ast.Subscript):
            head = (dotted_name(n.value) or "").rpartition(".")[2]
            items = n.slice.elts if isinstance(n.slice, ast.Tuple) else [n.slice]
            if head in ("Optional", "Union"):
                return all(walk(i) for i in items)
            if head == "Annotated" and items:
                return walk(items[0])
            return walk(n.value)
        text_ = dotted_name(n)
        if text_ is None:
            return False
        last = text_.rpartition(".")[2]
        if last in _OPAQUE or (len(last) <= 2 and last[:1].isupper()) or last.startswith("_"):
            return False
        names.add(last)
        return True

    return frozenset(names) if walk(node) and names else None


# -- the comparison -----------------------------------------------------------------------


class _Comparison:
    def __init__(self, old: Surface, new: Surface, release: str | None, scope: Scope,
                 announced: Sequence[Announcement], still: frozenset[tuple[str, str]] = frozenset()) -> None:
        self.old, self.new, self.scope = old, new, scope
        self.still = still  # (canonical member, parameter) the new version still accepts through a deprecation shim
        self.where = f"in {release}" if release else "in the new version"
        self.fresh: dict[str, tuple[str, ...]] = {}  # new canonical members the old lacks -> their paths
        for name in new.members:
            if name not in old.members:
                paths = scope.paths(new, name)
                if paths:
                    self.fresh[name] = paths
        self.by_name: dict[str, list[str]] = {}
        self.by_parent: dict[str, list[str]] = {}
        for name in sorted(self.fresh):
            parent, _, last = name.rpartition(".")
            self.by_name.setdefault(last, []).append(name)
            self.by_parent.setdefault(parent, []).append(name)
        self.members: dict[str, Announcement] = {}
        self.params: dict[tuple[str, str], Announcement] = {}
        self.positional: dict[str, Announcement] = {}
        for a in announced:
            if a.parameter is not None:
                self.params.setdefault((a.member, a.parameter), a)
            elif a.kind == "keyword-only":
                self.positional.setdefault(a.member, a)
            else:
                self.members.setdefault(a.member, a)
        self.fate: dict[str, tuple[str, str | None]] = {}
        self.out: list[DraftChange] = []
        self.left_out: Counter[str] = Counter()

    def public(self, surface: Surface, canonical: str) -> str | None:
        paths = self.scope.paths(surface, canonical)
        return paths[0] if paths else None

    def run(self) -> list[DraftChange]:
        for name in sorted(self.old.members, key=lambda n: (n.count("."), n)):
            paths = self.scope.paths(self.old, name)
            if not paths:
                continue  # not something downstream code may name
            member = self.old.members[name]
            alive = [p for p in paths if self.new.member(p) is not None]
            if alive:
                there = self.new.canonical(alive[0])
                self.fate[name] = ("alive", there)
                self.lost_paths([p for p in paths if p not in alive], there)
                self.parameters(paths[0], member, self.new.members[there])
                self.returns(paths[0], member, self.new.members[there])
            else:
                self.gone(name, paths[0], member)
        return self.prune(self.out)

    # members ----------------------------------------------------------------------------

    def lost_paths(self, paths: Sequence[str], alive: str) -> None:
        """Paths to a definition that is still there by another path.

        These are low: a scan matches a change by the definition it names (a module's member) or
        by class and inheritance (a class's member), so it also counts the uses through the paths
        that still work (docs/change-list.md, what each kind matches). The count is an upper bound to review.
        """
        there = self.public(self.new, alive)
        over = "the scan also counts uses through the paths that still work (one definition)"
        for path in paths:
            owner = self.new.member(path.rpartition(".")[0])
            if owner is None:
                continue  # its module or class is gone from there too: that one's entry covers it
            if owner.kind == "class":
                # An attribute a class no longer has is removed from it, wherever else it lives.
                elsewhere = f" (still defined as {there})" if there is not None else ""
                self.add(DraftChange(
                    path, "removed", f"{path} is gone {self.where}{elsewhere}", "low",
                    f"the class no longer has this attribute, but the definition lives on elsewhere; {over}",
                    evidence=("absent from the class",)))
                continue
            if there is not None:
                self.add(DraftChange(
                    path, "moved", f"{path} is no longer importable from there {self.where}; import it from {there}", "low",
                    f"the definition is still public, but this import path no longer leads to it; {over}",
                    replacement=there, evidence=("same definition",)))
            else:
                self.add(DraftChange(
                    path, "removed", f"{path} is no longer public {self.where} (still defined privately as {alive})", "low",
                    f"this import path no longer leads to it and no public path does; {over}", evidence=("same definition",)))

    def gone(self, name: str, path: str, member: Member) -> None:
        parent, _, last = name.rpartition(".")
        parent_fate = self.fate.get(parent)
        parent_new = parent_fate[1] if parent_fate and parent_fate[1] else self.new.canonical(path.rpartition(".")[0])
        told = self.members.get(name)
        deprecated = member.deprecated if member.deprecated is not None else (told.message if told else None)
        since = f"; deprecated before: {_comment(deprecated)}" if deprecated else ""
        announced = ("deprecated in the old version",) if deprecated is not None else ()
        successor = self.announced_successor(name, member, told, parent_new)
        if successor is None and member.kind != "module":
            successor = self.successor(name, member, parent_new)
        if parent_fate is not None and parent_fate[0] != "alive":
            # A removed or moved module or class takes its members with it; only a member that
            # went somewhere else of its own, or that was also re-exported elsewhere (`numpy.source`
            # from `numpy.lib.utils`), gets an entry.
            along = parent_fate[1] is not None and successor is not None and successor[1] == f"{parent_fate[1]}.{last}"
            outside = [p for p in self.scope.paths(self.old, name) if not self.under_gone(p)]
            if (successor is None or along or successor[0] == "removed") and not outside:
                self.fate[name] = ("with-parent", None)
                return
            if outside:
                path = outside[0]
        if successor is not None:
            kind, target, certainty, why, evidence = successor
            self.fate[name] = (kind, target)
            there = self.public(self.new, target) or target
            if kind == "removed":
                self.add(DraftChange(path, "removed", f"{path} is gone {self.where}; use {there} instead{since}", certainty,
                                     why, replacement=there, evidence=evidence + announced))
                return
            verb = "now lives at" if kind == "moved" else "appears renamed to"
            self.add(DraftChange(path, kind, f"{path} {verb} {there} {self.where}{since}", certainty, why,
                                 replacement=there, evidence=evidence + announced))
            return
        self.fate[name] = ("removed", None)
        private = self.new.members.get(f"{parent_new}._{last}")
        twin = f" (a private _{last} remains, which is not API)" if private is not None and private.kind == member.kind else ""
        # The module the user imports it from, or the one that defined it, may answer at run time.
        places = (self.new.canonical(path.rpartition(".")[0]), parent_new)
        module = next((m for m in (self.new.module_of(p) for p in places) if m in self.new.dynamic), None)
        if module is not None and not announced:
            self.add(DraftChange(
                path, "removed", f"{path} is no longer defined {self.where}{twin}; {module} serves names at run time, "
                f"so it may still answer, perhaps with a warning", "low",
                f"gone from the source, but {module} builds names at run time (__getattr__ or globals())"))
            return
        why = "no member of this name, kind and definition exists in the new version"
        if module is not None:
            why += f" ({module} builds names at run time, but the old version announced the removal)"
        self.add(DraftChange(path, "removed", f"{path} is gone {self.where}; no successor found{twin}{since}", "high",
                             why, evidence=announced or ("absent from the new version",)))

    def under_gone(self, path: str) -> bool:
        """Whether a module or class on the way to `path` is itself gone (its entry covers the path)."""
        parts = path.split(".")
        for i in range(len(parts) - 1, 0, -1):
            fate = self.fate.get(self.old.canonical(".".join(parts[:i])))
            if fate is not None and fate[0] != "alive":
                return True
        return False

    def announced_successor(self, name: str, member: Member, told: Announcement | None,
                            parent_new: str) -> tuple[str, str, str, str, tuple[str, ...]] | None:
        """The successor the old version's deprecation message names, when the new version has it."""
        if told is None or told.replacement is None:
            return None
        target = self.new.canonical(told.replacement)
        if target not in self.new.members or self.public(self.new, target) is None or target == name:
            return None
        why = f"the old version's deprecation message names {told.replacement}"
        last, new_last = name.rpartition(".")[2], target.rpartition(".")[2]
        found = self.new.members[target]
        if member.kind == "module" or found.kind != member.kind and not {found.kind, member.kind} <= set(_CALLABLE):
            return ("removed", target, "high", why, ("deprecation message",))
        owner = self.old.members.get(name.rpartition(".")[0])
        if owner is not None and owner.kind == "class" and target.rpartition(".")[0] != parent_new:
            return ("removed", target, "high", why, ("deprecation message",))  # a method never moves to another class
        if new_last == last:
            return ("moved", target, "high", why, ("deprecation message",))
        if target.rpartition(".")[0] == parent_new:
            return ("renamed", target, "high", why, ("deprecation message",))
        return ("removed", target, "high", why, ("deprecation message",))

    def evidence(self, old: Member, new: Member) -> tuple[str, ...]:
        found = []
        if old.parameters and new.parameters is not None and _signature_key(old.parameters) == _signature_key(new.parameters):
            found.append("same signature")
        if old.shape and old.shape == new.shape:
            found.append("same members" if old.kind == "class" else "same body")
        if old.doc and old.doc == new.doc:
            found.append("same docstring")
        return tuple(found)

    def successor(self, name: str, member: Member, parent_new: str) -> tuple[str, str, str, str, tuple[str, ...]] | None:
        parent = self.old.members.get(name.rpartition(".")[0])
        in_class = parent is not None and parent.kind == "class"
        last = name.rpartition(".")[2]
        if not in_class:
            scored = [(c, self.evidence(member, self.new.members[c])) for c in self.by_name.get(last, ())
                      if self.new.members[c].kind == member.kind]
            strong = [(c, e) for c, e in scored if {"same body", "same members", "same docstring"} & set(e)]
            if len(strong) == 1:
                return ("moved", strong[0][0], "high", "the same name and kind under a new path", strong[0][1])
            weak = [(c, e) for c, e in scored if e]
            if not strong and len(weak) == 1:
                return ("moved", weak[0][0], "medium", "the same name and kind under a new path; only the signature matches",
                        weak[0][1])
        renamed = []
        for c in self.by_parent.get(parent_new, ()):
            if self.new.members[c].kind != member.kind:
                continue
            found = self.evidence(member, self.new.members[c])
            if len(found) >= 2 and {"same body", "same members", "same docstring"} & set(found):
                renamed.append((c, found))
        if len(renamed) == 1:
            return ("renamed", renamed[0][0], "medium",
                    "a new member in the same place matches the old one; the name change is inferred", renamed[0][1])
        return None

    # signatures -------------------------------------------------------------------------

    def parameters(self, path: str, old: Member, new: Member) -> None:
        if old.parameters is None or new.parameters is None:
            return
        owner = self.old.members.get(old.name.rpartition(".")[0])
        if old.name.rpartition(".")[2] in ("__init__", "__new__") and owner is not None and owner.kind == "class":
            return  # the class's own entry covers calls of it (a class's parameters are its __init__'s)
        old_module = self.old.module_of(old.name) or ""
        new_module = self.new.module_of(new.name) or ""
        new_by = {p.name: p for p in new.parameters}
        old_names = {p.name for p in old.parameters}
        added = [q for q in new.parameters if q.name not in old_names and q.kind not in _VAR]
        var_kw = next((q.name for q in new.parameters if q.kind == "var-keyword"), None)
        gone_kw = [p for p in old.parameters if p.kind == "keyword-only" and p.name not in new_by]
        keyword_only: list[Parameter] = []
        shifted: list[Parameter] = []
        removed_at: list[int] = []
        for p in old.parameters:
            if p.kind in _VAR:
                continue
            q = new_by.get(p.name)
            if q is None:
                if not self.parameter_gone(path, old, p, added, gone_kw, var_kw) and p.position is not None:
                    removed_at.append(p.position)
                continue
            if q.kind in _VAR:
                continue
            if p.position is not None and q.kind == "keyword-only":
                keyword_only.append(p)
            elif p.position is not None and q.position is not None and p.position != q.position:
                shifted.append(p)
            self.default(path, old, p, q, old_module, new_module)
        if keyword_only:
            first = keyword_only[0]
            names = ", ".join(f"`{p.name}`" for p in keyword_only)
            told = self.positional.get(old.name)
            self.add(DraftChange(
                path, "parameter-removed",
                f"{path}() takes {names} by keyword only {self.where}: a call passing `{first.name}` or a later one "
                "by position breaks; calls by keyword keep working", "high" if told else "medium",
                "positional-or-keyword became keyword-only; drafted as the removal of the positional slot, so the "
                "scan also counts calls that pass it by keyword (there is no keyword-only kind)",
                parameter=first.name, position=first.position,
                evidence=("both signatures",) + (("deprecation warning for positional use",) if told else ())))
        if shifted and not any(at <= min(p.position or 0 for p in shifted) for at in removed_at):
            first = min(shifted, key=lambda p: p.position or 0)
            before = ", ".join(p.name for p in old.parameters if p.position is not None)
            after = ", ".join(q.name for q in new.parameters if q.position is not None)
            self.add(DraftChange(
                path, "parameter-removed",
                f"the positional parameters of {path}() changed order {self.where}: ({before}) became ({after}); "
                f"a call passing `{first.name}` or a later one by position now fills another parameter", "medium",
                "a parameter moved to another position; drafted as the removal of its old positional slot, so the scan "
                "also counts calls that pass it by keyword", parameter=first.name, position=first.position,
                evidence=("both signatures",)))
        self.shims_gone(path, old, new, var_kw)
        for q in added:
            if q.default is None:
                self.add(DraftChange(
                    path, "default-changed", f"{path}() has a new required parameter `{q.name}` {self.where}; "
                    "calls that do not pass it fail", "high",
                    "a parameter without a default was added; calls that leave it out are what breaks",
                    parameter=q.name, position=q.position, evidence=("both signatures",)))

    def shims_gone(self, path: str, old: Member, new: Member, var_kw: str | None) -> None:
        """Keywords the old version took only through a deprecation shim (a decorator that reads
        them out of **kwargs), which the new version takes neither so nor by its signature."""
        names = {p.name for p in old.parameters or ()}
        new_names = {q.name for q in new.parameters or ()}
        for (member, parameter), told in sorted(self.params.items()):
            if member != old.name or parameter in names or parameter in new_names or (new.name, parameter) in self.still:
                continue
            if told.kind not in ("parameter-removed", "parameter-renamed"):
                continue
            evidence = ("deprecation warning", "absent from the new signature")
            if told.new_parameter is not None and told.new_parameter in new_names:
                self.add(DraftChange(
                    path, "parameter-renamed", f"`{parameter}` of {path}() is spelled `{told.new_parameter}` {self.where}",
                    "high", "the old version took it only to warn and pass it on under the new name; the new one does not",
                    parameter=parameter, new_parameter=told.new_parameter, evidence=evidence))
                continue
            swallowed = f"; calls passing it now land in **{var_kw}" if var_kw else ""
            self.add(DraftChange(
                path, "parameter-removed", f"{path}() no longer takes `{parameter}` {self.where}{swallowed}",
                "high" if not var_kw else "medium",
                "the old version took it only to warn that it is deprecated; the new one does not take it",
                parameter=parameter, evidence=evidence))

    def parameter_gone(self, path: str, old: Member, p: Parameter, added: list[Parameter], gone_kw: list[Parameter],
                       var_kw: str | None) -> bool:
        """Draft a parameter that is gone: renamed (True) or removed (False)."""
        told = self.params.get((old.name, p.name))
        renamed = None
        why = ""
        if told is not None and told.new_parameter is not None:
            renamed = next((a for a in added if a.name == told.new_parameter), None)
            why = f"the old version's deprecation warning names `{told.new_parameter}`"
        if renamed is None and p.position is not None:
            renamed = next((a for a in added if a.position == p.position and a.kind != "keyword-only"), None)
            why = f"a guess: the old name is gone and a new one takes position {p.position}"
        elif renamed is None and len(gone_kw) == 1:
            kw_added = [a for a in added if a.kind == "keyword-only"]
            renamed = kw_added[0] if len(kw_added) == 1 else None
            why = "a guess: the old name is gone and a new one takes the only new keyword-only slot"
        if renamed is not None:
            added.remove(renamed)
            certainty = "high" if told is not None and told.new_parameter == renamed.name else \
                "medium" if p.position is not None else "low"
            self.add(DraftChange(
                path, "parameter-renamed", f"`{p.name}` of {path}() looks renamed to `{renamed.name}` {self.where}",
                certainty, why, parameter=p.name, new_parameter=renamed.name, position=p.position,
                evidence=("both signatures",) + (("deprecation warning",) if told else ())))
            return True
        swallowed = f"; calls passing it by keyword now land in **{var_kw}" if var_kw else ""
        self.add(DraftChange(
            path, "parameter-removed", f"{path}() no longer takes `{p.name}` {self.where}{swallowed}",
            "high" if told is not None or not var_kw else "medium",
            "the parameter is gone and no new one takes its place" + (" (but **kwargs accepts any keyword)" if var_kw else ""),
            parameter=p.name, position=p.position,
            evidence=("both signatures",) + (("deprecation warning",) if told else ())))
        return False

    def default(self, path: str, old: Member, p: Parameter, q: Parameter, old_module: str, new_module: str) -> None:
        if p.default is None:
            return  # required before: a default now breaks nothing
        if q.default is None:
            self.add(DraftChange(
                path, "default-changed", f"`{p.name}` of {path}() had the default {p.default}; it becomes required {self.where}",
                "high", "both versions have the parameter; the new one has no default", parameter=p.name,
                position=p.position, evidence=("both signatures",)))
            return
        before = default_value(self.old, old_module, p.default)
        after = default_value(self.new, new_module, q.default)
        if before is None or after is None or before == after:
            return
        told = self.params.get((old.name, p.name))
        if SENTINEL in (before, after):
            if told is None or told.kind != "default-changed":
                self.left_out["default changes to or from a \"no default\" sentinel that the old version did not announce"] += 1
                return
            self.add(DraftChange(
                path, "default-changed", f"the default of `{p.name}` in {path}() changes {self.where} "
                f"({p.default} -> {q.default}): {_comment(told.message)}", "high",
                "the old version warned when the parameter was left out", parameter=p.name, position=p.position,
                evidence=("both signatures", "deprecation warning")))
            return
        self.add(DraftChange(
            path, "default-changed", f"the default of `{p.name}` in {path}() was {p.default}; it changes to {q.default} {self.where}",
            "high", "both versions have the parameter with defaults of different value", parameter=p.name,
            position=p.position, evidence=("both signatures",)))

    def returns(self, path: str, old: Member, new: Member) -> None:
        """A return annotation that names other classes of the library than before, and none of the
        old ones (a refinement, `X` -> `X | None`, or a rewording, `Iterator` -> `Generator`, is not drafted)."""
        if old.kind not in _CALLABLE or new.kind not in _CALLABLE or not old.annotation or not new.annotation:
            return
        # The old classes as the new version knows them: a class renamed with an alias kept
        # (numpy 2: `bool_` is `bool`) is the same class.
        before = {self.new.canonical(p) for c in (old.returns_all or ((old.returns,) if old.returns else ()))
                  for p in (self.old.public_paths(c) or (c,))}
        after = set(new.returns_all or ((new.returns,) if new.returns else ()))
        names_before, names_after = annotation_types(old.annotation), annotation_types(new.annotation)
        if not before or not after or before & after or names_before is None or names_after is None \
                or names_before & names_after:
            return
        self.add(DraftChange(
            path, "behaviour-changed", f"{path}() is annotated to return {new.annotation} {self.where} "
            f"(was {old.annotation})", "low",
            "the return annotations name no class in common; an annotation may change without the object changing",
            evidence=("return annotations",)))

    # output -----------------------------------------------------------------------------

    def add(self, change: DraftChange) -> None:
        self.out.append(change)

    def prune(self, changes: list[DraftChange]) -> list[DraftChange]:
        """Drop what a removed module or class already covers (all but members that went somewhere
        else), parameter entries of members that are gone, and repeats."""
        removed = {c.member for c in changes if c.kind == "removed"}
        gone = {c.member for c in changes if c.kind in ("removed", "moved", "renamed")}
        out: dict[tuple, DraftChange] = {}
        for c in changes:
            parts = c.member.split(".")
            under = any(".".join(parts[:i]) in removed for i in range(1, len(parts)))
            if under and c.kind not in ("moved", "renamed"):
                continue
            if c.kind not in ("removed", "moved", "renamed") and c.member in gone:
                continue
            out.setdefault((c.member, c.kind, c.parameter), c)
        return self.collapse(list(out.values()))

    def collapse(self, changes: list[DraftChange]) -> list[DraftChange]:
        """Many low entries under one module that answers names at run time (a shim such as numpy
        2's `numpy.core`) become one entry on that module: a scan then counts its every use."""
        groups: dict[str, list[DraftChange]] = {}
        for c in changes:
            if c.certainty != "low" or c.kind not in ("removed", "moved"):
                continue
            parts = c.member.split(".")
            # The nearest such module, never the library's top level (that would fold everything).
            shims = [".".join(parts[:i]) for i in range(2, len(parts))
                     if self.new.canonical(".".join(parts[:i])) in self.new.dynamic
                     and (found := self.new.member(".".join(parts[:i]))) is not None and found.kind == "module"]
            if shims:
                groups.setdefault(shims[-1], []).append(c)
        folded = {id(c) for group in groups.values() if len(group) >= 3 for c in group}
        out = [c for c in changes if id(c) not in folded]
        for module, group in sorted(groups.items()):
            if len(group) < 3:
                continue
            shown = ", ".join(sorted(c.member.rpartition(".")[2] for c in group)[:5])
            out.append(DraftChange(
                module, "behaviour-changed",
                f"{len(group)} names under {module} are no longer defined there {self.where} (e.g. {shown}); {module} "
                "answers names at run time (module __getattr__), perhaps with a warning: check the release notes", "low",
                f"{len(group)} low entries folded into one: {module} builds names at run time, so the scan counts its "
                "every use", evidence=("names gone from the source", "module __getattr__")))
        return out


def as_scanned(changes: Iterable[DraftChange], scanned: Surface) -> list[DraftChange]:
    """Mark the entries whose member the scan's reading of the library (stubs first) lacks as
    `dynamic`, so that the draft scans without edits; the note says why."""
    out = []
    for c in changes:
        if scanned.member(c.member) is None:
            c = replace(c, dynamic=True, note=f"{c.note} (the library's stubs leave {c.member} out)")
        out.append(c)
    return out


def _signature_key(params: tuple[Parameter, ...] | None) -> tuple:
    return () if params is None else tuple((p.name, p.kind) for p in params)
