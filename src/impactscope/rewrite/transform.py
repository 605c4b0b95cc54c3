"""libcst transformers that only rewrite: each edit names the node it applies to.

`plan` decides what to do at which node (a visitor's job); `apply_edits` does it and nothing
else, so formatting, comments and every node without an edit come out as they went in.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping, Union

import libcst as cst


@dataclass(frozen=True)
class RenameName:
    """A `Name` (an attribute's last part, a bare name, an import's imported name) spelled anew."""

    new: str


@dataclass(frozen=True)
class ReplaceExpression:
    """An expression (an attribute chain such as `hf.plotting.scatter_grid`) replaced by `code`."""

    code: str


@dataclass(frozen=True)
class RenameString:
    """A string literal (an `__all__` entry) holding `new` instead, its quotes kept."""

    new: str


@dataclass(frozen=True)
class RenameKeyword:
    """A call's keyword argument `old=` spelled `new=`."""

    new: str


@dataclass(frozen=True)
class AddKeyword:
    """A keyword argument `name=code` added at the end of a call's arguments."""

    name: str
    code: str


@dataclass(frozen=True)
class DropArgument:
    """The argument at `index` of a call removed (its value equals the old default)."""

    index: int


@dataclass(frozen=True)
class MoveImport:
    """In `from M import a, b as c`: the alias at `index` imported from `module` as `name`
    (`module` None: from M still). Aliases that keep M stay; the others go to a statement of
    their own after it."""

    index: int
    module: str | None
    name: str
    asname: str | None = None  # set: the alias binds this name (the old one, kept for its users)


@dataclass(frozen=True)
class RenameImport:
    """In `import a.b, c`: the alias at `index` (no `as`) imports the dotted `name` instead."""

    index: int
    name: str


@dataclass(frozen=True)
class AddImport:
    """`import name` on a line of its own after the statement's line, at its indentation."""

    name: str


Edit = Union[RenameName, ReplaceExpression, RenameString, RenameKeyword, AddKeyword, DropArgument, MoveImport,
             RenameImport, AddImport]


def apply_edits(module: cst.Module, edits: Mapping[cst.CSTNode, list[Edit]]) -> cst.Module:
    """`module` with every edit made; nodes are the ones of `module` itself (by identity)."""
    if not edits:
        return module
    return module.visit(_Rewriter(edits))


class _Rewriter(cst.CSTTransformer):
    def __init__(self, edits: Mapping[cst.CSTNode, list[Edit]]) -> None:
        super().__init__()
        self.edits = edits
        self.split: dict[cst.CSTNode, list[cst.BaseSmallStatement]] = {}  # new statements, by the statement they follow

    def leave_Name(self, original: cst.Name, updated: cst.Name) -> cst.BaseExpression:
        for edit in self.edits.get(original, ()):
            if isinstance(edit, RenameName):
                updated = updated.with_changes(value=edit.new)
        return updated

    def leave_Attribute(self, original: cst.Attribute, updated: cst.Attribute) -> cst.BaseExpression:
        for edit in self.edits.get(original, ()):
            if isinstance(edit, ReplaceExpression):
                replaced = cst.parse_expression(edit.code)
                return replaced.with_changes(lpar=updated.lpar, rpar=updated.rpar)
        return updated

    def leave_SimpleString(self, original: cst.SimpleString, updated: cst.SimpleString) -> cst.BaseExpression:
        for edit in self.edits.get(original, ()):
            if isinstance(edit, RenameString):
                prefix = updated.prefix
                quote = updated.quote
                updated = updated.with_changes(value=f"{prefix}{quote}{edit.new}{quote}")
        return updated

    def leave_Arg(self, original: cst.Arg, updated: cst.Arg) -> cst.Arg:
        for edit in self.edits.get(original, ()):
            if isinstance(edit, RenameKeyword) and updated.keyword is not None:
                updated = updated.with_changes(keyword=updated.keyword.with_changes(value=edit.new))
        return updated

    def leave_Call(self, original: cst.Call, updated: cst.Call) -> cst.BaseExpression:
        edits = self.edits.get(original, ())
        drop = {e.index for e in edits if isinstance(e, DropArgument)}
        add = [e for e in edits if isinstance(e, AddKeyword)]
        if not drop and not add:
            return updated
        args = list(updated.args)
        # The last argument's comma (a trailing comma, with the line break before `)`) stays last.
        trailing = args[-1].comma if args else cst.MaybeSentinel.DEFAULT
        between = next((a.comma for a in args[:-1] if isinstance(a.comma, cst.Comma)),
                       cst.Comma(whitespace_after=cst.SimpleWhitespace(" ")))
        out = [a for i, a in enumerate(args) if i not in drop]
        for edit in add:
            out.append(
                cst.Arg(
                    value=cst.parse_expression(edit.code),
                    keyword=cst.Name(edit.name),
                    equal=cst.AssignEqual(cst.SimpleWhitespace(""), cst.SimpleWhitespace("")),
                )
            )
        if out:
            if len(out) > 1 and (add or drop == {len(args) - 1}):
                # The argument that was last gets the separator the others use.
                index = len(out) - 1 - len(add)
                if index >= 0 and index < len(out) - 1:
                    out[index] = out[index].with_changes(comma=between)
            out[-1] = out[-1].with_changes(comma=trailing)
        return updated.with_changes(args=out)

    def leave_ImportFrom(self, original: cst.ImportFrom, updated: cst.ImportFrom) -> cst.ImportFrom | cst.RemovalSentinel:
        moves = [e for e in self.edits.get(original, ()) if isinstance(e, MoveImport)]
        if not moves or isinstance(updated.names, cst.ImportStar):
            return updated
        aliases = list(updated.names)
        by_index = {m.index: m for m in moves}
        stay: list[cst.ImportAlias] = []
        away: dict[str, list[cst.ImportAlias]] = {}
        for i, alias in enumerate(aliases):
            move = by_index.get(i)
            if move is not None:
                alias = alias.with_changes(name=cst.Name(move.name))
                if move.asname is not None:
                    alias = alias.with_changes(asname=cst.AsName(
                        whitespace_before_as=cst.SimpleWhitespace(" "), whitespace_after_as=cst.SimpleWhitespace(" "),
                        name=cst.Name(move.asname)))
            if move is None or move.module is None:
                stay.append(alias)
            else:
                away.setdefault(move.module, []).append(alias)
        if not stay and len(away) == 1:
            # Every name goes to one new module: the statement itself says so.
            (module, moved), = away.items()
            return updated.with_changes(module=cst.parse_expression(module), names=moved)
        if not away:
            return updated.with_changes(names=stay)
        self.split[original] = [
            cst.ImportFrom(module=cst.parse_expression(m), names=_listed(moved)) for m, moved in away.items()
        ]
        if not stay:
            self.split[original][0:1] = []
            first = next(iter(away.items()))
            return updated.with_changes(module=cst.parse_expression(first[0]), names=_listed(first[1]),
                                        lpar=None, rpar=None)
        return updated.with_changes(names=_listed(stay, parenthesised=updated.lpar is not None))

    def leave_Import(self, original: cst.Import, updated: cst.Import) -> cst.Import:
        for edit in self.edits.get(original, ()):
            if isinstance(edit, RenameImport):
                aliases = list(updated.names)
                aliases[edit.index] = aliases[edit.index].with_changes(name=cst.parse_expression(edit.name))
                updated = updated.with_changes(names=aliases)
            elif isinstance(edit, AddImport):
                added = cst.Import(names=[cst.ImportAlias(name=cst.parse_expression(edit.name))])  # type: ignore[arg-type]
                self.split.setdefault(original, []).append(added)
        return updated

    def leave_SimpleStatementLine(
        self, original: cst.SimpleStatementLine, updated: cst.SimpleStatementLine
    ) -> cst.BaseStatement | cst.FlattenSentinel[cst.BaseStatement]:
        extra = [s for small in original.body for s in self.split.get(small, ())]
        if not extra:
            return updated
        return cst.FlattenSentinel([updated, *(cst.SimpleStatementLine(body=[s]) for s in extra)])


def _listed(aliases: list[cst.ImportAlias], parenthesised: bool = False) -> list[cst.ImportAlias]:
    """Aliases with commas between them and none after the last (unless in parentheses)."""
    out = []
    for i, alias in enumerate(aliases):
        last = i == len(aliases) - 1
        if last and not parenthesised:
            out.append(alias.with_changes(comma=cst.MaybeSentinel.DEFAULT))
        elif not last and not isinstance(alias.comma, cst.Comma):
            out.append(alias.with_changes(comma=cst.Comma(whitespace_after=cst.SimpleWhitespace(" "))))
        else:
            out.append(alias)
    return out
