"""Build a `Surface` from a library's source text or stubs, read with `ast` and never run.

Reading is two passes. The first reads each module on its own: the members it defines and an
ordered list of the bindings it makes (definitions, imports, aliases, star imports, `__all__`).
The second links modules together, lazily and with cycle guards: a name is resolved only when
something asks for it, so import order and import cycles inside the library do not matter.
"""

from __future__ import annotations

import ast
import hashlib
import io
import os
import tokenize
from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path

from .model import Member, Parameter, Problem, Surface, SurfaceError, linearize

_PROPERTY = frozenset({"property", "cached_property", "abstractproperty"})
_ACCESSOR = frozenset({"setter", "getter", "deleter"})
_PEP702 = frozenset({"warnings.deprecated", "typing_extensions.deprecated"})
_SELF = frozenset({"typing.Self", "typing_extensions.Self"})
_TRIVIAL = frozenset({b"", b"...", b"pass", b"raise NotImplementedError", b"raise NotImplementedError()"})
_CALLABLE = frozenset({"function", "method", "classmethod", "staticmethod", "property"})
_TRY_NODES = tuple(t for t in (ast.Try, getattr(ast, "TryStar", None)) if t is not None)
_TYPE_ALIAS_NODE = getattr(ast, "TypeAlias", None)  # Python 3.12 `type X = ...`


# -- finding the modules ------------------------------------------------------------------


@dataclass(frozen=True)
class ModuleFile:
    """One module of the library and the file it is read from (None: a namespace package)."""

    name: str
    path: Path | None
    is_package: bool
    is_stub: bool


def _has_init(directory: Path) -> bool:
    return (directory / "__init__.py").is_file() or (directory / "__init__.pyi").is_file()


def discover_modules(source: Path, library: str | None = None) -> tuple[str, tuple[ModuleFile, ...]]:
    """The library's import name and its modules, stubs (.pyi) taking precedence over .py.

    `source` is a package directory, a module file, or a directory that contains the package
    (then the package called `library`, or its `library-stubs` stub package, is used).
    """
    source = Path(source)
    if not source.exists():
        raise SurfaceError(
            f"{source}: no such file or directory; pass a package directory, a module file, "
            "or a directory that contains the package"
        )
    if source.is_file():
        if source.suffix not in (".py", ".pyi"):
            raise SurfaceError(f"{source}: not a Python module (expected a .py or .pyi file)")
        if source.stem == "__init__":
            return discover_modules(source.parent, library)
        stub = source.with_suffix(".pyi")
        if source.suffix == ".py" and stub.is_file():
            source = stub  # PEP 484: a stub next to the module takes precedence
        name = library or source.stem
        return name, (ModuleFile(name, source, False, source.suffix == ".pyi"),)
    if _has_init(source) or source.name.endswith("-stubs") or (library is not None and source.name == library):
        name = library or source.name.removesuffix("-stubs")
        return name, tuple(_walk_package(source, name))
    if library is not None:
        for candidate in (source / f"{library}-stubs", source / library):
            if candidate.is_dir():
                return library, tuple(_walk_package(candidate, library))
        for candidate in (source / f"{library}.pyi", source / f"{library}.py"):
            if candidate.is_file():
                return discover_modules(candidate, library)
        raise SurfaceError(
            f"{source}: holds no package or module named {library!r}; looked for {library}-stubs/, "
            f"{library}/, {library}.pyi and {library}.py"
        )
    found = sorted(p.name for p in source.iterdir() if p.is_dir() and _has_init(p) and p.name.isidentifier())
    if len(found) == 1:
        return discover_modules(source / found[0])
    listed = ", ".join(found[:8]) + (", ..." if len(found) > 8 else "") if found else "none"
    raise SurfaceError(
        f"{source}: is not a package (no __init__.py) and holds {len(found)} packages ({listed}); "
        "name the one to read with library=NAME"
    )


def _walk_package(directory: Path, dotted: str) -> Iterable[ModuleFile]:
    files: dict[str, dict[str, Path]] = {}
    subdirs: list[Path] = []
    with os.scandir(directory) as entries:
        for entry in sorted(entries, key=lambda e: e.name):
            if entry.is_dir():
                if entry.name.isidentifier() and _has_init(Path(entry.path)):
                    subdirs.append(Path(entry.path))
                continue
            stem, dot, suffix = entry.name.rpartition(".")
            if dot and suffix in ("py", "pyi") and stem.isidentifier() and stem != "__main__":
                files.setdefault(stem, {})[suffix] = Path(entry.path)
    init = files.pop("__init__", None)
    if init is None:
        yield ModuleFile(dotted, None, True, False)
    else:
        yield ModuleFile(dotted, init.get("pyi", init.get("py")), True, "pyi" in init)
    for stem, found in files.items():
        if (directory / stem).is_dir() and _has_init(directory / stem):
            continue  # the package wins over a same-named module, as the import system does
        yield ModuleFile(f"{dotted}.{stem}", found.get("pyi", found.get("py")), False, "pyi" in found)
    for sub in subdirs:
        yield from _walk_package(sub, f"{dotted}.{sub.name}")


# -- reading one module -------------------------------------------------------------------


class SourceText:
    """The bytes of a module, for slicing out default values and digesting bodies."""

    __slots__ = ("lines",)

    def __init__(self, data: bytes) -> None:
        encoding = "utf-8"
        try:
            encoding = tokenize.detect_encoding(io.BytesIO(data).readline)[0]
        except SyntaxError:
            pass
        if encoding == "utf-8-sig":
            data = data.removeprefix(b"\xef\xbb\xbf")
        elif encoding != "utf-8":
            # ast column offsets count UTF-8 bytes of the decoded text.
            data = data.decode(encoding, "replace").encode("utf-8")
        self.lines = data.splitlines(keepends=True)

    def segment(self, node: ast.expr) -> str:
        start, end = node.lineno - 1, (node.end_lineno or node.lineno) - 1
        if start == end and 0 <= start < len(self.lines):
            return self.lines[start][node.col_offset : node.end_col_offset].decode("utf-8", "replace")
        return ast.unparse(node)  # spans lines: a normalised one-line form reads better

    def digest(self, first: int, col: int, last: int) -> str:
        chunk = self.lines[first:last]
        if chunk:
            chunk[0] = chunk[0][col:]
        text = b"\n".join(s for s in (line.strip() for line in chunk) if s and not s.startswith(b"#"))
        if text in _TRIVIAL:
            return ""
        return hashlib.blake2b(text, digest_size=8).hexdigest()

    def body_shape(self, node: ast.FunctionDef | ast.AsyncFunctionDef) -> str:
        body = node.body
        if body and isinstance(body[0], ast.Expr) and isinstance(body[0].value, ast.Constant) and isinstance(body[0].value.value, str):
            body = body[1:]  # a docstring is not part of the shape
        if not body:
            return ""
        first = body[0]
        line = min([first.lineno, *(d.lineno for d in getattr(first, "decorator_list", ()))])
        col = first.col_offset if line == first.lineno else 0
        return self.digest(line - 1, col, node.end_lineno or line)


@dataclass(frozen=True)
class ParsedModule:
    file: ModuleFile
    tree: ast.Module
    text: SourceText


def iter_parsed(files: Iterable[ModuleFile], problems: list[Problem]) -> Iterator[ParsedModule]:
    """Parse modules one at a time; one that cannot be read is appended to `problems` instead.

    Yielding one tree at a time keeps memory flat: the collector would otherwise spend most of
    the build walking millions of live AST nodes.
    """
    for f in files:
        if f.path is None:
            yield ParsedModule(f, ast.Module(body=[], type_ignores=[]), SourceText(b""))
            continue
        try:
            data = f.path.read_bytes()
            tree = ast.parse(data, filename=str(f.path))
        except SyntaxError as exc:
            problems.append(Problem(f.name, str(f.path), f"syntax error at line {exc.lineno}: {exc.msg}"))
            continue
        except (ValueError, UnicodeDecodeError) as exc:
            problems.append(Problem(f.name, str(f.path), f"cannot decode the source: {exc}"))
            continue
        except RecursionError:
            problems.append(Problem(f.name, str(f.path), "nested too deeply to parse"))
            continue
        except OSError as exc:
            problems.append(Problem(f.name, str(f.path), f"cannot read the file: {exc.strerror or exc}"))
            continue
        yield ParsedModule(f, tree, SourceText(data))


def parse_modules(files: Sequence[ModuleFile]) -> tuple[list[ParsedModule], list[Problem]]:
    """Parse every module and keep the trees (for callers that walk them again, like harvest)."""
    problems: list[Problem] = []
    parsed = list(iter_parsed(files, problems))
    return parsed, problems


def dotted_name(node: ast.expr | None) -> str | None:
    """`a.b.c` for a Name/Attribute chain, else None."""
    parts: list[str] = []
    while isinstance(node, ast.Attribute):
        parts.append(node.attr)
        node = node.value
    if not isinstance(node, ast.Name):
        return None
    parts.append(node.id)
    return ".".join(reversed(parts))


def _last(text: str | None) -> str:
    return (text or "").rpartition(".")[2]


def _is_type_checking(test: ast.expr) -> bool:
    return _last(dotted_name(test)) == "TYPE_CHECKING"


def _is_main_guard(test: ast.expr) -> bool:
    return (
        isinstance(test, ast.Compare)
        and isinstance(test.left, ast.Name)
        and test.left.id == "__name__"
        and any(isinstance(c, ast.Constant) and c.value == "__main__" for c in test.comparators)
    )


def _is_namespace_call(node: ast.expr) -> bool:
    return (
        isinstance(node, ast.Call)
        and isinstance(node.func, ast.Name)
        and node.func.id in ("globals", "vars")
        and not node.args
    )


def _names_self(node: ast.expr | None) -> bool:
    """Whether a return annotation is PEP 673's `Self` (also as a string, or Optional[Self])."""
    if node is None:
        return False
    if isinstance(node, ast.Constant) and isinstance(node.value, str):
        try:
            return _names_self(ast.parse(node.value.strip(), mode="eval").body)
        except SyntaxError:
            return False
    if isinstance(node, ast.BinOp) and isinstance(node.op, ast.BitOr):
        return any(_names_self(n) for n in (node.left, node.right) if not _is_none(n))
    if isinstance(node, ast.Subscript) and _last(dotted_name(node.value)) in ("Optional", "Union"):
        items = node.slice.elts if isinstance(node.slice, ast.Tuple) else [node.slice]
        return any(_names_self(n) for n in items if not _is_none(n))
    return _last(dotted_name(node)) == "Self"


def _string(node: ast.expr | None) -> str | None:
    return node.value if isinstance(node, ast.Constant) and isinstance(node.value, str) else None


@dataclass(frozen=True)
class _Bind:
    """One module-level binding: a definition, an import, an alias assignment or an outside import."""

    kind: str  # "def" | "import" | "alias" | "external"
    target: str  # def: canonical path; import: absolute dotted path; alias: dotted text; external: dotted
    line: int
    type_only: bool = False
    reexport: bool = False  # `import x as x`, `from m import x as x`, or a star import
    origin: str = ""  # for `from M import x`: M, which the import system finds as a module, not an attribute


class _Raw:
    """A member while the library is being linked (mutable builder state, never handed out)."""

    __slots__ = ("name", "kind", "module", "line", "params", "returns_ann", "self_class", "decorators",
                 "shape", "bases", "value_call", "value_ann", "dataclass", "fields", "namedtuple", "instance_attrs")

    def __init__(self, name: str, kind: str, module: str, line: int) -> None:
        self.name, self.kind, self.module, self.line = name, kind, module, line
        self.params: tuple[Parameter, ...] | None = None
        self.returns_ann: ast.expr | None = None
        self.self_class: str | None = None
        self.decorators: list[tuple[str, str | None]] = []
        self.shape = ""
        self.bases: list[str] = []
        self.value_call: str | None = None
        self.value_ann: ast.expr | None = None
        self.dataclass: dict[str, bool] | None = None
        self.fields: list[tuple[str, str | None, bool]] = []
        self.namedtuple = False
        self.instance_attrs: list[tuple[str, int]] = []


class _Reader:
    """Reads one module: its members and its ordered bindings."""

    def __init__(self, parsed: ParsedModule, library: str, raw: dict[str, _Raw], class_aliases: dict[str, tuple[str, str, int]]) -> None:
        f = parsed.file
        self.module = f.name
        self.stub = f.is_stub
        self.is_package = f.is_package
        self.package = f.name if f.is_package else f.name.rpartition(".")[0]
        self.library = library
        self.text = parsed.text
        self.raw = raw
        self.class_aliases = class_aliases
        self.ops: list[tuple] = []
        self.all_parts: list[tuple] | None = None  # None: the module has no __all__
        self.all_dynamic = False
        self.getattr = False
        self.runtime_names = False
        self._overloads: set[str] = set()
        self._imported: dict[str, str] = {}  # name -> dotted target, as imports are read
        self._kids: dict[str, list[str]] = {}
        raw[f.name] = _Raw(f.name, "module", f.name, 1 if f.path is not None else 0)
        self.block(parsed.tree.body, frozenset(), False, None)
        self._scan_runtime_names(parsed.tree)

    # statements ------------------------------------------------------------------------

    def block(self, stmts: list[ast.stmt], shadow: frozenset[str], type_only: bool, scope: str | None) -> set[str]:
        bound: set[str] = set()
        for st in stmts:
            bound |= self.stmt(st, shadow, type_only, scope)
        return bound

    def stmt(self, st: ast.stmt, shadow: frozenset[str], type_only: bool, scope: str | None) -> set[str]:
        if isinstance(st, (ast.Import, ast.ImportFrom)):
            return self.imports(st, shadow, type_only) if scope is None else set()
        if isinstance(st, ast.If):
            if _is_type_checking(st.test):
                if self.stub:
                    return self.block(st.body, shadow, type_only, scope)  # the else branch is dead
                self.block(st.body, shadow, True, scope)  # imports for annotations only
                return self.block(st.orelse, shadow, type_only, scope)
            if _is_main_guard(st.test):
                return set()
            # Both branches are read; the first one wins for a name both bind.
            first = self.block(st.body, shadow, type_only, scope)
            return first | self.block(st.orelse, shadow | first, type_only, scope)
        if isinstance(st, _TRY_NODES):
            bound = self.block(st.body, shadow, type_only, scope)
            bound |= self.block(st.orelse, shadow, type_only, scope)
            for handler in st.handlers:  # a fallback (except ImportError) only fills gaps
                bound |= self.block(handler.body, shadow | bound, type_only, scope)
            return bound | self.block(st.finalbody, shadow, type_only, scope)
        if isinstance(st, (ast.With, ast.AsyncWith, ast.For, ast.AsyncFor, ast.While)):
            bound = self.block(st.body, shadow, type_only, scope)
            return bound | self.block(getattr(st, "orelse", []), shadow, type_only, scope)
        if type_only:
            return set()
        if isinstance(st, (ast.FunctionDef, ast.AsyncFunctionDef)):
            return self.function(st, scope, shadow)
        if isinstance(st, ast.ClassDef):
            return self.class_(st, scope, shadow)
        if isinstance(st, ast.Assign):
            return self.assign(st.targets, st.value, None, st.lineno, scope, shadow)
        if isinstance(st, ast.AnnAssign):
            return self.assign([st.target], st.value, st.annotation, st.lineno, scope, shadow)
        if isinstance(st, ast.AugAssign):
            if scope is None and isinstance(st.target, ast.Name) and st.target.id == "__all__":
                parts = self._all_parts(st.value) if isinstance(st.op, ast.Add) else None
                self._set_all(None if parts is None or self.all_parts is None else [*self.all_parts, *parts])
            return set()
        if isinstance(st, ast.Expr) and scope is None:
            self._all_call(st.value)
            return set()
        if isinstance(st, ast.Delete) and scope is None:
            for target in st.targets:
                if isinstance(target, ast.Name):
                    self.ops.append(("del", target.id))
            return set()
        if _TYPE_ALIAS_NODE is not None and isinstance(st, _TYPE_ALIAS_NODE):
            name = st.name.id
            if name not in shadow:
                self._new(self._path(scope, name), "constant", st.lineno, scope)
            return {name}
        return set()

    def _path(self, scope: str | None, name: str) -> str:
        return f"{scope or self.module}.{name}"

    def _new(self, path: str, kind: str, line: int, scope: str | None) -> _Raw:
        r = _Raw(path, kind, self.module, line)
        if path not in self.raw:
            self._kids.setdefault(scope or self.module, []).append(path)
        self.raw[path] = r
        self.class_aliases.pop(path, None)
        if scope is None:
            self.ops.append(("bind", path.rpartition(".")[2], _Bind("def", path, line)))
        return r

    def function(self, node: ast.FunctionDef | ast.AsyncFunctionDef, scope: str | None, shadow: frozenset[str]) -> set[str]:
        name = node.name
        if name in shadow:
            return set()
        path = self._path(scope, name)
        decorators = [(d.func if isinstance(d, ast.Call) else d, d) for d in node.decorator_list]
        lasts = {_last(dotted_name(func)) for func, _ in decorators}
        if lasts & _ACCESSOR and path in self.raw:
            return {name}  # @x.setter keeps the property x
        overload = "overload" in lasts
        if overload and path in self.raw:
            return {name}  # the first overload, until an implementation replaces it
        if scope is None:
            kind = "function"
        elif lasts & _PROPERTY:
            kind = "property"
        elif "classmethod" in lasts:
            kind = "classmethod"
        elif "staticmethod" in lasts:
            kind = "staticmethod"
        else:
            kind = "method"
        r = self._new(path, kind, node.lineno, scope)
        # __new__ takes the class first even when written as a staticmethod.
        if kind != "property":  # a property is read, not called
            r.params = self.parameters(node.args, drop_first=kind in ("method", "classmethod") or name == "__new__")
        r.returns_ann = node.returns
        r.self_class = scope
        r.decorators = self._deprecations(decorators)
        r.shape = self.text.body_shape(node)
        (self._overloads.add if overload else self._overloads.discard)(path)
        if scope is None and name == "__getattr__":
            self.getattr = True
        if scope is not None and name == "__init__" and (node.args.posonlyargs or node.args.args):
            self._instance_attrs(node, scope)
        return {name}

    def _deprecations(self, decorators: list[tuple[ast.expr, ast.expr]]) -> list[tuple[str, str | None]]:
        out = []
        for func, full in decorators:
            text = dotted_name(func)
            if _last(text) == "deprecated" and text is not None:
                message = _string(full.args[0]) if isinstance(full, ast.Call) and full.args else None
                out.append((text, message))
        return out

    def _instance_attrs(self, node: ast.FunctionDef | ast.AsyncFunctionDef, cls: str) -> None:
        me = [*node.args.posonlyargs, *node.args.args][0].arg
        seen: set[str] = set()
        for sub in ast.walk(node):
            targets: list[ast.expr] = []
            if isinstance(sub, ast.Assign):
                targets = sub.targets
            elif isinstance(sub, (ast.AnnAssign, ast.AugAssign)):
                targets = [sub.target]
            for t in targets:
                if isinstance(t, ast.Attribute) and isinstance(t.value, ast.Name) and t.value.id == me and t.attr not in seen:
                    seen.add(t.attr)
                    self.raw[cls].instance_attrs.append((t.attr, t.lineno))

    def class_(self, node: ast.ClassDef, scope: str | None, shadow: frozenset[str]) -> set[str]:
        name = node.name
        if name in shadow:
            return set()
        path = self._path(scope, name)
        r = self._new(path, "class", node.lineno, scope)
        # `Base[int]` inherits from Base; a call (`with_metaclass(...)`) is left unknown.
        r.bases = [dotted_name(b.value if isinstance(b, ast.Subscript) else b) or "" for b in node.bases]
        r.namedtuple = any(_last(b) == "NamedTuple" for b in r.bases)
        decorators = [(d.func if isinstance(d, ast.Call) else d, d) for d in node.decorator_list]
        r.decorators = self._deprecations(decorators)
        for func, full in decorators:
            if _last(dotted_name(func)) == "dataclass":
                flags = {"init": True, "kw_only": False}
                for kw in full.keywords if isinstance(full, ast.Call) else ():
                    if kw.arg in flags and isinstance(kw.value, ast.Constant):
                        flags[kw.arg] = bool(kw.value.value)
                r.dataclass = flags
        self.block(node.body, frozenset(), False, path)
        for attr, line in r.instance_attrs:
            sub = f"{path}.{attr}"
            if sub not in self.raw and sub not in self.class_aliases:
                self._new(sub, "unknown", line, path)
        kids = sorted(
            f"{k.rpartition('.')[2]}:{self.raw[k].kind}:{self.raw[k].shape}:{self.raw[k].params}"
            for k in self._kids.get(path, ()) if k in self.raw
        )
        r.shape = hashlib.blake2b("\n".join(kids).encode(), digest_size=8).hexdigest() if kids else ""
        return {name}

    def assign(self, targets: list[ast.expr], value: ast.expr | None, annotation: ast.expr | None, line: int,
               scope: str | None, shadow: frozenset[str]) -> set[str]:
        bound: set[str] = set()
        for target in targets:
            if isinstance(target, ast.Name):
                name = target.id
                if scope is None and name == "__all__":
                    self._set_all(self._all_parts(value) if value is not None else None)
                    continue
                if name in shadow:
                    continue
                bound.add(name)
                self._bind_value(name, value, annotation, line, scope)
            elif isinstance(target, (ast.Tuple, ast.List)):
                for elt in target.elts:
                    if isinstance(elt, ast.Name) and elt.id not in shadow:
                        bound.add(elt.id)
                        self._new(self._path(scope, elt.id), "constant", line, scope)
            elif isinstance(target, ast.Subscript) and _is_namespace_call(target.value):
                self.runtime_names = True
        return bound

    def _bind_value(self, name: str, value: ast.expr | None, annotation: ast.expr | None, line: int, scope: str | None) -> None:
        path = self._path(scope, name)
        if scope is not None and annotation is not None:
            self._field(name, value, annotation, scope)
        dotted = dotted_name(value) if value is not None else None
        if dotted is not None and _last(dotted_name(annotation)) in ("", "TypeAlias"):
            self.raw.pop(path, None)
            if scope is None:
                self.ops.append(("bind", name, _Bind("alias", dotted, line)))
            else:
                self.class_aliases[path] = (scope, dotted, line)
            return
        if value is None or isinstance(value, (ast.Constant, ast.JoinedStr, ast.List, ast.Tuple, ast.Set, ast.Dict, ast.BinOp,
                                               ast.UnaryOp, ast.BoolOp, ast.Compare, ast.Subscript, ast.ListComp,
                                               ast.SetComp, ast.DictComp, ast.GeneratorExp, ast.Name, ast.Attribute)):
            kind = "constant"
        elif isinstance(value, ast.Lambda):
            kind = "function" if scope is None else "method"
        else:
            kind = "unknown"
        if isinstance(value, ast.Call) and self._namedtuple(path, value, line, scope):
            return
        r = self._new(path, kind, line, scope)
        r.value_ann = annotation
        if isinstance(value, ast.Lambda):
            r.params = self.parameters(value.args, drop_first=kind == "method")
        elif isinstance(value, ast.Call):
            r.value_call = dotted_name(value.func)
        if value is not None:
            r.shape = self.text.digest(value.lineno - 1, value.col_offset, value.end_lineno or value.lineno)

    def _namedtuple(self, path: str, call: ast.Call, line: int, scope: str | None) -> bool:
        """`namedtuple("P", "x y")` and `NamedTuple("P", [("x", int)])` make a class."""
        text = dotted_name(call.func) or ""
        first, _, rest = text.partition(".")
        full = ".".join(filter(None, (self._imported.get(first, first), rest)))
        if full not in ("collections.namedtuple", "typing.NamedTuple", "typing_extensions.NamedTuple"):
            return False
        spec = call.args[1] if len(call.args) > 1 else next((k.value for k in call.keywords if k.arg in ("field_names", "fields")), None)
        if isinstance(spec, ast.Constant) and isinstance(spec.value, str):
            names = spec.value.replace(",", " ").split()
        elif isinstance(spec, (ast.List, ast.Tuple)):
            found = [_string(e.elts[0] if isinstance(e, ast.Tuple) and e.elts else e) for e in spec.elts]
            names = [n for n in found if n is not None]
            if len(names) != len(found):
                return False
        else:
            return False
        if not all(n.isidentifier() for n in names):
            return False
        defaults = next((k.value for k in call.keywords if k.arg == "defaults"), None)
        n_defaults = len(defaults.elts) if isinstance(defaults, (ast.List, ast.Tuple)) else 0
        r = self._new(path, "class", line, scope)
        r.bases = ["tuple"]
        r.namedtuple = True
        given = defaults.elts if isinstance(defaults, (ast.List, ast.Tuple)) else []
        for i, n in enumerate(names):
            k = i - (len(names) - n_defaults)
            r.fields.append((n, self.text.segment(given[k]) if k >= 0 else None, False))
        return True

    def _field(self, name: str, value: ast.expr | None, annotation: ast.expr, cls: str) -> None:
        owner = self.raw.get(cls)
        if owner is None:
            return
        ann = dotted_name(annotation.value if isinstance(annotation, ast.Subscript) else annotation) or ""
        if _last(ann) == "ClassVar":
            return
        if _last(ann) == "KW_ONLY":
            owner.fields.append(("*", None, True))
            return
        default: str | None = None
        kw_only = False
        if isinstance(value, ast.Call) and _last(dotted_name(value.func)) == "field":
            for kw in value.keywords:
                if kw.arg == "init" and isinstance(kw.value, ast.Constant) and kw.value.value is False:
                    return
                if kw.arg == "default":
                    default = self.text.segment(kw.value)
                elif kw.arg == "default_factory":
                    default = "<factory>"
                elif kw.arg == "kw_only" and isinstance(kw.value, ast.Constant):
                    kw_only = bool(kw.value.value)
        elif value is not None:
            default = self.text.segment(value)
        owner.fields.append((name, default, kw_only))

    def imports(self, st: ast.Import | ast.ImportFrom, shadow: frozenset[str], type_only: bool) -> set[str]:
        bound: set[str] = set()
        if isinstance(st, ast.Import):
            for alias in st.names:
                name = alias.asname or alias.name.partition(".")[0]
                target = alias.name if alias.asname else name
                if name not in shadow:
                    bound.add(name)
                    self._bind_import(name, target, st.lineno, type_only, alias.asname == alias.name)
            return bound
        if st.module == "__future__":
            return bound
        base = self._absolute(st.module, st.level)
        if base is None:
            return bound
        for alias in st.names:
            if alias.name == "*":
                self.ops.append(("star", base, st.lineno, type_only))
                continue
            name = alias.asname or alias.name
            if name not in shadow:
                bound.add(name)
                self._bind_import(name, f"{base}.{alias.name}", st.lineno, type_only, alias.asname == alias.name, base)
        return bound

    def _bind_import(self, name: str, target: str, line: int, type_only: bool, reexport: bool, origin: str = "") -> None:
        inside = target == self.library or target.startswith(self.library + ".")
        self._imported[name] = target
        bind = _Bind("import" if inside else "external", target, line, type_only, reexport, origin)
        self.ops.append(("bind", name, bind))

    def _absolute(self, module: str | None, level: int) -> str | None:
        if level == 0:
            return module
        package = self.package
        for _ in range(level - 1):
            package = package.rpartition(".")[0]
        if not package:
            return None
        return f"{package}.{module}" if module else package

    # __all__ ---------------------------------------------------------------------------

    def _all_parts(self, node: ast.expr) -> list[tuple] | None:
        if isinstance(node, (ast.List, ast.Tuple, ast.Set)):
            names = [_string(e) for e in node.elts]
            return None if None in names else [("lit", tuple(names))]
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Add):
            left, right = self._all_parts(node.left), self._all_parts(node.right)
            return None if left is None or right is None else [*left, *right]
        if isinstance(node, ast.Name) and node.id == "__all__":
            return None if self.all_parts is None else list(self.all_parts)
        if isinstance(node, ast.Attribute) and node.attr == "__all__":
            text = dotted_name(node.value)
            return None if text is None else [("ref", text)]
        if isinstance(node, ast.Call) and _last(dotted_name(node.func)) in ("list", "tuple", "sorted") and len(node.args) == 1 and not node.keywords:
            return self._all_parts(node.args[0])
        return None

    def _set_all(self, parts: list[tuple] | None) -> None:
        self.all_dynamic = parts is None
        self.all_parts = [] if parts is None else parts

    def _all_call(self, node: ast.expr) -> None:
        if not (isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute) and dotted_name(node.func.value) == "__all__"):
            return
        if self.all_parts is None or self.all_dynamic:
            self._set_all(None)
            return
        method, args = node.func.attr, node.args
        name = _string(args[0]) if len(args) == 1 else None
        if method == "extend" and len(args) == 1 and (parts := self._all_parts(args[0])) is not None:
            self.all_parts.extend(parts)
        elif method == "append" and name is not None:
            self.all_parts.append(("lit", (name,)))
        elif method == "remove" and name is not None:
            self.all_parts.append(("remove", name))
        else:
            self._set_all(None)

    def _scan_runtime_names(self, tree: ast.Module) -> None:
        """Names built at run time: `globals()[k] = v`, `globals().update(...)`, setattr on sys.modules."""
        probe = b"".join(self.text.lines)
        if b"globals()" not in probe and b"vars()" not in probe and b"sys.modules" not in probe:
            return
        for node in ast.walk(tree):
            if isinstance(node, (ast.Assign, ast.AugAssign, ast.AnnAssign)):
                targets = node.targets if isinstance(node, ast.Assign) else [node.target]
                if any(isinstance(t, ast.Subscript) and _is_namespace_call(t.value) for t in targets):
                    self.runtime_names = True
                    return
            elif isinstance(node, ast.Call):
                func = node.func
                if isinstance(func, ast.Attribute) and func.attr in ("update", "setdefault", "__setitem__") and _is_namespace_call(func.value):
                    self.runtime_names = True
                    return
                if isinstance(func, ast.Name) and func.id == "setattr" and node.args and "sys.modules" in ast.unparse(node.args[0]):
                    self.runtime_names = True
                    return

    # parameters ------------------------------------------------------------------------

    def parameters(self, args: ast.arguments, drop_first: bool) -> tuple[Parameter, ...]:
        positional = [*args.posonlyargs, *args.args]
        defaults: list[ast.expr | None] = [None] * (len(positional) - len(args.defaults)) + list(args.defaults)
        posonly = len(args.posonlyargs)
        if self.stub and not posonly:
            # PEP 484: in stubs, leading `__x` parameters are positional-only.
            while posonly < len(positional) and positional[posonly].arg.startswith("__") and not positional[posonly].arg.endswith("__"):
                posonly += 1
        start = 1 if drop_first and positional else 0
        out: list[Parameter] = []
        for i in range(start, len(positional)):
            kind = "positional-only" if i < posonly else "positional-or-keyword"
            default = defaults[i]
            out.append(Parameter(positional[i].arg, kind, i - start, None if default is None else self.text.segment(default)))
        if args.vararg is not None:
            out.append(Parameter(args.vararg.arg, "var-positional", None, None))
        for arg, default in zip(args.kwonlyargs, args.kw_defaults):
            out.append(Parameter(arg.arg, "keyword-only", None, None if default is None else self.text.segment(default)))
        if args.kwarg is not None:
            out.append(Parameter(args.kwarg.arg, "var-keyword", None, None))
        return tuple(out)


# -- linking ------------------------------------------------------------------------------


class _Linker:
    """Resolves names across the library on demand; every recursive step is memoised and guarded."""

    def __init__(self, library: str, readers: dict[str, _Reader], raw: dict[str, _Raw],
                 class_aliases: dict[str, tuple[str, str, int]]) -> None:
        self.library = library
        self.readers = readers
        self.raw = raw
        self.class_aliases = class_aliases
        self._ns: dict[str, dict[str, _Bind]] = {}
        self._partial: dict[str, dict[str, _Bind]] = {}
        self._complete: dict[str, bool] = {}
        self._memo: dict[tuple, object] = {}
        self._active: set[tuple] = set()

    def _guarded(self, key: tuple, compute, fallback):
        if key in self._memo:
            return self._memo[key]
        if key in self._active:
            return fallback
        self._active.add(key)
        try:
            result = compute()
        finally:
            self._active.discard(key)
        self._memo[key] = result
        return result

    # namespaces ------------------------------------------------------------------------

    def namespace(self, module: str) -> dict[str, _Bind]:
        if module in self._ns:
            return self._ns[module]
        reader = self.readers.get(module)
        if reader is None:
            return {}
        if module in self._partial:
            return self._partial[module]  # a star-import cycle: what is known so far
        ns: dict[str, _Bind] = {}
        self._partial[module] = ns
        complete = True
        for op in reader.ops:
            if op[0] == "bind":
                _, name, bind = op
                if bind.type_only and name in ns and not ns[name].type_only:
                    continue  # a TYPE_CHECKING import never hides a run-time binding
                ns[name] = bind
            elif op[0] == "del":
                ns.pop(op[1], None)
            else:
                _, target, line, type_only = op
                names = self.star_names(target) if target in self.readers else None
                if names is None:
                    complete = False
                    continue
                for n in names:
                    if not (type_only and n in ns and not ns[n].type_only):
                        ns[n] = _Bind("import", f"{target}.{n}", line, type_only, True, target)
        del self._partial[module]
        self._ns[module] = ns
        self._complete[module] = complete
        return ns

    def static_all(self, module: str) -> tuple[str, ...] | None:
        reader = self.readers.get(module)
        if reader is None or reader.all_parts is None or reader.all_dynamic:
            return None
        parts = reader.all_parts

        def compute() -> tuple[str, ...] | None:
            names: list[str] = []
            for part in parts:
                if part[0] == "lit":
                    names.extend(part[1])
                elif part[0] == "remove":
                    if part[1] in names:
                        names.remove(part[1])
                else:
                    target = self.resolve_expr(module, part[1])[0]
                    sub = self.static_all(target) if target is not None else None
                    if sub is None:
                        return None
                    names.extend(sub)
            return tuple(names)

        return self._guarded(("all", module), compute, None)

    def star_names(self, module: str) -> tuple[str, ...] | None:
        reader = self.readers.get(module)
        if reader is None:
            return None
        if reader.all_parts is not None:
            return self.static_all(module)

        def compute() -> tuple[str, ...] | None:
            ns = self.namespace(module)
            if not self._complete.get(module, True) or reader.runtime_names:
                return None
            return tuple(
                n for n, b in ns.items()
                if not n.startswith("_") and not b.type_only
                and (not reader.stub or b.kind in ("def", "alias") or b.reexport)
            )

        return self._guarded(("star", module), compute, None)

    # resolution ------------------------------------------------------------------------

    def value(self, module: str, name: str, typing: bool = False) -> str | None:
        """The canonical library member a module-level name is bound to."""

        def compute() -> str | None:
            bind = self.namespace(module).get(name)
            if bind is None or (bind.type_only and not typing):
                sub = f"{module}.{name}"
                return sub if sub in self.readers else None
            if bind.kind == "def":
                return bind.target if bind.target in self.raw else None
            if bind.kind == "import":
                # `import a.b as c` and `from a.b import c` find a.b in sys.modules, so a package
                # attribute that shadows the submodule a.b does not get in the way.
                if bind.target in self.readers and not bind.origin:
                    return bind.target
                if bind.origin in self.readers:
                    if bind.origin == module and bind.target in self.readers:
                        return bind.target  # `from . import sub` inside the package itself
                    found = self.value(bind.origin, bind.target.rpartition(".")[2], typing)
                    # The import system falls back to the submodule when the attribute is missing.
                    return found if found is not None or bind.target not in self.readers else bind.target
                return self.resolve(bind.target, typing)
            if bind.kind == "alias":
                return self.resolve_expr(module, bind.target, typing)[0]
            return None

        return self._guarded(("value", module, name, typing), compute, None)

    def resolve(self, dotted: str, typing: bool = False) -> str | None:
        """Canonical member for an absolute dotted path inside the library."""
        if dotted == self.library:
            return dotted if dotted in self.raw else None
        if not dotted.startswith(self.library + "."):
            return None
        return self.walk(self.library, dotted.split(".")[1:], typing)

    def walk(self, current: str | None, segments: Iterable[str], typing: bool = False) -> str | None:
        for seg in segments:
            if current is None:
                return None
            current = self.attr(current, seg, typing)
        return current

    def attr(self, owner: str, seg: str, typing: bool = False) -> str | None:
        r = self.raw.get(owner)
        if r is None:
            return None
        if r.kind == "module":
            return self.value(owner, seg, typing)
        if r.kind == "class":
            for cls in self.mro(owner):
                found = self.own(cls, seg)
                if found is not None:
                    return found
            return None
        if r.kind in ("constant", "unknown"):
            instance_of = self.instance_class(owner)
            return self.attr(instance_of, seg) if instance_of is not None else None
        return None

    def own(self, cls: str, seg: str) -> str | None:
        path = f"{cls}.{seg}"
        if path in self.raw:
            return path
        entry = self.class_aliases.get(path)
        if entry is None:
            return None

        def compute() -> str | None:
            _, text, _ = entry
            if cls not in self.raw:
                return None
            first, _, rest = text.partition(".")
            if f"{cls}.{first}" in self.raw or f"{cls}.{first}" in self.class_aliases:
                return self.walk(self.own(cls, first), rest.split(".") if rest else ())
            return self.resolve_expr(self.raw[cls].module, text)[0]

        return self._guarded(("own", path), compute, None)

    def resolve_expr(self, module: str, text: str, typing: bool = False) -> tuple[str | None, str | None]:
        """(canonical library member, or None; outside dotted name, or None) for text in module scope."""

        def compute() -> tuple[str | None, str | None]:
            first, _, rest = text.partition(".")
            tail = rest.split(".") if rest else []
            bind = self.namespace(module).get(first)
            if bind is not None and bind.type_only and not typing:
                bind = None
            if bind is None:
                sub = f"{module}.{first}"
                if sub in self.readers:
                    return self.walk(sub, tail, typing), None
                return None, text  # a builtin or a name this module never binds
            if bind.kind == "external":
                return None, ".".join([bind.target, *tail])
            target = self.value(module, first, typing)
            if target is None:
                # Not a library member: follow the chain to the outside name it stands for,
                # e.g. `from ._compat import deprecated` where _compat imports typing_extensions'.
                if bind.kind == "alias":
                    outside = self.resolve_expr(module, bind.target, typing)[1]
                elif bind.origin in self.readers:
                    outside = self.resolve_expr(bind.origin, bind.target.rpartition(".")[2], typing)[1]
                else:
                    outside = None
                return None, None if outside is None else ".".join([outside, *tail])
            found = self.walk(target, tail, typing)
            if found is None and tail and target in self.readers:
                return self.resolve_expr(target, ".".join(tail), typing)  # `_compat.deprecated`
            return found, None

        return self._guarded(("expr", module, text, typing), compute, (None, None))

    def mro(self, cls: str) -> tuple[str, ...]:
        def compute() -> tuple[str, ...]:
            r = self.raw[cls]
            bases: list[str] = []
            for text in r.bases:
                target = self.resolve_expr(r.module, text)[0] if text else None
                if target is not None and target != cls and self.raw[target].kind == "class" and target not in bases:
                    bases.append(target)
            return linearize(cls, [self.mro(b) for b in bases], bases)

        return self._guarded(("mro", cls), compute, (cls,))

    def instance_class(self, name: str) -> str | None:
        """The library class of a constant's value: `x: Table = ...` or `x = Table(...)`."""

        def compute() -> str | None:
            r = self.raw[name]
            if r.value_ann is not None:
                found = self.annotation_class(r.module, r.value_ann, None)
                if found is not None:
                    return found
            if r.value_call is not None:
                target = self.resolve_expr(r.module, r.value_call)[0]
                if target is not None and target in self.raw:
                    if self.raw[target].kind == "class":
                        return target
                    return self.returns(target)
            return None

        return self._guarded(("instance", name), compute, None)

    def returns(self, name: str) -> str | None:
        r = self.raw[name]
        if r.kind == "class":
            return name
        if r.kind in _CALLABLE:
            if r.returns_ann is None:
                return None
            return self.annotation_class(r.module, r.returns_ann, r.self_class)
        return self.instance_class(name)

    def annotation_class(self, module: str, node: ast.expr | None, self_class: str | None) -> str | None:
        """The one library class an annotation names: `X`, "X", Self, Optional[X], X | None."""
        if node is None:
            return None
        if isinstance(node, ast.Constant) and isinstance(node.value, str):
            try:
                inner = ast.parse(node.value.strip(), mode="eval").body
            except SyntaxError:
                return None
            return self.annotation_class(module, inner, self_class)
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.BitOr):
            options = [n for n in (node.left, node.right) if not _is_none(n)]
            return self.annotation_class(module, options[0], self_class) if len(options) == 1 else None
        if isinstance(node, ast.Subscript):
            head = _last(dotted_name(node.value))
            items = node.slice.elts if isinstance(node.slice, ast.Tuple) else [node.slice]
            if head == "Optional" and len(items) == 1:
                return self.annotation_class(module, items[0], self_class)
            if head == "Union":
                options = [n for n in items if not _is_none(n)]
                return self.annotation_class(module, options[0], self_class) if len(options) == 1 else None
            if head == "Annotated" and items:
                return self.annotation_class(module, items[0], self_class)
            return None
        text = dotted_name(node)
        if text is None:
            return None
        target, outside = self.resolve_expr(module, text, typing=True)
        if _last(text) == "Self" and target is None and (outside in _SELF or outside == "Self"):
            return self_class
        if target is not None and self.raw[target].kind == "class":
            return target
        return None

    def class_parameters(self, cls: str) -> tuple[Parameter, ...] | None:
        """`__init__` (or `__new__`) through the MRO, self excluded; synthesised for dataclasses and NamedTuples."""
        order = self.mro(cls)
        for k in order:
            for method in ("__init__", "__new__"):
                found = self.own(k, method)
                if found is not None and self.raw[found].params is not None:
                    return self.raw[found].params
            r = self.raw[k]
            if r.dataclass is not None and r.dataclass["init"]:
                return self._fields_parameters([c for c in reversed(order) if self.raw[c].dataclass is not None],
                                               r.dataclass["kw_only"])
            if r.namedtuple:
                return self._fields_parameters([k], False)
        outside = [b for k in order for b in self.raw[k].bases if b and self.resolve_expr(self.raw[k].module, b)[0] is None]
        return None if any(b not in ("object", "builtins.object") for b in outside) else ()

    def _fields_parameters(self, classes: list[str], kw_only: bool) -> tuple[Parameter, ...]:
        fields: dict[str, tuple[str | None, bool]] = {}
        for c in classes:
            flags = self.raw[c].dataclass
            late = flags is not None and flags["kw_only"]
            for name, default, kw in self.raw[c].fields:
                if name == "*":
                    late = True
                    continue
                fields.pop(name, None)
                fields[name] = (default, kw or late or kw_only)
        out: list[Parameter] = []
        position = 0
        for name, (default, kw) in fields.items():
            if not kw:
                out.append(Parameter(name, "positional-or-keyword", position, default))
                position += 1
        out.extend(Parameter(name, "keyword-only", None, d) for name, (d, kw) in fields.items() if kw)
        return tuple(out)

    def base_text(self, module: str, text: str) -> str:
        if not text:
            return "<expression>"
        target, outside = self.resolve_expr(module, text)
        return target or outside or text

    def deprecated(self, r: _Raw) -> str | None:
        for text, message in r.decorators:
            if self.resolve_expr(r.module, text, typing=True)[1] in _PEP702:
                return message or ""
        return None

    def public_binding(self, reader: _Reader, name: str, bind: _Bind, declared: tuple[str, ...] | None) -> bool:
        """PEP 8 and the stub rules of PEP 484: which module-level re-exports are public."""
        if name.startswith("_") or any(seg.startswith("_") for seg in reader.module.split(".")):
            return False
        if declared is not None:
            return name in declared
        if bind.kind == "alias" or bind.reexport:
            return True
        return reader.is_package and not reader.stub


def _is_none(node: ast.expr) -> bool:
    return (isinstance(node, ast.Constant) and node.value is None) or dotted_name(node) == "None"


def surface_from_parsed(library: str, parsed: Iterable[ParsedModule], problems: Sequence[Problem] = ()) -> Surface:
    """Link parsed modules into a Surface.

    `parsed` may be a lazy iterator; `problems` is read after it is exhausted, and each module
    named there still exists in the surface, with unknowable exports.
    """
    raw: dict[str, _Raw] = {}
    class_aliases: dict[str, tuple[str, str, int]] = {}
    readers: dict[str, _Reader] = {}
    for p in parsed:
        readers[p.file.name] = _Reader(p, library, raw, class_aliases)
    failed = [p.module for p in problems]
    for name in failed:
        raw.setdefault(name, _Raw(name, "module", name, 0))
    # A class or function later rebound to something else leaves its members without a parent.
    for name in sorted(raw):
        parent = name.rpartition(".")[0]
        if parent and parent not in raw:
            del raw[name]
    for path in [p for p, (cls, _, _) in class_aliases.items() if cls not in raw]:
        del class_aliases[path]
    link = _Linker(library, readers, raw, class_aliases)

    members: dict[str, Member] = {}
    for name in sorted(raw):
        r = raw[name]
        bases = tuple(link.base_text(r.module, b) for b in r.bases) if r.kind == "class" else ()
        params = link.class_parameters(name) if r.kind == "class" else r.params
        members[name] = Member(name, r.kind, params, link.returns(name) if r.kind != "module" else None,
                               bases, link.deprecated(r), r.line, r.shape,
                               returns_self=r.kind in _CALLABLE and _names_self(r.returns_ann))

    aliases: dict[str, str] = {}
    private: dict[str, str] = {}
    exports: dict[str, tuple[str, ...] | None] = {}
    declared: set[str] = set()
    for module, reader in readers.items():
        names = link.static_all(module)
        if names is not None:
            declared.add(module)
        exports[module] = link.star_names(module)
        for name, bind in link.namespace(module).items():
            if bind.type_only or bind.kind in ("def", "external"):
                continue
            path = f"{module}.{name}"
            target = link.value(module, name)
            if target is None:
                if bind.kind == "alias" and path not in members:
                    members[path] = Member(path, "unknown", None, None, (), None, bind.line)
                continue
            if target != path:
                (aliases if link.public_binding(reader, name, bind, names) else private)[path] = target
    for path, (cls, _, line) in sorted(class_aliases.items()):
        target = link.own(cls, path.rpartition(".")[2])
        if target is None:
            members.setdefault(path, Member(path, "unknown", None, None, (), None, line))
            continue
        module = raw[cls].module
        rest = path[len(module) + 1 :].split(".")
        public = (not any(s.startswith("_") for s in module.split(".")) and not rest[0].startswith("_")
                  and (module not in declared or rest[0] in (exports[module] or ()))
                  and not any(s.startswith("_") and not (s.startswith("__") and s.endswith("__")) for s in rest[1:]))
        (aliases if public else private)[path] = target
    for name in failed:
        exports.setdefault(name, None)
    dynamic = frozenset(m for m, r in readers.items() if r.getattr or r.runtime_names)
    return Surface(
        library=library,
        members=dict(sorted(members.items())),
        aliases=dict(sorted(aliases.items())),
        exports=dict(sorted(exports.items())),
        dynamic=dynamic,
        private_aliases=dict(sorted(private.items())),
        declared=frozenset(declared),
        problems=tuple(problems),
    )


def build_surface(source: Path | str, library: str | None = None) -> Surface:
    """Read the surface of the library at `source` (a package, a module file, or their parent).

    The library's code is parsed, never imported or run.
    """
    name, files = discover_modules(Path(source), library)
    problems: list[Problem] = []
    return surface_from_parsed(name, iter_parsed(files, problems), problems)
