"""The scripted pre-pass over candidate sites, and the merge with the verdicts made by hand.

    python examples/realworld/judge.py --work /tmp/rw

Candidates are the union of (a) every whole-word occurrence of a change's word (the member's last
name segment; the parameter's name for parameter changes) in every .py file and notebook code
cell of every downstream project, and (b) every finding of either scan (without and with the
library's source), at any level. Each candidate gets a verdict from one of the rules below, each
written out in VERDICTS.md, or is left for a person: `<work>/judge/<library>-todo.txt` shows those
with their context. Verdicts made by hand live in `verdicts/<library>-hand.csv` and win over the
rules; the merged result is `verdicts/<library>.csv`.

The rules never look at what the tool found: only at the downstream code and at the change list.
"""

from __future__ import annotations

import argparse
import ast
import csv
import io
import json
import re
import tokenize
from collections import defaultdict
from dataclasses import dataclass, field
from pathlib import Path

from run import (MODES, HERE, Corpus, Library, Surface, candidate_word, changes_of, library_source, load_corpus,
                 read_surface, results_path, sources_of)

PARAMETER_KINDS = ("parameter-removed", "parameter-renamed", "default-changed")
# Calls whose result is a list (or a deque: it has .append too, and is not the library's).
LIST_CALLS = {"list", "sorted", "deque", "collections.deque"}
# Attributes of the standard library that are lists.
STDLIB_LISTS = {"sys.path", "sys.argv", "sys.meta_path", "sys.path_hooks", "sys.warnoptions"}

Key = tuple[str, str, str, int, str]  # project, file, cell ("" for a plain file), line, change


@dataclass(frozen=True)
class Verdict:
    verdict: str  # "true" | "false" | "unsure" | "todo"
    reason: str


# ------------------------------------------------------------------ reading one source


def _notebook_safe(text: str) -> str:
    """IPython lines (magics, shell escapes, `x?`) become blank so ast can read a cell."""
    out = []
    for line in text.splitlines():
        stripped = line.lstrip()
        out.append("" if stripped.startswith(("%", "!", "?")) or stripped.endswith("?") else line)
    return "\n".join(out)


@dataclass
class Source:
    project: str
    file: str
    cell: str
    text: str
    tree: ast.Module | None
    lines: list[str]

    def line(self, number: int) -> str:
        return self.lines[number - 1] if 0 < number <= len(self.lines) else ""


def load_source(project: str, file: str, cell: int | None, text: str) -> Source:
    body = _notebook_safe(text) if cell is not None else text
    try:
        tree = ast.parse(body)
    except (SyntaxError, ValueError):
        tree = None
    return Source(project, file, "" if cell is None else str(cell), text, tree, text.splitlines())


# ------------------------------------------------------------------ occurrences


@dataclass(frozen=True)
class Occurrence:
    line: int
    column: int
    role: str  # comment | docstring | string | getattr-string | def | param | keyword | name | attr | import | other
    node: ast.AST | None = None
    parent: ast.AST | None = None


def _parents(tree: ast.AST) -> dict[ast.AST, ast.AST]:
    parents = {}
    for node in ast.walk(tree):
        for child in ast.iter_child_nodes(node):
            parents[child] = node
    return parents


def occurrences(src: Source, word: str) -> list[Occurrence]:
    """Every place the word is spelled, and what it is there, by tokens and then by the syntax tree."""
    if src.tree is None:
        return []
    body = _notebook_safe(src.text) if src.cell else src.text
    pattern = re.compile(rf"\b{re.escape(word)}\b")
    found: list[Occurrence] = []
    names: list[tuple[int, int]] = []
    docstring_lines = set()
    for node in ast.walk(src.tree):
        if isinstance(node, ast.Expr) and isinstance(node.value, ast.Constant) and isinstance(node.value.value, str):
            docstring_lines.update(range(node.lineno, (node.end_lineno or node.lineno) + 1))
    getattr_strings = set()
    for node in ast.walk(src.tree):
        if (isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and node.func.id in ("getattr", "setattr")
                and len(node.args) >= 2 and isinstance(node.args[1], ast.Constant) and node.args[1].value == word):
            getattr_strings.add(node.args[1].lineno)
    try:
        tokens = list(tokenize.generate_tokens(io.StringIO(body).readline))
    except (tokenize.TokenError, IndentationError, SyntaxError):
        return []
    for tok in tokens:
        if tok.type == tokenize.COMMENT and pattern.search(tok.string):
            found.append(Occurrence(tok.start[0], tok.start[1], "comment"))
        elif tok.type == tokenize.STRING or tok.type == getattr(tokenize, "FSTRING_MIDDLE", -1):
            for offset, text in enumerate(tok.string.split("\n")):
                if pattern.search(text):
                    line = tok.start[0] + offset
                    role = "docstring" if line in docstring_lines else (
                        "getattr-string" if tok.start[0] in getattr_strings else "string")
                    found.append(Occurrence(line, tok.start[1] if offset == 0 else 0, role))
        elif tok.type == tokenize.NAME and tok.string == word:
            names.append(tok.start)
    if not names:
        return found
    parents = _parents(src.tree)
    by_position: dict[tuple[int, int], tuple[str, ast.AST]] = {}
    for node in ast.walk(src.tree):
        if isinstance(node, ast.Attribute) and node.attr == word and node.end_lineno is not None:
            by_position[(node.end_lineno, node.end_col_offset - len(word))] = ("attr", node)
        elif isinstance(node, ast.Name) and node.id == word:
            by_position[(node.lineno, node.col_offset)] = ("name", node)
        elif isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)) and node.name == word:
            by_position[("def", node.lineno)] = ("def", node)  # type: ignore[index]
        elif isinstance(node, ast.arg) and node.arg == word:
            by_position[(node.lineno, node.col_offset)] = ("param", node)
        elif isinstance(node, ast.keyword) and node.arg == word:
            by_position[(node.lineno, node.col_offset)] = ("keyword", node)
        elif isinstance(node, ast.ImportFrom) and word in (node.module or "").split("."):
            by_position[("from", node.lineno)] = ("import", node)  # type: ignore[index]
        elif isinstance(node, ast.alias) and word in (node.name.split(".") + [node.asname or ""]):
            by_position[("alias", node.lineno)] = ("import", node)  # type: ignore[index]
    for line, column in names:
        hit = by_position.get((line, column))
        if hit is None:
            hit = (by_position.get(("def", line)) or by_position.get(("alias", line))  # type: ignore[arg-type]
                   or by_position.get(("from", line)))  # type: ignore[arg-type]
        if hit is None:
            # an import spread over lines: the alias carries its own position
            found.append(Occurrence(line, column, "other"))
            continue
        role, node = hit
        found.append(Occurrence(line, column, role, node, parents.get(node)))
    return found


# ------------------------------------------------------------------ bindings


@dataclass
class FileFacts:
    """What each name is bound to anywhere in one file, as short descriptions."""

    bindings: dict[str, list[str]]
    # names that some file of the project binds with `from <library> import`; a star import
    # of a project module can only bring the library's member under one of these names.
    project_from_library: set[str] = field(default_factory=set)

    def star_can_bring(self, name: str, library: str) -> bool:
        stars = self.bindings.get("*", [])
        return any(k == f"star:{library}" or k.startswith(f"star:{library}.") for k in stars) or (
            bool(stars) and name in self.project_from_library)

    @classmethod
    def of(cls, tree: ast.Module) -> "FileFacts":
        bindings: dict[str, list[str]] = defaultdict(list)

        def value_kind(value: ast.AST | None) -> str:
            if value is None:
                return "unknown"
            if isinstance(value, (ast.List, ast.ListComp)):
                return "list"
            if isinstance(value, ast.BinOp) and isinstance(value.op, (ast.Add, ast.Mult)):
                left, right = value_kind(value.left), value_kind(value.right)
                return "list" if "list" in (left, right) and {left, right} <= {"list", "int"} else "unknown"
            if isinstance(value, ast.Constant) and isinstance(value.value, int):
                return "int"
            if isinstance(value, ast.Call):
                name = ast.unparse(value.func)
                if name in LIST_CALLS:
                    return "list"
                return f"call:{name}"
            if isinstance(value, (ast.Constant, ast.Dict, ast.Set, ast.Tuple, ast.JoinedStr)):
                return "literal"
            if isinstance(value, ast.Name):
                return f"alias:{value.id}"
            return "unknown"

        def target(node: ast.AST, kind: str) -> None:
            if isinstance(node, ast.Name):
                bindings[node.id].append(kind)
            elif isinstance(node, (ast.Tuple, ast.List)):
                for element in node.elts:
                    target(element, "unknown")
            elif isinstance(node, ast.Starred):
                target(node.value, "list")

        for node in ast.walk(tree):
            if isinstance(node, ast.Assign):
                for t in node.targets:
                    target(t, value_kind(node.value))
            elif isinstance(node, ast.AnnAssign):
                target(node.target, value_kind(node.value) if node.value is not None else "unknown")
            elif isinstance(node, ast.AugAssign):
                kind = value_kind(node.value)
                target(node.target, "list" if kind == "list" else "unknown")
            elif isinstance(node, ast.NamedExpr):
                target(node.target, value_kind(node.value))
            elif isinstance(node, (ast.For, ast.AsyncFor, ast.comprehension)):
                target(node.target, "unknown")
            elif isinstance(node, (ast.With, ast.AsyncWith)):
                for item in node.items:
                    if item.optional_vars is not None:
                        target(item.optional_vars, "unknown")
            elif isinstance(node, ast.arg):
                bindings[node.arg].append("unknown")
            elif isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)):
                bindings[node.name].append("unknown")
            elif isinstance(node, ast.ExceptHandler) and node.name:
                bindings[node.name].append("unknown")
            elif isinstance(node, (ast.Global, ast.Nonlocal)):
                for name in node.names:
                    bindings[name].append("unknown")
            elif isinstance(node, ast.Import):
                for alias in node.names:
                    if alias.asname:
                        bindings[alias.asname].append(f"module:{alias.name}")
                    else:
                        head = alias.name.split(".")[0]
                        bindings[head].append(f"module:{head}")
            elif isinstance(node, ast.ImportFrom):
                base = ("." * node.level) + (node.module or "")
                for alias in node.names:
                    if alias.name == "*":
                        bindings["*"].append(f"star:{base}")
                    else:
                        bindings[alias.asname or alias.name].append(f"from:{base}.{alias.name}")
        return cls(dict(bindings))

    def stores_library(self, library: str) -> bool:
        """Some assignment in the file copies a name bound to the library module (`self.nx = nx`)."""
        aliases = {n for n, kinds in self.bindings.items() if f"module:{library}" in kinds}
        return any(f"alias:{a}" in kinds for kinds in self.bindings.values() for a in aliases)

    def only(self, name: str, predicate) -> bool:
        kinds = self.bindings.get(name, [])
        return bool(kinds) and all(predicate(kind) for kind in kinds)


MODULE_LOADERS = ("import_module", "__import__", "importlib.import_module", "reload", "importlib.reload")


def _not_a_module(kind: str) -> bool:
    """A binding that cannot hold a module object: a literal, a list, or a call that does not load modules."""
    if kind in ("literal", "list", "int"):
        return True
    return kind.startswith("call:") and not kind[5:].endswith(MODULE_LOADERS)


def _other_module(kind: str, library: str) -> bool:
    if kind.startswith("module:"):
        return not (kind == f"module:{library}" or kind.startswith(f"module:{library}."))
    if kind.startswith("from:"):
        path = kind[5:]
        return not path.startswith(".") and not (path == library or path.startswith(library + "."))
    return False


# ------------------------------------------------------------------ rules


IMPORT_GUARDS = {"ImportError", "ModuleNotFoundError", "Exception", "BaseException"}


def guarded_lines(tree: ast.Module) -> set[int]:
    """Lines inside a `try:` body whose handlers catch a failed import (a bare except, ImportError,
    ModuleNotFoundError, Exception): an import there may fall back instead of breaking."""
    lines: set[int] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Try):
            caught = set()
            for handler in node.handlers:
                if handler.type is None:
                    caught.add("Exception")
                else:
                    types = handler.type.elts if isinstance(handler.type, ast.Tuple) else [handler.type]
                    caught.update((_dotted(t) or ["?"])[-1] for t in types)
            if caught & IMPORT_GUARDS:
                for stmt in node.body:
                    lines.update(range(stmt.lineno, (stmt.end_lineno or stmt.lineno) + 1))
    return lines


def _dotted(node: ast.AST) -> list[str] | None:
    """`a.b.c` as ["a", "b", "c"]; None for anything that is not a plain dotted name."""
    parts = []
    while isinstance(node, ast.Attribute):
        parts.append(node.attr)
        node = node.value
    if not isinstance(node, ast.Name):
        return None
    return [node.id, *reversed(parts)]


def _import_path(node: ast.AST, parent: ast.AST | None, word: str) -> str | None:
    """The dotted path an import spells up to the word (`from a.b import c` -> a.b.c)."""
    if isinstance(node, ast.ImportFrom):
        return node.module if not node.level else None
    if isinstance(node, ast.alias) and isinstance(parent, ast.Import):
        parts = node.name.split(".")
        return ".".join(parts[: parts.index(word) + 1]) if word in parts else node.name
    if isinstance(node, ast.alias) and isinstance(parent, ast.ImportFrom) and not parent.level:
        return f"{parent.module}.{node.name}"
    return None


def _import_covers(node: ast.AST, parent: ast.AST | None, member: str) -> bool | None:
    """Does this import statement name the member (or something under it)?"""
    if isinstance(node, ast.ImportFrom):
        if node.level:
            return False
        module = node.module or ""
        if module == member or module.startswith(member + "."):
            return True
        return any(f"{module}.{a.name}" == member for a in node.names)
    if not isinstance(node, ast.alias):
        return None
    if isinstance(parent, ast.Import):
        name = node.name
        return name == member or name.startswith(member + ".")
    if isinstance(parent, ast.ImportFrom):
        if parent.level:
            return False
        full = f"{parent.module}.{node.name}"
        return full == member or full.startswith(member + ".") or (parent.module or "").startswith(member)
    return None


def still_there(new: Surface, path: str) -> bool:
    """The dotted path names a module, or a name a module binds, in the new release's source."""
    if path in new.names:
        return True
    parent, _, name = path.rpartition(".")
    return parent in new.names and new.binds(parent, name)


def judge_occurrence(occ: Occurrence, change: dict, library: str, facts: FileFacts, new: Surface) -> Verdict:
    member: str = change["member"]
    word = candidate_word(change)
    parameter_change = change["kind"] in PARAMETER_KINDS
    module_member = not member.split(".")[-2][:1].isupper() if member.count(".") >= 1 else True
    if occ.role == "comment":
        return Verdict("false", "[comment] the word is in a comment")
    if occ.role == "docstring":
        return Verdict("false", "[docstring] the word is in a docstring or bare string statement")
    if occ.role == "string":
        return Verdict("false", "[string] the word is inside a string literal that no getattr/setattr reads")
    if occ.role in ("getattr-string", "other"):
        return Verdict("todo", "")
    node, parent = occ.node, occ.parent
    if occ.role == "import":
        covers = _import_covers(node, parent, member)
        if covers is True:
            return Verdict("true", "[import] the import statement names the removed member or module")
        if covers is False and not parameter_change:
            spelled = _import_path(node, parent, word)
            if spelled is None or not (spelled == library or spelled.startswith(library + ".")):
                return Verdict("false", "[import] an import from another package that happens to use this name")
            if still_there(new, spelled):
                return Verdict("false", f"[import] imports {spelled}, which the new release still has")
        return Verdict("todo", "")
    if parameter_change:
        if occ.role == "param":
            return Verdict("false", "[parameter] a parameter of a function this project defines")
        if occ.role == "def":
            return Verdict("false", "[definition] a definition of the project's own, not a call")
        if occ.role in ("name", "attr"):
            return Verdict("false", "[not-keyword] the word is a name or attribute here, not a keyword argument")
        return Verdict("todo", "")
    if occ.role == "param":
        return Verdict("false", "[parameter] a parameter name of the project's own function")
    if occ.role == "keyword":
        return Verdict("false", "[keyword] a keyword argument name, not the member")
    if occ.role == "def":
        if isinstance(node, ast.ClassDef) or not isinstance(parent, ast.ClassDef):
            return Verdict("false", "[definition] a function or class the project defines under this name")
        if all(isinstance(b, ast.Name) and b.id in ("object", "list", "dict", "set", "tuple", "str", "int", "Exception")
               for b in parent.bases):
            return Verdict("false", "[definition] a method of a class whose bases are builtins only")
        return Verdict("todo", "")
    if occ.role == "name":
        if module_member:
            kinds = facts.bindings.get(word, [])
            if kinds and all(k == f"from:{member}" for k in kinds):
                return Verdict("true", f"[from-import] `{word}` is bound only by `from {member.rsplit('.', 1)[0]} "
                                       f"import {word}`")
            if kinds and all(_other_module(k, library) or k in ("unknown", "list", "int") for k in kinds) \
                    and not facts.star_can_bring(word, library):
                return Verdict("false", f"[other-binding] `{word}` is bound in this file only to something else "
                                        f"({', '.join(sorted(set(kinds)))[:80]})")
            return Verdict("todo", "")
        return Verdict("false", "[bare-name] a bare name, not an attribute; a method is only reached as an attribute")
    if occ.role == "attr":
        receiver = node.value  # type: ignore[union-attr]
        text = ast.unparse(receiver)
        chain = _dotted(receiver)
        if module_member and chain:
            root, rest = chain[0], chain[1:]
            if facts.only(root, lambda k: k == f"module:{library}"):
                full = ".".join([library, *rest, word])
                if full == member or full.startswith(member + "."):
                    return Verdict("true", f"[module-attr] `{text}.{word}` spells {full}; `{root}` is bound only "
                                           f"by `import {library}`")
                if still_there(new, full):
                    return Verdict("false", f"[module-attr] `{text}.{word}` spells {full}, which the new release "
                                            "still has")
                return Verdict("todo", "")  # another path to the member, perhaps: a person follows it
        if module_member and isinstance(receiver, ast.Attribute) and not facts.stores_library(library) \
                and receiver.attr != library.split(".")[-1] and not member.startswith(f"{library}.{receiver.attr}"):
            return Verdict("false", f"[attr-chain] `{text}` is an attribute chain, and this file never stores "
                                    f"a {library} module in a variable or attribute")
        if text in STDLIB_LISTS:
            return Verdict("false", f"[stdlib-list] `{text}` is a list of the standard library")
        if isinstance(receiver, (ast.List, ast.ListComp, ast.Dict, ast.Set, ast.Constant, ast.JoinedStr)):
            return Verdict("false", "[literal-receiver] the receiver is a literal display")
        if isinstance(receiver, ast.Name):
            if module_member:
                if facts.only(receiver.id, lambda k: k == f"module:{library}"):
                    return Verdict("true", f"[module-attr] `{receiver.id}` is bound only by `import {library}`")
                if facts.only(receiver.id, lambda k: _other_module(k, library)):
                    return Verdict("false", f"[other-module] `{receiver.id}` is bound only to another module")
                if facts.only(receiver.id, _not_a_module):
                    return Verdict("false", f"[not-a-module] `{receiver.id}` is bound only to values that are not "
                                            "modules (literals, results of calls)")
                return Verdict("todo", "")
            if change["member"].endswith(".append") and facts.only(receiver.id, lambda k: k == "list"):
                return Verdict("false", f"[list] `{receiver.id}` is bound in this file only to lists")
            if facts.only(receiver.id, lambda k: _other_module(k, library)):
                return Verdict("false", f"[other-module] `{receiver.id}` is bound only to another module")
        return Verdict("todo", "")
    return Verdict("todo", "")


def judge_keyword_call(call: ast.Call, change: dict, library: str, facts: FileFacts, old: Surface) -> Verdict:
    """A keyword argument named like a removed parameter, decided by what the called name is bound to.

    Only a callee spelled as a dotted name whose head is bound, everywhere in the file, by imports alone
    is decided: its full path is then known (Language Reference 5.3 and 7.11: `import a.b` binds `a`,
    `import a.b as x` and `from a import b` bind the named object). A callee from another package is
    not the member (false); the member's own path is (true); a path of the library that names another
    class or function the old release defines under that simple name is another object (false).
    """
    chain = _dotted(call.func)
    if chain is None or facts.star_can_bring(chain[0], library):
        return Verdict("todo", "")
    kinds = facts.bindings.get(chain[0], [])
    if not kinds or not all(k.startswith(("from:", "module:")) for k in kinds):
        return Verdict("todo", "")
    if all(_other_module(k, library) for k in kinds):
        return Verdict("false", f"[keyword-call] `{ast.unparse(call.func)}` is bound only by imports of another package")
    paths = {".".join([k.split(":", 1)[1], *chain[1:]]) for k in kinds}
    if len(paths) != 1:
        return Verdict("todo", "")
    path = paths.pop()
    member = change["member"]
    if path.startswith("."):
        return Verdict("todo", "")  # a project module: a person follows it
    if path == member:
        return Verdict("true", f"[keyword-call] `{ast.unparse(call.func)}(... {change['parameter']}=...)` calls "
                               f"{member}, bound only by an import")
    name = path.rsplit(".", 1)[-1]
    if (path.startswith(library + ".") and name != member.rsplit(".", 1)[-1]
            and (name in old.classes or name in old.functions)):
        return Verdict("false", f"[keyword-call] `{ast.unparse(call.func)}` is {path}, another "
                                f"{'class' if name in old.classes else 'function'} of {library} than {member}")
    return Verdict("todo", "")


# ------------------------------------------------------------------ the pass


SCOPES = (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda, ast.Module)


def _scope_bindings(scope: ast.AST, name: str) -> list[str] | None:
    """How `name` is bound in this scope, not looking into nested scopes; None when it is global/nonlocal there."""
    kinds: list[str] = []
    if isinstance(scope, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)):
        a = scope.args
        if name in {x.arg for x in a.posonlyargs + a.args + a.kwonlyargs} | (
                {a.vararg.arg} if a.vararg else set()) | ({a.kwarg.arg} if a.kwarg else set()):
            kinds.append("unknown")
    pending = list(ast.iter_child_nodes(scope)) if not isinstance(scope, ast.Lambda) else [scope.body]
    while pending:
        node = pending.pop()
        if isinstance(node, (ast.Global, ast.Nonlocal)) and name in node.names:
            return None
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)):
            if node.name == name:
                kinds.append("unknown")
            pending.extend(node.decorator_list)
            continue  # a nested scope binds its own names
        if isinstance(node, ast.Lambda):
            continue
        if isinstance(node, (ast.Assign, ast.AnnAssign, ast.AugAssign, ast.NamedExpr, ast.For, ast.AsyncFor,
                             ast.With, ast.AsyncWith, ast.Import, ast.ImportFrom, ast.ExceptHandler,
                             ast.Delete, ast.MatchAs, ast.MatchStar)):
            shallow = _shallow_copy(node)
            kinds.extend(FileFacts.of(ast.Module(body=[shallow] if isinstance(shallow, ast.stmt) else
                                                 [ast.Expr(shallow)], type_ignores=[])).bindings.get(name, []))
            if isinstance(node, ast.Delete) and any(isinstance(t, ast.Name) and t.id == name for t in node.targets):
                kinds.append("unknown")
            if isinstance(node, (ast.MatchAs, ast.MatchStar)) and node.name == name:
                kinds.append("unknown")
        pending.extend(ast.iter_child_nodes(node))
    return kinds


def _shallow_copy(node: ast.AST) -> ast.AST:
    """The statement without its nested body, so only its own targets count."""
    if isinstance(node, (ast.For, ast.AsyncFor)):
        return ast.For(target=node.target, iter=ast.Constant(0), body=[ast.Pass()], orelse=[], lineno=0)
    if isinstance(node, (ast.With, ast.AsyncWith)):
        return ast.With(items=node.items, body=[ast.Pass()], lineno=0)
    if isinstance(node, ast.ExceptHandler):
        return ast.Try(body=[ast.Pass()], handlers=[ast.ExceptHandler(type=None, name=node.name, body=[ast.Pass()])],
                       orelse=[], finalbody=[])
    return node


def list_in_scope(tree: ast.Module, parents: dict[ast.AST, ast.AST], name_node: ast.Name) -> bool:
    """The Language Reference's scoping (4.2.2): the nearest enclosing function scope that binds the
    name decides (class bodies are skipped); the name is a list if every binding there is a list."""
    scope = parents.get(name_node)
    while scope is not None and not isinstance(scope, SCOPES):
        if isinstance(scope, (ast.ListComp, ast.SetComp, ast.DictComp, ast.GeneratorExp)) and any(
                isinstance(n, ast.Name) and n.id == name_node.id for g in scope.generators for n in ast.walk(g.target)):
            return False  # a comprehension's own variable
        scope = parents.get(scope)
    while scope is not None:
        kinds = _scope_bindings(scope, name_node.id)
        if kinds is None:
            scope = tree  # declared global: the module decides
            kinds = _scope_bindings(tree, name_node.id) or []
            return bool(kinds) and all(k == "list" for k in kinds)
        if kinds:
            return all(k == "list" for k in kinds)
        scope = parents.get(scope)
        while scope is not None and not isinstance(scope, SCOPES):
            scope = parents.get(scope)
    return False


def attribute_lists(sources: list[Source]) -> set[str]:
    """Attribute names that every assignment in the project binds to a list (for `self.rows.append`)."""
    kinds: dict[str, set[str]] = defaultdict(set)
    for src in sources:
        if src.tree is None:
            continue
        for node in ast.walk(src.tree):
            targets: list[tuple[ast.AST, ast.AST | None]] = []
            if isinstance(node, ast.Assign):
                targets = [(t, node.value) for t in node.targets]
            elif isinstance(node, ast.AnnAssign):
                targets = [(node.target, node.value)]
            elif isinstance(node, ast.AugAssign):
                targets = [(node.target, node.value)]
            elif isinstance(node, (ast.For, ast.With, ast.comprehension)):
                continue
            for t, value in targets:
                name = t.attr if isinstance(t, ast.Attribute) else (t.id if isinstance(t, ast.Name) else None)
                if name is None:
                    for sub in ast.walk(t):
                        if isinstance(sub, ast.Attribute):
                            kinds[sub.attr].add("unknown")
                    continue
                if isinstance(t, ast.Attribute) or _in_class_body(src.tree, node):
                    is_list = isinstance(value, (ast.List, ast.ListComp)) or (
                        isinstance(value, ast.Call) and ast.unparse(value.func) in LIST_CALLS)
                    kinds[name].add("list" if is_list else "unknown")
            if isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and node.func.id == "setattr":
                if len(node.args) >= 2 and isinstance(node.args[1], ast.Constant):
                    kinds[str(node.args[1].value)].add("unknown")
            if isinstance(node, ast.Call) and (_dotted(node.func) or ["?"])[-1][:1].isupper():
                # keyword arguments of a constructor can set attributes (dataclasses, attrs, namedtuples)
                for kw in node.keywords:
                    if kw.arg:
                        kinds[kw.arg].add("unknown")
    return {name for name, seen in kinds.items() if seen == {"list"}}


_class_body_cache: dict[int, set[int]] = {}


def _in_class_body(tree: ast.Module, node: ast.AST) -> bool:
    ids = _class_body_cache.get(id(tree))
    if ids is None:
        ids = {id(stmt) for cls in ast.walk(tree) if isinstance(cls, ast.ClassDef) for stmt in cls.body}
        _class_body_cache[id(tree)] = ids
    return id(node) in ids


_parents_cache: dict[int, dict[ast.AST, ast.AST]] = {}


def parents_of(src: Source) -> dict[ast.AST, ast.AST]:
    key = id(src.tree)
    if key not in _parents_cache:
        _parents_cache[key] = _parents(src.tree)  # type: ignore[arg-type]
    return _parents_cache[key]


def call_line(src: Source, keyword: ast.keyword) -> int | None:
    """For a keyword argument, the line where its call spells the called name."""
    for node in ast.walk(src.tree):  # type: ignore[arg-type]
        if isinstance(node, ast.Call) and keyword in node.keywords:
            return node.func.end_lineno
    return None


def _modules_of(work: Path, lib: Library) -> set[str]:
    """Dotted names of the modules in the library's old source."""
    package = library_source(work, lib, "old")
    out = set()
    for path in package.rglob("*.py"):
        rel = path.relative_to(package.parent).with_suffix("")
        out.add(".".join(rel.parts[:-1] if rel.name == "__init__" else rel.parts))
    return out


def prepass(corpus: Corpus, lib: Library, work: Path) -> dict[Key, tuple[Verdict, str]]:
    """Scripted verdicts for every grep candidate (and context text), keyed by site."""
    changes = changes_of(lib)
    new = read_surface(library_source(work, lib, "new"))
    old = read_surface(library_source(work, lib, "old"))
    modules = {m for m in _modules_of(work, lib)}
    for change in changes:
        change["_module"] = change["member"] in modules
    out: dict[Key, tuple[Verdict, str]] = {}
    for dist in corpus.of(lib.name):
        root = work / "projects" / lib.name / dist.name
        sources = [load_source(dist.name, f, c, t) for f, c, t in sources_of(root)]
        list_attrs = attribute_lists(sources)
        # A notebook's cells share one namespace: bindings are read over all its cells.
        per_file: dict[str, list[ast.Module]] = defaultdict(list)
        for src in sources:
            if src.tree is not None:
                per_file[src.file].append(src.tree)
        facts_of = {f: FileFacts.of(ast.Module(body=[s for t in trees for s in t.body], type_ignores=[]))
                    for f, trees in per_file.items()}
        from_library = {name for facts in facts_of.values() for name, kinds in facts.bindings.items()
                        if any(k.startswith(f"from:{lib.package}") for k in kinds)}
        for facts in facts_of.values():
            facts.project_from_library = from_library
        for src in sources:
            facts = facts_of.get(src.file) if src.tree is not None else None
            guarded = guarded_lines(src.tree) if src.tree is not None else set()
            removed_names = names_from_removed(src, changes, facts_of.get(src.file))
            for (line, change_id), reason in removed_names.items():
                key = (dist.name, src.file, src.cell, line, change_id)
                if line in guarded and reason.startswith("[import]"):
                    continue  # left to a person, as above
                if key not in out:
                    out[key] = (Verdict("true", reason), src.line(line).strip())
            for change in changes:
                word = candidate_word(change)
                if not re.search(rf"\b{re.escape(word)}\b", src.text):
                    continue
                occs = occurrences(src, word) if facts is not None else []
                lines_seen = {o.line for o in occs}
                for number, text in enumerate(src.lines, 1):
                    if re.search(rf"\b{re.escape(word)}\b", text) and number not in lines_seen:
                        occs.append(Occurrence(number, 0, "other"))
                per_line: dict[int, list[Verdict]] = defaultdict(list)
                for occ in occs:
                    if facts is None or occ.role == "other":
                        verdict = Verdict("todo", "")
                    else:
                        verdict = judge_occurrence(occ, change, lib.package, facts, new)
                        if (verdict.verdict == "todo" and occ.role == "attr" and change["member"].endswith(".append")
                                and isinstance(occ.node, ast.Attribute) and isinstance(occ.node.value, ast.Name)
                                and list_in_scope(src.tree, parents_of(src), occ.node.value)):
                            verdict = Verdict("false", f"[list] `{occ.node.value.id}` is bound only to lists in the "
                                                       "scope that decides it")
                        if (verdict.verdict == "todo" and occ.role == "attr" and change["member"].endswith(".append")
                                and isinstance(occ.node, ast.Attribute) and isinstance(occ.node.value, ast.Attribute)
                                and occ.node.value.attr in list_attrs):
                            verdict = Verdict("false", f"[list-attr] every assignment to `.{occ.node.value.attr}` "
                                                       "in this project is a list")
                    if verdict.verdict == "true" and occ.role == "import" and occ.line in guarded:
                        verdict = Verdict("todo", "")  # a guarded import: a person checks the fallback
                    line = occ.line
                    if change["kind"] in PARAMETER_KINDS and occ.role == "keyword":
                        # A parameter's site is its call, on the line that spells the called name.
                        verdict = Verdict("todo", "")
                        if facts is not None and isinstance(occ.parent, ast.Call):
                            verdict = judge_keyword_call(occ.parent, change, lib.package, facts, old)
                        line = call_line(src, occ.node) or occ.line  # type: ignore[arg-type]
                    per_line[line].append(verdict)
                for line, verdicts in per_line.items():
                    trues = [v for v in verdicts if v.verdict == "true"]
                    todos = [v for v in verdicts if v.verdict == "todo"]
                    final = trues[0] if trues else (todos[0] if todos else verdicts[0])
                    out[(dist.name, src.file, src.cell, line, change["id"])] = (final, src.line(line).strip())
    return out


def names_from_removed(src: Source, changes: list[dict], facts: FileFacts | None) -> dict[tuple[int, str], str]:
    """Lines that use a name bound from a removed module: `from M import f` ... `f(...)`, `import M as m` ... `m.f`.

    These lines spell the imported name, not the member's last segment, so grep would not see
    them; they are added as candidates and are true (the name is the module's member).
    """
    out: dict[tuple[int, str], str] = {}
    if src.tree is None or facts is None:
        return out
    for change in changes:
        if not change.get("_module"):
            continue
        member = change["member"]
        bound = {}
        for name, kinds in facts.bindings.items():
            paths = [kind.split(":", 1)[1] for kind in kinds if kind.startswith(("from:", "module:"))]
            # Only names bound to the removed module and to nothing else (a try/except fallback
            # to the new place would still work): those are left to a person.
            if paths and len(paths) == len(kinds) and all(p == member or p.startswith(member + ".") for p in paths):
                bound[name] = paths[0]
        if not bound:
            continue
        for node in ast.walk(src.tree):
            if isinstance(node, ast.ImportFrom) and not node.level and (
                    (node.module or "") == member or (node.module or "").startswith(member + ".")):
                for alias in node.names:
                    out[(alias.lineno, change["id"])] = f"[import] `from {node.module} import` names a member of the removed module"
            if isinstance(node, ast.Name) and node.id in bound and isinstance(node.ctx, ast.Load):
                out[(node.lineno, change["id"])] = (f"[uses-removed-module] `{node.id}` is bound here to "
                                                     f"{bound[node.id]}, a member of the removed module")
    return out


def tool_findings(lib: Library, work: Path) -> dict[Key, list[str]]:
    found: dict[Key, list[str]] = defaultdict(list)
    for mode, archives in ((m, a) for m in MODES for a in (False, True)):
        path = results_path(work, lib.name, mode, archives)
        if not path.exists():
            continue
        for f in json.loads(path.read_text())["findings"]:
            key = (f["project"], f["file"], "" if f["cell"] is None else str(f["cell"]), int(f["line"]), f["change"])
            found[key].append(f"{mode}:{f['confidence']}")
    return found


def read_verdicts(path: Path) -> dict[Key, Verdict]:
    if not path.exists():
        return {}
    with path.open(newline="", encoding="utf-8") as handle:
        return {(r["project"], r["file"], r["cell"], int(r["line"]), r["change"]): Verdict(r["verdict"], r["reason"])
                for r in csv.DictReader(handle)}


def context(work: Path, lib: Library, key: Key, before: int = 6, after: int = 2) -> str:
    project, file, cell, line, _ = key
    path = work / "projects" / lib.name / project / file
    if cell:
        import nbformat

        text = nbformat.reads(path.read_text(encoding="utf-8", errors="replace"), as_version=4).cells[int(cell)].source
    else:
        text = path.read_bytes().decode("utf-8", errors="replace")
    lines = text.splitlines()
    start, end = max(1, line - before), min(len(lines), line + after)
    return "\n".join(f"{'>' if n == line else ' '}{n:5} {lines[n - 1][:160]}" for n in range(start, end + 1))


def run(corpus: Corpus, work: Path, only: str | None) -> None:
    (work / "judge").mkdir(parents=True, exist_ok=True)
    for lib in corpus.libraries:
        if only and lib.name != only:
            continue
        scripted = prepass(corpus, lib, work)
        found = tool_findings(lib, work)
        hand = read_verdicts(HERE / "verdicts" / f"{lib.name}-hand.csv")
        # A site found by reading (a parameter passed through a dict into **kwargs spells no keyword)
        # is a candidate too: the hand verdicts may add lines neither grep nor the tool saw.
        keys = sorted(set(scripted) | set(found) | set(hand), key=lambda k: (k[4], k[0], k[1], k[2], k[3]))
        rows, todo = [], []
        for key in keys:
            verdict = hand.get(key) or (scripted[key][0] if key in scripted else Verdict("todo", ""))
            if verdict.verdict == "todo":
                todo.append(key)
                continue
            rows.append([*key[:3], key[3], key[4], verdict.verdict, verdict.reason])
        out = HERE / "verdicts" / f"{lib.name}.csv"
        with out.open("w", newline="", encoding="utf-8") as handle:
            writer = csv.writer(handle, lineterminator="\n")
            writer.writerow(["project", "file", "cell", "line", "change", "verdict", "reason"])
            writer.writerows(rows)
        with (work / "judge" / f"{lib.name}-todo.txt").open("w", encoding="utf-8") as handle:
            for key in todo:
                handle.write(f"### {key[0]},{key[1]},{key[2]},{key[3]},{key[4]}\n{context(work, lib, key)}\n\n")
        counts = defaultdict(int)
        for row in rows:
            counts[row[5]] += 1
        added = set(hand) - set(scripted) - set(found)
        print(f"{lib.name}: {len(keys)} candidates; {dict(counts)}; {len(todo)} left to judge by hand "
              f"({work / 'judge' / (lib.name + '-todo.txt')}); {len(added)} of them added by hand (neither grep nor the tool)")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--work", type=Path, required=True)
    parser.add_argument("--library")
    args = parser.parse_args()
    run(load_corpus(), args.work.resolve(), args.library)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
