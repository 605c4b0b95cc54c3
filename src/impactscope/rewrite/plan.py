"""From the scan's findings in one cell (or module) to edits on its syntax tree, or to review.

The scan's proof is the finding: a `resolved` finding of a mechanical change, at the line and
column of the node the resolver collected (an import alias, a name, an attribute's last name).
Here that node is found again in a parse of the same text, and the change says what becomes of
it. Anything that cannot be done without guessing goes to review with the reason.
"""

from __future__ import annotations

import ast
from dataclasses import dataclass, field
from typing import Callable, Iterable

import libcst as cst
from libcst.helpers import get_full_name_for_node
from libcst.metadata import MetadataWrapper, ParentNodeProvider, PositionProvider

from impactscope.changes import Change, Kind
from impactscope.findings import Confidence, Finding
from impactscope.resolve.imports import catches_import_error
from impactscope.rewrite.transform import (
    AddImport,
    AddKeyword,
    DropArgument,
    Edit,
    MoveImport,
    RenameImport,
    RenameKeyword,
    RenameName,
    RenameString,
    ReplaceExpression,
)


@dataclass(frozen=True)
class Review:
    """A finding left for a person, and why."""

    finding: Finding
    why: str


@dataclass
class CellPlan:
    module: cst.Module  # the tree the edits name nodes of
    edits: dict[cst.CSTNode, list[Edit]] = field(default_factory=dict)
    rewritten: list[Finding] = field(default_factory=list)  # sites with an edit
    settled: list[Finding] = field(default_factory=list)  # sites that need none (a positional use of a renamed parameter, ...)
    review: list[Review] = field(default_factory=list)
    # The rewritten chains by (old module, new module): their import follows them, or they go back.
    moved: dict[tuple[str, str], list[tuple[Finding, cst.CSTNode]]] = field(default_factory=dict)

    def add(self, node: cst.CSTNode, edit: Edit) -> None:
        self.edits.setdefault(node, []).append(edit)


def shape(change: Change, is_class: Callable[[str], bool]) -> str | None:
    """How a renamed, moved or removed member's uses are rewritten: "leaf" (only its last name
    changes), "module" (a module's member that now lives in another module), or None with no
    drop-in replacement (review)."""
    if change.replacement is None or change.kind not in (Kind.RENAMED, Kind.MOVED, Kind.REMOVED):
        return None
    old_parent, new_parent = change.member.rpartition(".")[0], change.replacement.rpartition(".")[0]
    if old_parent == new_parent:
        return "leaf"
    if not is_class(old_parent) and not is_class(new_parent) and not _capitalised(old_parent, new_parent):
        return "module"
    return None


def _capitalised(*parents: str) -> bool:
    # Without the library's source a CapWords owner is taken for a class (PEP 8, common practice).
    return any(p.rpartition(".")[2][:1].isupper() for p in parents)


def why_not_rewritten(finding: Finding, change: Change, is_class: Callable[[str], bool]) -> str | None:
    """The reason a finding is left for review before its node is looked at, or None."""
    if finding.token_level:
        return "read at token level (Python 2 or nested too deeply): no syntax tree to rewrite"
    if finding.confidence is not Confidence.RESOLVED:
        if change.kind.about_parameter and "*" in finding.pattern:
            return f"{finding.confidence.label}: *args/**kwargs could pass {change.parameter!r}"
        return f"{finding.confidence.label}: the receiver is not proven to be {change.member}"
    if change.kind is Kind.BEHAVIOUR_CHANGED:
        return "behaviour changed: check the use by hand"
    if change.kind in (Kind.RENAMED, Kind.MOVED, Kind.REMOVED) and shape(change, is_class) is None:
        if change.replacement is None:
            return "removed with no replacement"
        return f"{change.replacement} is no drop-in replacement for {change.member}: rewrite the use by hand"
    if change.kind is Kind.DEFAULT_CHANGED and change.default is None:
        return "the change list gives no old default (add default = <literal> to the change) to pass"
    return None


class Planner:
    """Plans one parsed cell. `line_offset`: cell line = tree line + offset (a `%%time` cell)."""

    def __init__(
        self,
        module: cst.Module,
        *,
        changes: dict[str, Change],
        is_class: Callable[[str], bool],
        spelled_elsewhere: Callable[[str], bool],
        binds_top: Callable[[str, str], bool] = lambda name, top: False,
        guarded: frozenset[str] = frozenset(),
        line_offset: int = 0,
    ) -> None:
        wrapper = MetadataWrapper(module)
        self.plan = CellPlan(wrapper.module)
        self.changes = changes
        self.is_class = is_class
        self.spelled_elsewhere = spelled_elsewhere
        self.binds_top = binds_top  # whether a name is bound to a top module (name, top) in this file
        self.guarded = guarded  # modules this file imports inside try/except ImportError
        self.offset = line_offset
        self.positions = wrapper.resolve(PositionProvider)
        self.parents = wrapper.resolve(ParentNodeProvider)
        self.at: dict[tuple[int, int], list[cst.CSTNode]] = {}
        for node, where in self.positions.items():
            if isinstance(node, (cst.Name, cst.ImportAlias, cst.ImportStar, cst.Arg)):
                self.at.setdefault((where.start.line + line_offset, where.start.column), []).append(node)
        self.names: dict[str, list[cst.Name]] = {}  # bare names (not attributes, keywords, ...) by spelling
        for node in self.positions:
            if isinstance(node, cst.Name) and self._is_reference(node):
                self.names.setdefault(node.value, []).append(node)

    def _is_reference(self, node: cst.Name) -> bool:
        parent = self.parents.get(node)
        if isinstance(parent, cst.Attribute) and parent.attr is node:
            return False
        if isinstance(parent, cst.Arg) and parent.keyword is node:
            return False
        if isinstance(parent, cst.ImportAlias):
            return False  # the imported name; the binding it makes is `asname` or this name
        return True

    def run(self, findings: Iterable[Finding]) -> CellPlan:
        findings = sorted(findings)
        sites: list[tuple[Finding, Change, cst.CSTNode]] = []
        for finding in findings:
            change = self.changes[finding.change]
            why = why_not_rewritten(finding, change, self.is_class)
            if why is not None:
                self.plan.review.append(Review(finding, why))
                continue
            node = self._node(finding)
            if node is None:
                self.plan.review.append(Review(finding, "not found again in the syntax tree (a string annotation?)"))
                continue
            sites.append((finding, change, node))
        site_at = {(f.line, f.column, f.change) for f, _, _ in sites}
        renamed = self._imports(sites, site_at)
        for finding, change, node in sites:
            if isinstance(node, cst.ImportAlias):
                continue  # done by _imports
            why = self._site(finding, change, node, renamed)
            if why is not None:
                self.plan.review.append(Review(finding, why))
        return self.plan

    # ------------------------------------------------------------------ locating
    def _node(self, finding: Finding) -> cst.CSTNode | None:
        nodes = self.at.get((finding.line, finding.column), [])
        for kind in (cst.ImportAlias, cst.ImportStar, cst.Name, cst.Arg):
            for node in nodes:
                if isinstance(node, kind):
                    if isinstance(node, cst.Name) and isinstance(self.parents.get(node), cst.ImportAlias):
                        continue
                    return node
        return None

    def _where(self, node: cst.CSTNode) -> tuple[int, int]:
        start = self.positions[node].start
        return start.line + self.offset, start.column

    # ------------------------------------------------------------------ imports
    def _imports(self, sites: list[tuple[Finding, Change, cst.CSTNode]], site_at: set) -> dict[str, str]:
        """Rewrite the `from M import old [as o]` sites; returns the bindings renamed with them
        (old name -> new name) for the uses to follow."""
        renamed: dict[str, str] = {}
        for finding, change, node in sites:
            if not isinstance(node, (cst.ImportAlias, cst.ImportStar)):
                continue
            statement = self.parents.get(node)
            if isinstance(node, cst.ImportStar) or not isinstance(statement, cst.ImportFrom):
                what = "a star import" if isinstance(node, cst.ImportStar) else "an import of the module itself"
                self.plan.review.append(Review(finding, f"{what}: rewrite it by hand"))
                continue
            if change.kind.about_parameter:
                continue  # a parameter change touches calls only
            written = get_full_name_for_node(node.name) or ""
            if written != change.name or change.replacement is None:
                self.plan.review.append(Review(finding, "imported under a path the change list does not spell"))
                continue
            new_name = change.replacement.rpartition(".")[2]
            module = None if shape(change, self.is_class) == "leaf" else change.replacement.rpartition(".")[0]
            index = list(statement.names).index(node)  # type: ignore[arg-type]
            if node.asname is None and new_name != written:
                if self._can_rename(written, new_name, change, site_at):
                    renamed[written] = new_name
                    for string in self._all_entries(written):
                        self.plan.add(string, RenameString(new_name))
                    self.plan.add(statement, MoveImport(index, module, new_name))
                else:
                    # The binding keeps its name: other modules, `__all__` or unproven uses need it.
                    self.plan.add(statement, MoveImport(index, module, new_name, written))
            else:
                self.plan.add(statement, MoveImport(index, module, new_name))
            self.plan.rewritten.append(finding)
        return renamed

    def _can_rename(self, old: str, new: str, change: Change, site_at: set) -> bool:
        """Every reference to the imported `old` in this cell is a site of the change, `new` is
        spelled nowhere here, and no other file of the project spells `old` (a re-export)."""
        if self.names.get(new) or self.spelled_elsewhere(old):
            return False
        for name in self.names.get(old, ()):
            line, column = self._where(name)
            if (line, column, change.id) not in site_at:
                return False
        return True

    def _all_entries(self, name: str) -> list[cst.SimpleString]:
        """The strings naming `name` in module-level `__all__ = [...]` / `(...)`."""
        out: list[cst.SimpleString] = []
        for statement in self.plan.module.body:
            if not isinstance(statement, cst.SimpleStatementLine):
                continue
            for small in statement.body:
                targets = [t.target for t in small.targets] if isinstance(small, cst.Assign) else []
                if isinstance(small, (cst.AugAssign, cst.AnnAssign)):
                    targets = [small.target]
                if not any(isinstance(t, cst.Name) and t.value == "__all__" for t in targets):
                    continue
                value = getattr(small, "value", None)
                if isinstance(value, (cst.List, cst.Tuple)):
                    for element in value.elements:
                        if isinstance(element.value, cst.SimpleString) and element.value.evaluated_value == name:
                            out.append(element.value)
        return out

    # ------------------------------------------------------------------ uses
    def _site(self, finding: Finding, change: Change, node: cst.CSTNode, renamed: dict[str, str]) -> str | None:
        """Plan one use; the reason for review, or None once planned (or nothing is needed)."""
        if not isinstance(node, cst.Name):
            return "not a name or attribute use: rewrite it by hand"
        parent = self.parents.get(node)
        if isinstance(parent, (cst.FunctionDef, cst.ClassDef)):
            return "a subclass defines this member (an override): rename it and its callers by hand"
        if change.kind.about_parameter:
            return self._call_site(finding, change, node)
        attribute = parent if isinstance(parent, cst.Attribute) and parent.attr is node else None
        if attribute is None:
            if node.value in renamed:
                self.plan.add(node, RenameName(renamed[node.value]))
                self.plan.rewritten.append(finding)
            elif node.value == change.name and self._star_bound():
                return "bound by a star import: rewrite it by hand"
            else:
                # The user's own name for the member, or one a project module binds: its binding
                # is rewritten where it is made.
                self.plan.settled.append(finding)
            return None
        assert change.replacement is not None
        if shape(change, self.is_class) == "leaf":
            self.plan.add(node, RenameName(change.replacement.rpartition(".")[2]))
            self.plan.rewritten.append(finding)
            return None
        chain = (get_full_name_for_node(attribute) or "").split(".")
        member = change.member.split(".")
        if len(chain) == len(member) and chain[1:] == member[1:] and self.binds_top(chain[0], member[0]):
            old_module, new_module = change.member.rpartition(".")[0], change.replacement.rpartition(".")[0]
            if old_module in self.guarded:
                # The issue keeps such imports as they are; a chain renamed without its import breaks.
                return f"the import of {old_module} is inside try/except ImportError: rewrite the import and its uses by hand"
            self.plan.add(attribute, ReplaceExpression(".".join([chain[0], *change.replacement.split(".")[1:]])))
            self.plan.moved.setdefault((old_module, new_module), []).append((finding, attribute))
            self.plan.rewritten.append(finding)
            return None
        return "reached through a module name bound to the old place: rewrite its import by hand"

    def _star_bound(self) -> bool:
        return any(
            isinstance(node, cst.ImportStar) for node in self.positions
        )

    # ------------------------------------------------------------------ calls
    def _call_site(self, finding: Finding, change: Change, node: cst.Name) -> str | None:
        parent = self.parents.get(node)
        func: cst.CSTNode = parent if isinstance(parent, cst.Attribute) and parent.attr is node else node
        call = self.parents.get(func)
        if not isinstance(call, cst.Call) or call.func is not func:
            return "not a call: rewrite it by hand"
        args = list(call.args)
        if any(a.star for a in args):
            return "*args/**kwargs in the call: check it by hand"
        keyword = next((i for i, a in enumerate(args) if a.keyword is not None and a.keyword.value == change.parameter), None)
        if change.kind is Kind.PARAMETER_RENAMED:
            assert change.new_parameter is not None
            if keyword is None:
                self.plan.settled.append(finding)  # positional: the call keeps working
                return None
            if any(a.keyword is not None and a.keyword.value == change.new_parameter for a in args):
                return f"passes both {change.parameter}= and {change.new_parameter}="
            self.plan.add(args[keyword], RenameKeyword(change.new_parameter))
            self.plan.rewritten.append(finding)
            return None
        if change.kind is Kind.DEFAULT_CHANGED:
            assert change.default is not None and change.parameter is not None
            if keyword is not None:
                self.plan.settled.append(finding)
                return None
            self.plan.add(call, AddKeyword(change.parameter, self._in_style(change.default, call)))
            self.plan.rewritten.append(finding)
            return None
        # parameter-removed
        if keyword is None:
            index = self._positional_index(finding, change, args)
            if index is None:
                return f"passes {change.parameter} by position, not as the last positional argument"
        else:
            index = keyword
        passed = self.plan.module.code_for_node(args[index].value)
        if change.default is None:
            return f"passes {change.parameter}={passed}; the change list gives no old default (add default = <literal>)"
        if not _same_literal(passed, change.default):
            return f"passes {change.parameter}={passed}, not the old default {change.default}: remove it by hand"
        self.plan.add(call, DropArgument(index))
        self.plan.rewritten.append(finding)
        return None

    def _in_style(self, literal: str, call: cst.Call) -> str:
        """A string default in the quotes of the call's own strings, else those this cell uses
        most, double on a tie (a formatter's choice is kept; double is black's, common practice)."""
        try:
            value = ast.literal_eval(literal)
        except (ValueError, SyntaxError):
            return literal
        if not isinstance(value, str) or '"' in value or "'" in value or "\\" in repr(value):
            return literal
        own = [a.value.quote for a in call.args if isinstance(a.value, cst.SimpleString)]
        quotes = own or [n.quote for n in self.positions if isinstance(n, cst.SimpleString)]
        quote = "'" if quotes.count("'") > quotes.count('"') else '"'
        return quote + value + quote

    def _positional_index(self, finding: Finding, change: Change, args: list[cst.Arg]) -> int | None:
        if change.position is None:
            return None
        # Called through the class (`Table.sort_by(t, ...)`), `self` is passed explicitly: the
        # pattern shows an instance receiver as `<Class>.name` and a class path as written.
        bound = finding.pattern.startswith(("<", "super(")) or not self.is_class(change.member.rpartition(".")[0])
        index = change.position + (0 if bound else 1)
        positional = [i for i, a in enumerate(args) if a.keyword is None]
        if index >= len(positional) or positional[index] != positional[-1]:
            return None
        return positional[index]


def _same_literal(code: str, default: str) -> bool:
    """Whether `code` is a literal equal to `default`, of the same type (`1` is not `True`).
    `ast.literal_eval` reads literals only and runs nothing."""
    try:
        value, old = ast.literal_eval(code.strip()), ast.literal_eval(default)
    except (ValueError, SyntaxError, TypeError, MemoryError, RecursionError):
        return False
    return type(value) is type(old) and value == old


def top_bindings(module: cst.Module, top: str) -> set[str]:
    """Names `module` binds to the library's top module: `import top [as name]`, `import top.sub`
    (binds `top`), `name = __import__("top...")`, `name = importlib.import_module("top")` (the
    Language Reference, "The import statement"; `__import__` returns the top-level package)."""
    out: set[str] = set()

    class Bindings(cst.CSTVisitor):
        def visit_Import(self, node: cst.Import) -> None:
            for alias in node.names:
                dotted = get_full_name_for_node(alias.name) or ""
                if alias.asname is not None and isinstance(alias.asname.name, cst.Name):
                    if dotted == top:
                        out.add(alias.asname.name.value)
                elif dotted.split(".")[0] == top:
                    out.add(top)

        def visit_Assign(self, node: cst.Assign) -> None:
            if not isinstance(node.value, cst.Call) or not node.value.args:
                return
            first = node.value.args[0].value
            if not isinstance(first, cst.SimpleString) or not isinstance(first.evaluated_value, str):
                return
            func, spelled = get_full_name_for_node(node.value.func) or "", first.evaluated_value
            if (func == "__import__" and spelled.split(".")[0] == top) or (
                func in ("importlib.import_module", "import_module") and spelled == top
            ):
                out.update(t.target.value for t in node.targets if isinstance(t.target, cst.Name))

    module.visit(Bindings())
    return out


def imported_names(module: cst.Module) -> set[str]:
    """Names `module` binds with `from M import name [as other]` from a non-library module."""
    out: set[str] = set()

    class Imports(cst.CSTVisitor):
        def visit_ImportFrom(self, node: cst.ImportFrom) -> None:
            if isinstance(node.names, cst.ImportStar):
                return
            for alias in node.names:
                if alias.asname is None and isinstance(alias.name, cst.Name):
                    out.add(alias.name.value)

    module.visit(Imports())
    return out


def follow_imports(plans: list[CellPlan], binds_top: Callable[[str, str], bool]) -> None:
    """After chains `old.module.member` became `new.module.member` (in any of `plans`, the cells
    of one file): each `import old.module` becomes `import new.module` when nothing reads
    `old.module` any more, else `import new.module` is added after it (unless the file has it).
    A call `__import__("old.module")` / `importlib.import_module("old.module")` gets the new
    module in its string when nothing reads the old one; otherwise the chains go back to review
    (see `_string_imports`). With no import of `old.module`, nothing is added: `import top` then
    leaves `top.new` to the library's own `__init__`. Edits go into the plans of the cells
    holding the imports."""
    for old, new in sorted(set().union(*(plan.moved for plan in plans))):
        calls = [(plan, call) for plan in plans for call in _string_imports(plan.module, old)]
        read = any(_reads(plan, old, binds_top) for plan in plans)
        why = _why_string_import_stays([call for _, call in calls], old, read)
        if why is not None:
            _withdraw(plans, (old, new), why)
            continue
        for plan, call in calls:
            plan.add(call.string, RenameString(new))
        imports = [(plan, found) for plan in plans for found in _imports_of(plan.module, old)]
        if read:
            if any(_imports_of(plan.module, new) for plan in plans):
                continue
            for plan, (statement, _index, own_line) in imports:
                if own_line:
                    plan.add(statement, AddImport(new))
            continue
        for plan, (statement, index, _own_line) in imports:
            plan.add(statement, RenameImport(index, new))


@dataclass(frozen=True)
class _StringImport:
    """A call importing a module named by its first argument, a string."""

    string: cst.BaseString  # the argument
    plain: bool  # one literal whose text between the quotes is the module's name
    result_read: bool  # returns the module itself (not its top package), and the value is used


_IMPORT_FUNCTIONS = ("__import__", "importlib.import_module", "import_module")


def _string_imports(module: cst.Module, dotted: str) -> list[_StringImport]:
    """Every `__import__("dotted")` / `importlib.import_module("dotted")` in `module`. The
    Library Reference (`__import__`, `importlib.import_module`): `__import__("a.b")` returns the
    top package `a` (read through chains, as `_reads` sees them), `import_module("a.b")` and
    `__import__("a.b", fromlist=...)` return `a.b` itself: any use of that value reads it."""
    out: list[_StringImport] = []

    class Calls(cst.CSTVisitor):
        METADATA_DEPENDENCIES = (ParentNodeProvider,)

        def visit_Call(self, node: cst.Call) -> None:
            func = get_full_name_for_node(node.func) or ""
            if func not in _IMPORT_FUNCTIONS or not node.args or node.args[0].star:
                return
            first = node.args[0].value
            if not isinstance(first, (cst.SimpleString, cst.ConcatenatedString)) or first.evaluated_value != dotted:
                return
            plain = isinstance(first, cst.SimpleString) and first.raw_value == dotted
            submodule = func != "__import__" or len(node.args) > 1
            used = not isinstance(self.get_metadata(ParentNodeProvider, node), cst.Expr)
            out.append(_StringImport(first, plain, submodule and used))

    MetadataWrapper(module, unsafe_skip_copy=True).visit(Calls())
    return out


def _why_string_import_stays(calls: list[_StringImport], old: str, read: bool) -> str | None:
    """Why the chains through `old` cannot follow its import by a string, or None."""
    if not calls:
        return None
    if read or any(c.result_read for c in calls):
        return f"{old} is imported by a string (__import__/import_module) and still read: rewrite the import and its uses by hand"
    if not all(c.plain for c in calls):
        return f"{old} is imported by a string that is not one plain literal: rewrite the import and its uses by hand"
    return None


def _withdraw(plans: list[CellPlan], moved: tuple[str, str], why: str) -> None:
    """Undo the chain rewrites of `moved` (a chain renamed without its import breaks): review."""
    for plan in plans:
        for finding, node in plan.moved.pop(moved, []):
            left = [e for e in plan.edits.get(node, ()) if not isinstance(e, ReplaceExpression)]
            if left:
                plan.edits[node] = left
            else:
                plan.edits.pop(node, None)
            plan.rewritten.remove(finding)
            plan.review.append(Review(finding, why))


def _imports_of(module: cst.Module, dotted: str) -> list[tuple[cst.Import, int, bool]]:
    """Every `import dotted` alias (no `as`) in `module`: its statement, its index there, and
    whether the statement is a line of its own (a line can follow it)."""
    out: list[tuple[cst.Import, int, bool]] = []

    class Imports(cst.CSTVisitor):
        line = 0

        def visit_SimpleStatementLine(self, node: cst.SimpleStatementLine) -> None:
            self.line += 1

        def leave_SimpleStatementLine(self, original_node: cst.SimpleStatementLine) -> None:
            self.line -= 1

        def visit_Import(self, node: cst.Import) -> None:
            for index, alias in enumerate(node.names):
                if alias.asname is None and get_full_name_for_node(alias.name) == dotted:
                    out.append((node, index, self.line > 0))

    module.visit(Imports())
    return out


def _reads(plan: CellPlan, dotted: str, binds_top: Callable[[str, str], bool]) -> bool:
    """Whether the cell, once its edits are made, still reads the module `dotted` through a name
    bound to its top module (`top.sub`, `top.sub.x`, `alias.sub.x`); imports are not reads."""
    top, _, rest = dotted.partition(".")
    found = False

    class Reads(cst.CSTVisitor):
        def visit_Import(self, node: cst.Import) -> bool:
            return False

        def visit_ImportFrom(self, node: cst.ImportFrom) -> bool:
            return False

        def visit_Attribute(self, node: cst.Attribute) -> bool:
            nonlocal found
            if any(isinstance(e, ReplaceExpression) for e in plan.edits.get(node, ())):
                return False  # rewritten: reads the new module
            # Names and attributes only: `x.sub.f(...).y` holds the chain `x.sub.f`, read (or
            # rewritten) on its own below; the full name libcst gives it would look through the call.
            base: cst.BaseExpression = node
            while isinstance(base, cst.Attribute):
                base = base.value
            head, _, tail = ((get_full_name_for_node(node) or "") if isinstance(base, cst.Name) else "").partition(".")
            if (tail == rest or tail.startswith(rest + ".")) and binds_top(head, top):
                found = True
                return False
            return True

    plan.module.visit(Reads())
    return found


def guarded_imports(modules: Iterable[cst.Module]) -> frozenset[str]:
    """Modules named by `import M` or `__import__("M")` / `import_module("M")` inside the body
    of a `try` that catches ImportError (the resolver's rule: `catches_import_error`): a fallback
    the issue keeps."""
    out: set[str] = set()

    class Inner(cst.CSTVisitor):
        def visit_Import(self, node: cst.Import) -> None:
            out.update(get_full_name_for_node(alias.name) or "" for alias in node.names)

        def visit_Call(self, node: cst.Call) -> None:
            # `__import__("M")` / `importlib.import_module("M")`: the same fallback, by a string.
            first = node.args[0].value if node.args else None
            if (get_full_name_for_node(node.func) or "") in _IMPORT_FUNCTIONS and isinstance(
                first, (cst.SimpleString, cst.ConcatenatedString)
            ) and isinstance(first.evaluated_value, str):
                out.add(first.evaluated_value)

    class Tries(cst.CSTVisitor):
        def visit_Try(self, node: cst.Try) -> None:
            if any(catches_import_error(h) for h in node.handlers):
                node.body.visit(Inner())

    for module in modules:
        module.visit(Tries())
    return frozenset(out)
