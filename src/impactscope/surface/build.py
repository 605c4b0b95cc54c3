"""Build a `Surface` from a library's source text or stubs, read with `ast` and never run.

Reading is two passes. The first reads each module on its own: the members it defines and an
ordered list of the bindings it makes (definitions, imports, aliases, star imports, `__all__`).
The second links modules together, lazily and with cycle guards: a name is resolved only when
something asks for it, so import order and import cycles inside the library do not matter.
"""

from __future__ import annotations

import ast
import errno
import hashlib
import io
import os
import tokenize
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path

from impactscope.corpus.files import FileRefused, read_regular, refusal

from .model import SELF, Member, Parameter, Problem, Surface, SurfaceError, linearize, merge_surfaces

_PROPERTY = frozenset({"property", "cached_property", "abstractproperty"})
# Outside names whose call makes a property (the standard library's documentation of each).
_PROPERTY_FACTORIES = frozenset({
    "property", "builtins.property", "functools.cached_property", "abc.abstractproperty",
    "types.DynamicClassAttribute", "enum.property",
})
# Common practice: libraries name their caching property decorators after these (pandas and
# statsmodels `cache_readonly`, Pyramid `reify`) or with "property" in the name.
_PROPERTY_WORDS = frozenset({"cache_readonly", "reify"})
_TYPEVAR = frozenset({"typing.TypeVar", "typing_extensions.TypeVar"})
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


def discover_modules(source: Path, library: str | None = None, *,
                     include_tests: bool = False) -> tuple[str, tuple[ModuleFile, ...]]:
    """The library's import name and its modules, stubs (.pyi) taking precedence over .py.

    `source` is a package directory, a module file, or a directory that contains the package
    (then the package called `library`, or its `library-stubs` stub package, is used).
    Subpackages called `tests` are left out unless `include_tests`: by common practice they hold
    the library's own test suite, not its API, and in large libraries they are most of the code
    (pandas 1.5.3: 12.0 of 19.1 MB of source).
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
            return discover_modules(source.parent, library, include_tests=include_tests)
        stub = source.with_suffix(".pyi")
        if source.suffix == ".py" and stub.is_file():
            source = stub  # PEP 484: a stub next to the module takes precedence
        name = library or source.stem
        return name, (ModuleFile(name, source, False, source.suffix == ".pyi"),)
    if _has_init(source) or source.name.endswith("-stubs") or (library is not None and source.name == library):
        name = library or source.name.removesuffix("-stubs")
        return name, tuple(_walk_package(source, name, include_tests))
    if library is not None:
        for candidate in (source / f"{library}-stubs", source / library):
            if candidate.is_dir():
                return library, tuple(_walk_package(candidate, library, include_tests))
        for candidate in (source / f"{library}.pyi", source / f"{library}.py"):
            if candidate.is_file():
                return discover_modules(candidate, library, include_tests=include_tests)
        raise SurfaceError(
            f"{source}: holds no package or module named {library!r}; looked for {library}-stubs/, "
            f"{library}/, {library}.pyi and {library}.py"
        )
    found = sorted(p.name for p in source.iterdir() if p.is_dir() and _has_init(p) and p.name.isidentifier())
    if len(found) == 1:
        return discover_modules(source / found[0], include_tests=include_tests)
    listed = ", ".join(found[:8]) + (", ..." if len(found) > 8 else "") if found else "none"
    raise SurfaceError(
        f"{source}: is not a package (no __init__.py) and holds {len(found)} packages ({listed}); "
        "name the one to read with library=NAME"
    )


def _walk_package(directory: Path, dotted: str, include_tests: bool, boundary: str = "") -> Iterable[ModuleFile]:
    # A folder reached through a link that leads out of the library source, or a FIFO or device
    # in it, is never entered (corpus.files); a module file that is one is refused when read.
    boundary = boundary or os.path.realpath(directory)
    files: dict[str, dict[str, Path]] = {}
    subdirs: list[Path] = []
    with os.scandir(directory) as entries:
        for entry in sorted(entries, key=lambda e: e.name):
            location = entry.path
            if entry.is_symlink():
                if refusal(entry.path, boundary, outside=OUTSIDE_LIBRARY) is not None:
                    if not entry.name.endswith((".py", ".pyi")):
                        continue  # a folder reached by a link out of the source is never entered
                    # A module file: listed, so that reading refuses it and the surface says so.
                else:
                    location = os.path.realpath(entry.path)  # inside the source: read its target
            if entry.is_dir():
                if entry.name.isidentifier() and _has_init(Path(entry.path)) and (include_tests or entry.name != "tests"):
                    subdirs.append(Path(entry.path))
                continue
            stem, dot, suffix = entry.name.rpartition(".")
            if dot and suffix in ("py", "pyi") and stem.isidentifier() and stem != "__main__":
                files.setdefault(stem, {})[suffix] = Path(location)
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
        yield from _walk_package(sub, f"{dotted}.{sub.name}", include_tests, boundary)


# -- reading one module -------------------------------------------------------------------

# A module larger than this is not read (the largest of pandas 1.5.3, core/generic.py, is 0.43 MB;
# a generated 20 MB one would cost gigabytes of syntax tree).
MODULE_BYTES = 5_000_000
OUTSIDE_LIBRARY = "link outside the library source"


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


def iter_parsed(files: Iterable[ModuleFile], problems: list[Problem],
                wanted: Callable[[bytes], bool] | None = None) -> Iterator[ParsedModule]:
    """Parse modules one at a time; one that cannot be read is appended to `problems` instead.

    Yielding one tree at a time keeps memory flat: the collector would otherwise spend most of
    the build walking millions of live AST nodes. `wanted`, when given, sees each file's bytes
    first; a file it turns down is not parsed (nor yielded).
    """
    for f in files:
        if f.path is None:
            if wanted is None:
                yield ParsedModule(f, ast.Module(body=[], type_ignores=[]), SourceText(b""))
            continue
        try:
            data = read_regular(str(f.path), MODULE_BYTES, reason="module too large", outside=OUTSIDE_LIBRARY)
            if wanted is not None and not wanted(data):
                continue
            tree = ast.parse(data, filename=str(f.path))
        except FileRefused as exc:
            problems.append(Problem(f.name, str(f.path), f"not read: {exc.detail}"))
            continue
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
            if exc.errno == errno.ELOOP:  # opened without following a link: one leading out
                problems.append(Problem(f.name, str(f.path), f"not read: {OUTSIDE_LIBRARY}"))
                continue
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


def _string(node: ast.expr | None) -> str | None:
    return node.value if isinstance(node, ast.Constant) and isinstance(node.value, str) else None


def _strings(node: ast.expr | None) -> tuple[str, ...] | None:
    """The strings of a literal collection (a dict: its keys), e.g. `("a", "b")`, `frozenset({"a"})`."""
    if isinstance(node, ast.Call) and _last(dotted_name(node.func)) in ("frozenset", "set", "tuple", "list") \
            and len(node.args) == 1 and not node.keywords:
        node = node.args[0]
    if isinstance(node, (ast.List, ast.Tuple, ast.Set)):
        items: list[ast.expr | None] = list(node.elts)
    elif isinstance(node, ast.Dict):
        items = list(node.keys)
    else:
        return None
    found = [_string(e) for e in items]
    return None if None in found else tuple(s for s in found if s is not None)


def _doc_digest(node: ast.FunctionDef | ast.AsyncFunctionDef | ast.ClassDef | ast.Module) -> str:
    """A digest of a definition's docstring with whitespace folded (re-indenting is not a change)."""
    doc = ast.get_docstring(node, clean=False)
    if not doc or not doc.strip():
        return ""
    return hashlib.blake2b(" ".join(doc.split()).encode(), digest_size=8).hexdigest()


def _changes_all(node: ast.FunctionDef | ast.AsyncFunctionDef) -> bool:
    """Whether a function adds to or rewrites the module's `__all__` when called."""
    for sub in ast.walk(node):
        if (isinstance(sub, ast.Call) and isinstance(sub.func, ast.Attribute) and isinstance(sub.func.value, ast.Name)
                and sub.func.value.id == "__all__" and sub.func.attr in ("append", "extend", "insert", "remove")):
            return True
        if isinstance(sub, ast.Global) and "__all__" in sub.names:
            return True
    return False


def _returns_value(node: ast.FunctionDef | ast.AsyncFunctionDef) -> bool:
    """Whether a function returns a value somewhere (nested definitions aside)."""
    todo: list[ast.AST] = list(node.body)
    while todo:
        sub = todo.pop()
        if isinstance(sub, ast.Return) and sub.value is not None and not _is_none(sub.value):
            return True
        if not isinstance(sub, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda, ast.ClassDef)):
            todo.extend(ast.iter_child_nodes(sub))
    return False


def _raises(body: list[ast.stmt]) -> bool:
    return bool(body) and isinstance(body[-1], ast.Raise)


class _ServedNames:
    """The names a module-level `__getattr__` (PEP 562) serves from a fixed set, and the dotted
    path of what it returns for each (None when that is built some other way).

    Read: `name == "x"` and `name in ("x", "y")` or `name in TABLE` (TABLE a module-level literal)
    in `if`/`elif` tests and `match` cases; look-ups `{"x": X}[name]`, `TABLE[name]`,
    `TABLE.get(name)`. A branch that ends in `raise` serves nothing: the name is gone, with a
    message. A returned name is followed through the function's own imports, else the module's.
    """

    def __init__(self, reader: _Reader, node: ast.FunctionDef | ast.AsyncFunctionDef) -> None:
        args = [*node.args.posonlyargs, *node.args.args]
        self.param = args[0].arg if args else ""
        self.reader = reader
        self.imports: dict[str, str] = {}
        for sub in ast.walk(node):
            if isinstance(sub, ast.Import):
                for alias in sub.names:
                    self.imports[alias.asname or alias.name.partition(".")[0]] = alias.name if alias.asname else alias.name.partition(".")[0]
            elif isinstance(sub, ast.ImportFrom):
                base = reader._absolute(sub.module, sub.level)
                for alias in sub.names:
                    if base is not None and alias.name != "*":
                        self.imports[alias.asname or alias.name] = f"{base}.{alias.name}"
        self.names: dict[str, str | None] = {}
        self.gone: set[str] = set()
        # A value returned outside any branch that tests the name: it may serve names not listed.
        self.open = False
        if self.param:
            self.block(node.body)

    def block(self, stmts: list[ast.stmt]) -> None:
        for st in stmts:
            if isinstance(st, ast.If):
                tested = self.tested(st.test)
                if tested:
                    self.branch(tested, st.body)
                else:
                    self.block(st.body)
                self.block(st.orelse)
            elif isinstance(st, ast.Match) and isinstance(st.subject, ast.Name) and st.subject.id == self.param:
                for case in st.cases:
                    self.branch(self.pattern(case.pattern), case.body)
            elif isinstance(st, _TRY_NODES + (ast.With, ast.For, ast.While)):
                self.block(st.body)
            elif isinstance(st, (ast.Return, ast.Expr, ast.Assign)) and st.value is not None:
                served = len(self.names)
                self.lookups(st.value)
                if isinstance(st, ast.Return) and len(self.names) == served and not _is_none(st.value):
                    self.open = True

    def branch(self, tested: tuple[str, ...], body: list[ast.stmt]) -> None:
        if _raises(body):
            self.gone.update(tested)
            return
        for name in tested:
            if name not in self.names and name not in self.gone:
                self.names[name] = self.value(body, name)

    def tested(self, test: ast.expr) -> tuple[str, ...]:
        if isinstance(test, ast.BoolOp):
            return tuple(n for v in test.values for n in self.tested(v))
        if not (isinstance(test, ast.Compare) and len(test.ops) == 1):
            return ()
        left, op, right = test.left, test.ops[0], test.comparators[0]
        if isinstance(op, ast.Eq):
            if isinstance(right, ast.Name) and right.id == self.param:
                left, right = right, left
            text = _string(right)
            return (text,) if isinstance(left, ast.Name) and left.id == self.param and text is not None else ()
        if isinstance(op, ast.In) and isinstance(left, ast.Name) and left.id == self.param:
            if isinstance(right, ast.Name):
                return self.reader._literals.get(right.id, ())
            return _strings(right) or ()
        return ()

    def pattern(self, node: ast.pattern) -> tuple[str, ...]:
        if isinstance(node, ast.MatchValue):
            text = _string(node.value)
            return (text,) if text is not None else ()
        if isinstance(node, ast.MatchOr):
            return tuple(n for p in node.patterns for n in self.pattern(p))
        return ()

    def lookups(self, expr: ast.expr) -> None:
        """`TABLE[name]` and `TABLE.get(name)` outside any test: TABLE's keys are served."""
        for sub in ast.walk(expr):
            table = self.table_of(sub)
            if table is None:
                continue
            if isinstance(table, ast.Dict):
                for key, value in zip(table.keys, table.values):
                    text = _string(key)
                    if text is not None and text not in self.names and text not in self.gone:
                        self.names[text] = self.target(value)
            else:
                for text in self.reader._literals.get(table, ()):
                    if text not in self.names and text not in self.gone:
                        self.names[text] = None

    def table_of(self, node: ast.AST) -> ast.Dict | str | None:
        if isinstance(node, ast.Subscript) and isinstance(node.slice, ast.Name) and node.slice.id == self.param:
            table = node.value
        elif (isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute) and node.func.attr == "get"
              and node.args and isinstance(node.args[0], ast.Name) and node.args[0].id == self.param):
            table = node.func.value
        else:
            return None
        if isinstance(table, ast.Dict):
            return table
        return table.id if isinstance(table, ast.Name) and table.id in self.reader._literals else None

    def value(self, body: list[ast.stmt], name: str) -> str | None:
        """What the branch for `name` returns: its first `return`, through a literal table."""
        for st in body:
            for sub in ast.walk(st):
                if isinstance(sub, ast.Return) and sub.value is not None:
                    for inner in ast.walk(sub.value):
                        table = self.table_of(inner)
                        if isinstance(table, ast.Dict):
                            for key, value in zip(table.keys, table.values):
                                if _string(key) == name:
                                    return self.target(value)
                    return self.target(sub.value)
        return None

    def target(self, node: ast.expr | None) -> str | None:
        text = dotted_name(node)
        if text is None:
            return None
        first, _, rest = text.partition(".")
        if first in self.imports:
            return ".".join(filter(None, (self.imports[first], rest)))
        return f"{self.reader.module}.{text}"


def _lazy_attach(call: ast.Call, module: str) -> dict[str, str | None]:
    """`attach(__name__, submodules=[...], submod_attrs={"mod": ["f"]})`, the lazy-loading helper of
    the scientific Python ecosystem (SPEC 1): each submodule and each listed attribute is served."""
    given = dict(zip(("package_name", "submodules", "submod_attrs"), call.args))
    given.update({k.arg: k.value for k in call.keywords if k.arg})
    out: dict[str, str | None] = {}
    for sub in _strings(given.get("submodules")) or ():
        out[sub] = f"{module}.{sub}"
    table = given.get("submod_attrs")
    if isinstance(table, ast.Dict):
        for key, value in zip(table.keys, table.values):
            sub = _string(key)
            for attr in (_strings(value) or ()) if sub is not None else ():
                out.setdefault(attr, f"{module}.{sub}.{attr}")
    return out


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
                 "shape", "bases", "value_call", "value_ann", "dataclass", "fields", "namedtuple", "instance_attrs",
                 "self_ann", "overloads", "wrappers", "getter", "typevar", "bound", "doc")

    def __init__(self, name: str, kind: str, module: str, line: int) -> None:
        self.name, self.kind, self.module, self.line = name, kind, module, line
        self.params: tuple[Parameter, ...] | None = None
        self.returns_ann: ast.expr | None = None
        self.self_class: str | None = None
        self.decorators: list[tuple[str, str | None]] = []
        self.shape = ""
        self.doc = ""  # digest of the docstring
        self.bases: list[str] = []
        self.value_call: str | None = None
        self.value_ann: ast.expr | None = None
        self.dataclass: dict[str, bool] | None = None
        self.fields: list[tuple[str, str | None, bool]] = []
        self.namedtuple = False
        self.instance_attrs: list[tuple[str, int]] = []
        self.self_ann: ast.expr | None = None  # the annotation of `self` / `cls`, for TypeVar-bound selves
        self.overloads: list[tuple[ast.expr | None, ast.expr | None]] = []  # (returns, self) per @overload
        self.wrappers: list[str] = []  # a method's other decorators, to tell a cached property at link time
        self.getter: str | None = None  # `x = property(getter)`: the getter's dotted text
        self.typevar = False  # `T = TypeVar("T", bound=...)`
        self.bound: ast.expr | None = None


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
        # A module-level function that adds to __all__ (numpy 1.x `extend_all(module)`): the static
        # list is only a part, so a star import takes the namespace's public names instead.
        self.all_runtime = False
        self.getattr = False
        self.runtime_names = False
        self._overloads: set[str] = set()
        self._imported: dict[str, str] = {}  # name -> dotted target, as imports are read
        self._kids: dict[str, list[str]] = {}
        self.served: dict[str, str | None] = {}  # names a module __getattr__ serves -> what it returns
        self.served_line = 0
        self._literals: dict[str, tuple[str, ...]] = {}  # module-level string collections (dict keys too)
        self._getattr_node: ast.FunctionDef | ast.AsyncFunctionDef | None = None
        raw[f.name] = _Raw(f.name, "module", f.name, 1 if f.path is not None else 0)
        raw[f.name].doc = _doc_digest(parsed.tree)
        self.block(parsed.tree.body, frozenset(), False, None)
        self._scan_runtime_names(parsed.tree)
        if self._getattr_node is not None:
            # Read last: the tables it consults may be assigned below the function.
            served = _ServedNames(self, self._getattr_node)
            self.served.update(served.names)
            if not served.open and _raises(self._getattr_node.body):
                self.getattr = False  # PEP 562 with a fixed set of names: the surface has them all
            self._getattr_node = None

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
        positional = [*node.args.posonlyargs, *node.args.args]
        self_ann = positional[0].annotation if scope is not None and positional else None
        earlier = self.raw.get(path) if path in self._overloads else None
        if overload and earlier is not None:
            earlier.overloads.append((node.returns, self_ann))
            return {name}  # the first overload's signature, until an implementation replaces it
        if overload and path in self.raw:
            return {name}
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
        r.self_ann = self_ann
        if overload:
            r.overloads = [(node.returns, self_ann)]
        elif earlier is not None:
            # PEP 484: the overloads, not the implementation, are what callers see.
            r.overloads = earlier.overloads
        if kind == "method":
            known = _PROPERTY | _ACCESSOR | {"overload", "classmethod", "staticmethod"}
            r.wrappers = [t for t in (dotted_name(func) for func, _ in decorators) if t and _last(t) not in known]
        r.decorators = self._deprecations(decorators)
        r.shape = self.text.body_shape(node)
        r.doc = _doc_digest(node)
        (self._overloads.add if overload else self._overloads.discard)(path)
        if scope is None and not self.all_runtime and _changes_all(node):
            self.all_runtime = True
        if scope is None and name == "__getattr__":
            # PEP 562: one that only raises (AttributeError with a message) serves no name.
            self.getattr = _returns_value(node)
            self._getattr_node = node
            self.served_line = node.lineno
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
        r.doc = _doc_digest(node)
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
                if (scope is None and isinstance(value, ast.Call) and _last(dotted_name(value.func)) == "attach"
                        and any(isinstance(e, ast.Name) and e.id == "__getattr__" for e in target.elts)):
                    self.getattr = True
                    self.served.update(_lazy_attach(value, self.module))
                    self.served_line = line
                for elt in target.elts:
                    if isinstance(elt, ast.Name) and elt.id not in shadow:
                        bound.add(elt.id)
                        self._new(self._path(scope, elt.id), "constant", line, scope)
        # `globals()[k] = v` is judged over the whole module by _scan_runtime_names.
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
        if scope is None and value is not None:
            strings = _strings(value)
            if strings is not None:
                self._literals[name] = strings
        r = self._new(path, kind, line, scope)
        r.value_ann = annotation
        if isinstance(value, ast.Lambda):
            r.params = self.parameters(value.args, drop_first=kind == "method")
        elif isinstance(value, ast.Call):
            r.value_call = dotted_name(value.func)
            if self._full_name(value.func) in _TYPEVAR:
                r.typevar = True
                r.bound = next((k.value for k in value.keywords if k.arg == "bound"), None)
            elif scope is not None:
                # `T = property(transpose)`: kept for the linker, which knows what `property` is here.
                getter = value.args[0] if value.args else next((k.value for k in value.keywords if k.arg == "fget"), None)
                r.getter = dotted_name(getter)
        if value is not None:
            r.shape = self.text.digest(value.lineno - 1, value.col_offset, value.end_lineno or value.lineno)

    def _full_name(self, func: ast.expr) -> str:
        """The dotted name a callee spells, through this module's imports read so far."""
        text = dotted_name(func) or ""
        first, _, rest = text.partition(".")
        return ".".join(filter(None, (self._imported.get(first, first), rest)))

    def _namedtuple(self, path: str, call: ast.Call, line: int, scope: str | None) -> bool:
        """`namedtuple("P", "x y")` and `NamedTuple("P", [("x", int)])` make a class."""
        full = self._full_name(call.func)
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
        listed: set[int] = set()  # `for n in ("a", "b"): globals()[n] = ...` binds a fixed set of names
        for node in ast.walk(tree):
            if isinstance(node, ast.For) and isinstance(node.target, ast.Name) and _strings(node.iter) is not None:
                for sub in ast.walk(node):
                    if (isinstance(sub, ast.Assign) and len(sub.targets) == 1 and isinstance(sub.targets[0], ast.Subscript)
                            and _is_namespace_call(sub.targets[0].value) and isinstance(sub.targets[0].slice, ast.Name)
                            and sub.targets[0].slice.id == node.target.id):
                        listed.add(id(sub))
                        for name in _strings(node.iter) or ():
                            self.served.setdefault(name, None)
        for node in ast.walk(tree):
            if isinstance(node, (ast.Assign, ast.AugAssign, ast.AnnAssign)) and id(node) not in listed:
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
                 class_aliases: dict[str, tuple[str, str, int]], partial_stars: bool = False) -> None:
        self.library = library
        self.partial_stars = partial_stars
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
        if reader is None or reader.all_parts is None or reader.all_dynamic or reader.all_runtime:
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
                    if sub is None and target in self.readers and self.readers[target].all_runtime:
                        sub = self.star_names(target)  # its __all__ grows at run time: its public names
                    if sub is None:
                        return None
                    names.extend(sub)
            return tuple(names)

        return self._guarded(("all", module), compute, None)

    def star_names(self, module: str) -> tuple[str, ...] | None:
        reader = self.readers.get(module)
        if reader is None:
            return None
        if reader.all_parts is not None and not reader.all_runtime:
            return self.static_all(module)

        def compute() -> tuple[str, ...] | None:
            ns = self.namespace(module)
            if (not self._complete.get(module, True) and not self.partial_stars) or reader.runtime_names:
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

    # kinds and types ---------------------------------------------------------------------

    def kind(self, name: str) -> str:
        """The kind as the library's users see it. A method under a decorator that makes a
        property (see `makes_property`), and a class attribute built by `property(getter)` or
        holding a descriptor (a library class with `__get__`), read as properties."""

        def compute() -> str:
            r = self.raw[name]
            if r.kind == "method" and any(self.makes_property(r.module, t) for t in r.wrappers):
                return "property"
            parent = self.raw.get(name.rpartition(".")[0])
            if r.kind == "unknown" and r.value_call and parent is not None and parent.kind == "class":
                target, outside = self.resolve_expr(r.module, r.value_call)
                if outside in _PROPERTY_FACTORIES or self.descriptor(target):
                    return "property"
            return r.kind

        return self._guarded(("kind", name), compute, self.raw[name].kind)

    def makes_property(self, module: str, text: str) -> bool:
        """Whether decorating a method with `text` makes it read like a property.

        Yes for the standard library's property factories, also through a library alias
        (pandas' stubs: `cache_readonly = property`); for a name that says so (`cached_property`,
        `lazy_property`, `cache_readonly`, `reify`); and for a library class that defines
        `__get__` but not `__call__` (a descriptor whose instances stand for the value). Any other
        decorator (`@doc(...)`, `@deprecate_kwarg(...)`) wraps a function and leaves a method.
        """
        target, outside = self.resolve_expr(module, text)
        if outside in _PROPERTY_FACTORIES:
            return True
        named = _last(target or outside or text)
        if "property" in named.lower() or named in _PROPERTY_WORDS:
            return True
        return target is not None and self.descriptor(target) and self.attr(target, "__call__") is None

    def descriptor(self, target: str | None) -> bool:
        """A library class whose instances are descriptors (Language Reference, "Implementing Descriptors")."""
        return target is not None and self.raw[target].kind == "class" and self.attr(target, "__get__") is not None

    def outcomes_of(self, name: str) -> tuple[str | None, ...]:
        """What calling (for values: reading) `name` gives, one entry per possible outcome: a
        library class, SELF, or None for anything else. Overloads each add theirs (PEP 484)."""

        def compute() -> tuple[str | None, ...]:
            r = self.raw[name]
            if r.kind == "class":
                return (name,)
            kind = self.kind(name)
            if kind == "property" and r.kind not in _CALLABLE:
                return self.value_outcomes(name)
            if kind in _CALLABLE:
                sigs = r.overloads or [(r.returns_ann, r.self_ann)]
                return tuple(o for ret, me in sigs for o in self.outcomes(r.module, ret, me))
            found = self.instance_class(name)
            return (found,)

        return self._guarded(("outcomes", name), compute, (None,))

    def value_outcomes(self, name: str) -> tuple[str | None, ...]:
        """`x = property(getter)`: the getter's; `x = Descriptor()`: its `__get__`'s, less the
        descriptor class itself (what access through the class gives, by convention)."""
        r = self.raw[name]
        cls = name.rpartition(".")[0]
        target, outside = self.resolve_expr(r.module, r.value_call or "")
        if outside in _PROPERTY_FACTORIES:
            if r.getter is None:
                return (None,)
            getter = f"{cls}.{r.getter}" if f"{cls}.{r.getter}" in self.raw else self.resolve_expr(r.module, r.getter)[0]
            return self.outcomes_of(getter) if getter is not None else (None,)
        get = self.attr(target, "__get__") if target is not None else None
        if get is None:
            return (None,)
        found = tuple(o for o in self.outcomes_of(get) if o not in (SELF, target))
        return found or (None,)

    def returns(self, name: str) -> str | None:
        """The one library class every outcome agrees on (SELF: the defining class), else None."""
        outs = self.outcomes_of(name)
        if not outs or None in outs:
            return None
        owner = name.rpartition(".")[0]
        mapped = {owner if o == SELF else o for o in outs}
        if len(mapped) != 1:
            return None
        found = mapped.pop()
        return found if found in self.raw and self.raw[found].kind == "class" else None

    def annotation_class(self, module: str, node: ast.expr | None, self_class: str | None) -> str | None:
        """The one library class an annotation names: `X`, "X", Self, Optional[X], X | None, X[T]."""
        outs = self.outcomes(module, node, None)
        if len(outs) != 1 or outs[0] is None:
            return None
        return self_class if outs[0] == SELF else outs[0]

    def outcomes(self, module: str, node: ast.expr | None, self_ann: ast.expr | None) -> tuple[str | None, ...]:
        """The outcomes an annotation allows: `X`, "X" (PEP 484 forward references), Self (PEP 673),
        a TypeVar that also types `self` (the pre-PEP 673 spelling of Self), Optional[X],
        Union[X, Y], X | Y, Annotated[X, ...], a generic X[T] (its head). An explicit None adds
        nothing: it has no attributes to follow."""
        if node is None:
            return (None,)
        if _is_none(node):
            return ()
        if isinstance(node, ast.Constant) and isinstance(node.value, str):
            try:
                inner = ast.parse(node.value.strip(), mode="eval").body
            except SyntaxError:
                return (None,)
            return self.outcomes(module, inner, self_ann)
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.BitOr):
            return self.outcomes(module, node.left, self_ann) + self.outcomes(module, node.right, self_ann)
        if isinstance(node, ast.Subscript):
            head = _last(dotted_name(node.value))
            items = node.slice.elts if isinstance(node.slice, ast.Tuple) else [node.slice]
            if head in ("Optional", "Union"):
                return tuple(o for item in items for o in self.outcomes(module, item, self_ann))
            if head == "Annotated" and items:
                return self.outcomes(module, items[0], self_ann)
            node = node.value  # Series[Any], Index[int]: the head class
        text = dotted_name(node)
        if text is None:
            return (None,)
        target, outside = self.resolve_expr(module, text, typing=True)
        if target is None:
            return (SELF,) if _last(text) == "Self" and (outside in _SELF or outside == "Self") else (None,)
        r = self.raw[target]
        if r.kind == "class":
            return (target,)
        if r.typevar:
            if self_ann is not None and self._same_typevar(module, self_ann, target):
                return (SELF,)
            return self.outcomes(r.module, r.bound, None) if r.bound is not None else (None,)
        return (None,)

    def _same_typevar(self, module: str, node: ast.expr, typevar: str) -> bool:
        """`self: T` or `cls: type[T]` for the TypeVar `typevar`."""
        if isinstance(node, ast.Constant) and isinstance(node.value, str):
            try:
                node = ast.parse(node.value.strip(), mode="eval").body
            except SyntaxError:
                return False
        if isinstance(node, ast.Subscript) and _last(dotted_name(node.value)) in ("type", "Type"):
            node = node.slice
        text = dotted_name(node)
        return text is not None and self.resolve_expr(module, text, typing=True)[0] == typevar

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


def surface_from_parsed(library: str, parsed: Iterable[ParsedModule], problems: Sequence[Problem] = (),
                        *, partial_stars: bool = False) -> Surface:
    """Link parsed modules into a Surface.

    `parsed` may be a lazy iterator; `problems` is read after it is exhausted, and each module
    named there still exists in the surface, with unknowable exports. With `partial_stars`, a
    star import of a module whose names are partly unknowable (it star-imports an extension
    module) still brings the names that are known, instead of none.
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
    link = _Linker(library, readers, raw, class_aliases, partial_stars)

    members: dict[str, Member] = {}
    for name in sorted(raw):
        r = raw[name]
        if r.kind == "module":
            members[name] = Member(name, "module", None, None, (), link.deprecated(r), r.line, r.shape, doc=r.doc)
            continue
        kind = link.kind(name)
        bases = tuple(link.base_text(r.module, b) for b in r.bases) if r.kind == "class" else ()
        params = link.class_parameters(name) if r.kind == "class" else None if kind == "property" else r.params
        returns = link.returns(name)
        outcomes = link.outcomes_of(name)
        every = tuple(dict.fromkeys(o for o in outcomes if o is not None))
        members[name] = Member(name, kind, params, returns, bases, link.deprecated(r), r.line, r.shape,
                               returns_self=kind in _CALLABLE and bool(outcomes) and all(o == SELF for o in outcomes),
                               # Kept only when it says more than `returns` does, so the JSON stays small.
                               returns_all=every if every != ((returns,) if returns else ()) and r.kind != "class" else (),
                               doc=r.doc, annotation=ast.unparse(r.returns_ann) if r.returns_ann is not None else "")

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
    for module, reader in readers.items():
        for name, target in reader.served.items():
            path = f"{module}.{name}"
            bind = link.namespace(module).get(name)
            # PEP 562: __getattr__ is called only when the ordinary look-up fails.
            if (bind is not None and not bind.type_only) or path in members or path in aliases or path in private:
                continue
            found = link.resolve(target) if target else None
            if found is None and bind is not None:
                found = link.value(module, name, typing=True)  # imported for type checkers, served lazily
            if found is None:
                members[path] = Member(path, "dynamic", None, None, (), None, reader.served_line)
            else:
                # Served names are public unless named private: __all__ leaves them out by design.
                public = link.public_binding(reader, name, _Bind("alias", target or name, reader.served_line), None)
                (aliases if public else private)[path] = found
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


def sources_first(files: Iterable[ModuleFile]) -> Iterator[ModuleFile]:
    """Where a stub (.pyi) stands in for a module, the .py beside it instead.

    The source is what runs: it has the bodies (and the warnings in them), real default values
    where stubs write `...`, and the names stubs often drop once deprecated.
    """
    for f in files:
        if f.is_stub and f.path is not None and f.path.with_suffix(".py").is_file():
            yield ModuleFile(f.name, f.path.with_suffix(".py"), f.is_package, False)
        else:
            yield f


def build_surface(source: Path | str, library: str | None = None, *, include_tests: bool = False,
                  prefer_source: bool = False) -> Surface:
    """Read the surface of the library at `source` (a package, a module file, or their parent).

    The library's code is parsed, never imported or run. `tests` subpackages are read only
    with `include_tests` (see `discover_modules`). Stubs win over sources beside them (PEP 484)
    unless `prefer_source` (see `sources_first`).
    """
    name, files = discover_modules(Path(source), library, include_tests=include_tests)
    if prefer_source:
        files = tuple(sources_first(files))
    problems: list[Problem] = []
    return surface_from_parsed(name, iter_parsed(files, problems), problems)


def build_for_drafts(source: Path | str, library: str | None = None, *,
                     include_tests: bool = False) -> tuple[Surface, Surface]:
    """(the surface a draft reads, the surface a scan will check the draft against).

    A scan reads stubs first (PEP 484). A draft must also see what the sources beside them
    define and the stubs have dropped (deprecated names, most often: just what a draft is
    about), so it reads the union of both; where no stub stands for a source they are one.
    """
    name, files = discover_modules(Path(source), library, include_tests=include_tests)
    problems: list[Problem] = []
    scanned = surface_from_parsed(name, iter_parsed(files, problems), problems)
    if not any(f.is_stub and f.path is not None and f.path.with_suffix(".py").is_file() for f in files):
        return scanned, scanned
    problems = []
    # Names the sources bring from extension modules are in the stubs; take the rest they know.
    sources = surface_from_parsed(name, iter_parsed(sources_first(files), problems), problems, partial_stars=True)
    return merge_surfaces(scanned, sources), scanned
