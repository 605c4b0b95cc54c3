"""Draft a change list by comparing the surfaces of two versions of a library.

The draft is a starting point for the maintainer, not a verdict: every entry says how sure the
comparison is and why, in a TOML comment above it. Only public paths are written as `member`,
the most natural one when a member has several.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass

from .model import Member, Parameter, Surface

CERTAINTIES = ("high", "medium", "low")
KINDS = ("removed", "renamed", "moved", "parameter-removed", "parameter-renamed", "default-changed", "behaviour-changed")
_VAR = ("var-positional", "var-keyword")


@dataclass(frozen=True)
class DraftChange:
    """One `[[change]]` entry of a draft, with how sure it is and why."""

    member: str
    kind: str
    note: str
    certainty: str
    why: str
    replacement: str | None = None
    parameter: str | None = None
    new_parameter: str | None = None
    position: int | None = None


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


def render_draft(changes: Iterable[DraftChange], library: str, release: str | None = None,
                 *, origin: str = "impactscope") -> str:
    """The change-list TOML (keys as in DESIGN.md), ids C-1, C-2, ... in a stable order.

    Entries may be DraftChange or anything with a `to_draft()` method (a HarvestedChange).
    """
    drafts = [c.to_draft() if hasattr(c, "to_draft") else c for c in changes]
    ordered = sorted(drafts, key=lambda c: (c.member, KINDS.index(c.kind) if c.kind in KINDS else len(KINDS), c.parameter or "", c.replacement or ""))
    lines = [f"# Draft change list for {library}, written by {origin}.",
             "# Review every entry: certainty comments say how sure each one is.",
             "", "[library]", f"name = {_toml_string(library)}"]
    if release is not None:
        lines.append(f"release = {_toml_string(release)}")
    for i, change in enumerate(ordered, 1):
        lines += ["", f"# certainty: {change.certainty} \u2014 {_comment(change.why)}", "[[change]]",
                  f'id = "C-{i}"', f"member = {_toml_string(change.member)}", f"kind = {_toml_string(change.kind)}"]
        for key in ("replacement", "parameter", "new_parameter"):
            value = getattr(change, key)
            if value is not None:
                lines.append(f"{key} = {_toml_string(value)}")
        if change.position is not None:
            lines.append(f"position = {change.position}")
        lines.append(f"note = {_toml_string(change.note)}")
    return "\n".join(lines) + "\n"


def draft_changes(old: Surface, new: Surface, release: str | None = None) -> str:
    """A change-list TOML draft of what changed from `old` to `new`."""
    return render_draft(compare_surfaces(old, new, release), new.library, release, origin="comparing two versions")


def _signature_key(params: tuple[Parameter, ...] | None) -> tuple:
    return () if params is None else tuple((p.name, p.kind, p.default) for p in params)


class _Comparison:
    def __init__(self, old: Surface, new: Surface, release: str | None) -> None:
        self.old, self.new = old, new
        self.where = f"in {release}" if release else "in the new version"
        self.fresh = {n for n in new.members if n not in old.members}
        self.by_name: dict[str, list[str]] = {}
        self.by_parent: dict[str, list[str]] = {}
        for name in sorted(self.fresh):
            parent, _, last = name.rpartition(".")
            self.by_name.setdefault(last, []).append(name)
            self.by_parent.setdefault(parent, []).append(name)
        self.fate: dict[str, tuple[str, str | None]] = {}
        self.out: list[DraftChange] = []

    def public(self, surface: Surface, canonical: str) -> str:
        paths = surface.public_paths(canonical)
        return paths[0] if paths else canonical

    def run(self) -> list[DraftChange]:
        for name in sorted(self.old.members, key=lambda n: (n.count("."), n)):
            paths = self.old.public_paths(name)
            if not paths:
                continue  # never public: downstream code should not use it
            member = self.old.members[name]
            alive = next((self.new.canonical(p) for p in paths if self.new.member(p) is not None), None)
            if alive is not None:
                self.fate[name] = ("alive", alive)
                self.lost_paths(paths, alive)
                self.parameters(paths[0], member, self.new.members[alive])
            else:
                self.gone(name, paths[0], member)
        return self.out

    def lost_paths(self, paths: Sequence[str], alive: str) -> None:
        for path in paths:
            if path in self.old.aliases and self.new.member(path) is None:
                there = self.public(self.new, alive)
                self.out.append(DraftChange(
                    path, "moved", f"{path} is no longer re-exported {self.where}; import it from {there}", "high",
                    "the definition still exists but this import path no longer leads to it", replacement=there))

    def gone(self, name: str, path: str, member: Member) -> None:
        parent, _, last = name.rpartition(".")
        parent_fate = self.fate.get(parent)
        parent_new = parent_fate[1] if parent_fate and parent_fate[1] else self.new.canonical(path.rpartition(".")[0])
        deprecated = f" (deprecated before: {member.deprecated})" if member.deprecated else ""
        private = f"{parent_new}._{last}"
        if private in self.new.members and self.new.members[private].kind == member.kind:
            self.fate[name] = ("private", private)
            same = bool(member.shape) and member.shape == self.new.members[private].shape
            self.out.append(DraftChange(
                path, "removed", f"{path} became private {self.where} ({private}); it is no longer public API{deprecated}",
                "high" if same else "medium",
                "the same name with a leading underscore exists in the same place" + (", same body" if same else ""),
                replacement=private))
            return
        match = None if member.kind == "module" else self.successor(name, member, parent_new)
        if match is not None:
            kind, target, certainty, why = match
            self.fate[name] = (kind, target)
            if parent_fate is not None and parent_fate[0] in ("moved", "renamed") and target == f"{parent_fate[1]}.{last}":
                return  # it went along with its class or module; the parent's entry covers it
            there = self.public(self.new, target)
            verb = "now lives at" if kind == "moved" else "appears renamed to"
            self.out.append(DraftChange(path, kind, f"{path} {verb} {there} {self.where}{deprecated}", certainty, why,
                                        replacement=there))
            return
        self.fate[name] = ("removed", None)
        if parent_fate is not None and parent_fate[0] != "alive":
            return  # a removed module or class takes its members with it
        # The module the user imports it from, or the one that defined it, may answer at run time.
        places = (self.new.canonical(path.rpartition(".")[0]), parent_new)
        module = next((m for m in (self.new.module_of(p) for p in places) if m in self.new.dynamic), None)
        dynamic = module is not None
        self.out.append(DraftChange(
            path, "removed", f"{path} is gone {self.where}; no successor found{deprecated}",
            "medium" if dynamic else "high",
            f"{module} builds names at run time (__getattr__ or globals()), so it may still answer"
            if dynamic else "no member with this name, signature and body exists in the new version"))

    def successor(self, name: str, member: Member, parent_new: str) -> tuple[str, str, str, str] | None:
        key = (member.kind, _signature_key(member.parameters))
        last = name.rpartition(".")[2]

        def fits(candidate: str) -> bool:
            m = self.new.members[candidate]
            return (m.kind, _signature_key(m.parameters)) == key

        def same_body(candidate: str) -> bool:
            return bool(member.shape) and self.new.members[candidate].shape == member.shape

        moved = [c for c in self.by_name.get(last, ()) if fits(c)]
        exact = [c for c in moved if same_body(c)]
        if len(exact) == 1:
            return ("moved", exact[0], "high", "same kind, signature and body under a new path")
        if len(moved) == 1:
            return ("moved", moved[0], "medium", "same name, kind and signature under a new path; the body differs")
        renamed = [c for c in self.by_parent.get(parent_new, ()) if fits(c) and same_body(c)]
        if len(renamed) == 1:
            return ("renamed", renamed[0], "medium",
                    "a new member in the same place has the same signature and body; the old name is gone (a guess)")
        return None

    def parameters(self, path: str, old: Member, new: Member) -> None:
        if old.parameters is None or new.parameters is None:
            return
        new_by = {p.name: p for p in new.parameters}
        old_names = {p.name for p in old.parameters}
        added = [q for q in new.parameters if q.name not in old_names and q.kind not in _VAR]
        var_kw = next((q.name for q in new.parameters if q.kind == "var-keyword"), None)
        gone_kw = [p for p in old.parameters if p.kind == "keyword-only" and p.name not in new_by]
        for p in old.parameters:
            if p.kind in _VAR:
                continue
            q = new_by.get(p.name)
            if q is not None:
                if p.default is not None and p.default != q.default:
                    after = "it becomes required" if q.default is None else f"it changes to {q.default}"
                    self.out.append(DraftChange(
                        path, "default-changed", f"the default of `{p.name}` in {path}() was {p.default}; {after} {self.where}",
                        "high", "both versions have the parameter with different defaults", parameter=p.name,
                        position=p.position))
                continue
            renamed = None
            if p.position is not None:
                renamed = next((a for a in added if a.position == p.position and a.kind != "keyword-only"), None)
            elif len(gone_kw) == 1:
                kw_added = [a for a in added if a.kind == "keyword-only"]
                renamed = kw_added[0] if len(kw_added) == 1 else None
            if renamed is not None:
                added.remove(renamed)
                at = f"position {p.position}" if p.position is not None else "the only new keyword-only slot"
                self.out.append(DraftChange(
                    path, "parameter-renamed", f"`{p.name}` of {path}() looks renamed to `{renamed.name}` {self.where}",
                    "medium" if p.position is not None else "low",
                    f"a guess: the old name is gone and a new one takes {at}", parameter=p.name,
                    new_parameter=renamed.name, position=p.position))
                continue
            swallowed = f"; calls passing it by keyword now land in **{var_kw}" if var_kw else ""
            self.out.append(DraftChange(
                path, "parameter-removed", f"{path}() no longer takes `{p.name}` {self.where}{swallowed}",
                "medium" if var_kw else "high",
                "the parameter is gone and no new one takes its place" + (" (but **kwargs accepts any keyword)" if var_kw else ""),
                parameter=p.name, position=p.position))


def compare_surfaces(old: Surface, new: Surface, release: str | None = None) -> list[DraftChange]:
    """The changes from `old` to `new`, as draft entries (unordered; `render_draft` orders them)."""
    return _Comparison(old, new, release).run()
