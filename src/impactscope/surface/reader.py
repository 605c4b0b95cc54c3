"""Reading one module, the first pass: the members it defines and the ordered bindings it makes
(definitions, imports, aliases, star imports, `__all__`)."""

from __future__ import annotations

import ast
import hashlib
from dataclasses import dataclass

from impactscope import dunder_all
from impactscope.import_names import package_of, resolve_relative

from .model import Parameter
from .parsing import ParsedModule
from .served import ServedNames, lazy_attach
from .syntax import (
    ACCESSOR,
    PROPERTY,
    TRY_NODES,
    TYPE_ALIAS_NODE,
    TYPEVAR,
    all_change,
    built_on_first,
    changes_all,
    doc_digest,
    dotted_name,
    ends_in_raise,
    forward_reference,
    is_main_guard,
    is_namespace_call,
    is_type_checking,
    last_part,
    returns_first,
    returns_value,
    string_value,
    string_values,
)


@dataclass(frozen=True)
class Bind:
    """One module-level binding: a definition, an import, an alias assignment or an outside import."""

    kind: str  # "def" | "import" | "alias" | "external"
    target: str  # def: canonical path; import: absolute dotted path; alias: dotted text; external: dotted
    line: int
    type_only: bool = False
    reexport: bool = False  # `import x as x`, `from m import x as x`, or a star import
    origin: str = ""  # for `from M import x`: M, which the import system finds as a module, not an attribute


class Raw:
    """A member while the library is being linked (mutable builder state, never handed out)."""

    __slots__ = ("name", "kind", "module", "line", "params", "returns_ann", "self_class", "decorators",
                 "shape", "bases", "value_call", "value_ann", "dataclass", "fields", "namedtuple", "instance_attrs",
                 "self_ann", "overloads", "wrappers", "getter", "typevar", "bound", "doc", "alias_value",
                 "wraps_self", "base_args", "returns_first")

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
        # (returns, self, parameters, their annotations) per @overload, in source order
        self.overloads: list[tuple[ast.expr | None, ast.expr | None, tuple[Parameter, ...], tuple[ast.expr | None, ...]]] = []
        self.wrappers: list[str] = []  # a method's other decorators, to tell a cached property at link time
        self.getter: str | None = None  # `x = property(getter)`: the getter's dotted text
        self.typevar = False  # `T = TypeVar("T", bound=...)`
        self.bound: ast.expr | None = None
        self.alias_value: ast.expr | None = None  # `Scalar = Union[...]`: a type alias, read by overload parameters
        # per base: the dotted texts of its subscript's items (`GroupBy[DataFrame]`), () for a plain base
        self.base_args: list[tuple[str | None, ...]] = []
        self.wraps_self: str | None = None  # the callee when every return is a call given `self` (`_Indexer(self)`)
        self.returns_first = False  # a method whose every way out is `return self` (read when unannotated)


class ModuleReader:
    """Reads one module: its members and its ordered bindings."""

    def __init__(self, parsed: ParsedModule, library: str, raw: dict[str, Raw], class_aliases: dict[str, tuple[str, str, int]]) -> None:
        f = parsed.file
        self.module = f.name
        self.stub = f.is_stub
        self.is_package = f.is_package
        self.package = package_of(f.name, f.is_package)
        self.library = library
        self.text = parsed.text
        self.raw = raw
        self.class_aliases = class_aliases
        self.ops: list[tuple] = []
        self.all_state = dunder_all.ABSENT
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
        raw[f.name] = Raw(f.name, "module", f.name, 1 if f.path is not None else 0)
        raw[f.name].doc = doc_digest(parsed.tree)
        top = self.block(parsed.tree.body, frozenset(), False, None)
        self._scan_runtime_names(parsed.tree)
        if self._getattr_node is not None:
            # Read last: the tables it consults may be assigned below the function.
            served = ServedNames(self, self._getattr_node)
            self.served.update(served.names)
            if not served.open and ends_in_raise(self._getattr_node.body):
                self.getattr = False  # PEP 562 with a fixed set of names: the surface has them all
            self._getattr_node = None
        # Every name the module binds at top level, on any branch, whatever it is bound to (a
        # compiled module's function, another package's name); None where a star import, a
        # namespace written at run time or an open __getattr__ makes the set unknowable.
        open_names = self.getattr or self.runtime_names or any(op[0] == "star" for op in self.ops)
        self.top_names: frozenset[str] | None = None if open_names else frozenset(top) | frozenset(self.served)

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
            if is_type_checking(st.test):
                if self.stub:
                    return self.block(st.body, shadow, type_only, scope)  # the else branch is dead
                self.block(st.body, shadow, True, scope)  # imports for annotations only
                return self.block(st.orelse, shadow, type_only, scope)
            if is_main_guard(st.test):
                return set()
            # Both branches are read; the first one wins for a name both bind.
            first = self.block(st.body, shadow, type_only, scope)
            return first | self.block(st.orelse, shadow | first, type_only, scope)
        if isinstance(st, TRY_NODES):
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
        if scope is None and (change := all_change(st)) is not None:
            self.all_state = dunder_all.apply(self.all_state, change)
        if isinstance(st, (ast.FunctionDef, ast.AsyncFunctionDef)):
            return self.function(st, scope, shadow)
        if isinstance(st, ast.ClassDef):
            return self.class_(st, scope, shadow)
        if isinstance(st, ast.Assign):
            return self.assign(st.targets, st.value, None, st.lineno, scope, shadow)
        if isinstance(st, ast.AnnAssign):
            return self.assign([st.target], st.value, st.annotation, st.lineno, scope, shadow)
        if isinstance(st, (ast.AugAssign, ast.Expr)):
            return set()
        if isinstance(st, ast.Delete) and scope is None:
            for target in st.targets:
                if isinstance(target, ast.Name):
                    self.ops.append(("del", target.id))
            return set()
        if TYPE_ALIAS_NODE is not None and isinstance(st, TYPE_ALIAS_NODE):
            name = st.name.id
            if name not in shadow:
                self._new(self._path(scope, name), "constant", st.lineno, scope)
            return {name}
        return set()

    def _path(self, scope: str | None, name: str) -> str:
        return f"{scope or self.module}.{name}"

    def _new(self, path: str, kind: str, line: int, scope: str | None) -> Raw:
        r = Raw(path, kind, self.module, line)
        if path not in self.raw:
            self._kids.setdefault(scope or self.module, []).append(path)
        self.raw[path] = r
        self.class_aliases.pop(path, None)
        if scope is None:
            self.ops.append(("bind", path.rpartition(".")[2], Bind("def", path, line)))
        return r

    def function(self, node: ast.FunctionDef | ast.AsyncFunctionDef, scope: str | None, shadow: frozenset[str]) -> set[str]:
        name = node.name
        if name in shadow:
            return set()
        path = self._path(scope, name)
        decorators = [(d.func if isinstance(d, ast.Call) else d, d) for d in node.decorator_list]
        lasts = {last_part(dotted_name(func)) for func, _ in decorators}
        if lasts & ACCESSOR and path in self.raw:
            return {name}  # @x.setter keeps the property x
        overload = "overload" in lasts
        positional = [*node.args.posonlyargs, *node.args.args]
        self_ann = positional[0].annotation if scope is not None and positional else None
        earlier = self.raw.get(path) if path in self._overloads else None
        if overload:
            drop = scope is not None and "staticmethod" not in lasts or name == "__new__"
            signature = (node.returns, self_ann, self.parameters(node.args, drop_first=drop),
                         _annotations(node.args, drop))
        if overload and earlier is not None:
            earlier.overloads.append(signature)
            return {name}  # the first overload's signature, until an implementation replaces it
        if overload and path in self.raw:
            return {name}
        if scope is None:
            kind = "function"
        elif lasts & PROPERTY:
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
        r.wraps_self = built_on_first(node) if scope is not None else None
        r.returns_first = kind == "method" and node.returns is None and returns_first(node)
        r.self_ann = self_ann
        if overload:
            r.overloads = [signature]
        elif earlier is not None:
            # PEP 484: the overloads, not the implementation, are what callers see.
            r.overloads = earlier.overloads
        if kind == "method":
            known = PROPERTY | ACCESSOR | {"overload", "classmethod", "staticmethod"}
            r.wrappers = [t for t in (dotted_name(func) for func, _ in decorators) if t and last_part(t) not in known]
        r.decorators = self._deprecations(decorators)
        r.shape = self.text.body_shape(node)
        r.doc = doc_digest(node)
        (self._overloads.add if overload else self._overloads.discard)(path)
        if scope is None and not self.all_runtime and changes_all(node):
            self.all_runtime = True
        if scope is None and name == "__getattr__":
            # PEP 562: one that only raises (AttributeError with a message) serves no name.
            self.getattr = returns_value(node)
            self._getattr_node = node
            self.served_line = node.lineno
        if scope is not None and name == "__init__" and (node.args.posonlyargs or node.args.args):
            self._instance_attrs(node, scope)
        return {name}

    def _deprecations(self, decorators: list[tuple[ast.expr, ast.expr]]) -> list[tuple[str, str | None]]:
        out = []
        for func, full in decorators:
            text = dotted_name(func)
            if last_part(text) == "deprecated" and text is not None:
                message = string_value(full.args[0]) if isinstance(full, ast.Call) and full.args else None
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
        r.base_args = [_subscript_items(b) for b in node.bases]
        r.namedtuple = any(last_part(b) == "NamedTuple" for b in r.bases)
        decorators = [(d.func if isinstance(d, ast.Call) else d, d) for d in node.decorator_list]
        r.decorators = self._deprecations(decorators)
        for func, full in decorators:
            if last_part(dotted_name(func)) == "dataclass":
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
        r.doc = doc_digest(node)
        return {name}

    def assign(self, targets: list[ast.expr], value: ast.expr | None, annotation: ast.expr | None, line: int,
               scope: str | None, shadow: frozenset[str]) -> set[str]:
        bound: set[str] = set()
        for target in targets:
            if isinstance(target, ast.Name):
                name = target.id
                if scope is None and name == "__all__":
                    continue  # read by all_change
                if name in shadow:
                    continue
                bound.add(name)
                self._bind_value(name, value, annotation, line, scope)
            elif isinstance(target, (ast.Tuple, ast.List)):
                if (scope is None and isinstance(value, ast.Call) and last_part(dotted_name(value.func)) == "attach"
                        and any(isinstance(e, ast.Name) and e.id == "__getattr__" for e in target.elts)):
                    self.getattr = True
                    self.served.update(lazy_attach(value, self.module))
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
        if dotted is not None and last_part(dotted_name(annotation)) in ("", "TypeAlias"):
            self.raw.pop(path, None)
            if scope is None:
                self.ops.append(("bind", name, Bind("alias", dotted, line)))
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
            strings = string_values(value)
            if strings is not None:
                self._literals[name] = strings
        r = self._new(path, kind, line, scope)
        r.value_ann = annotation
        if scope is None and isinstance(value, (ast.Subscript, ast.BinOp)):
            r.alias_value = value
        if isinstance(value, ast.Lambda):
            r.params = self.parameters(value.args, drop_first=kind == "method")
        elif isinstance(value, ast.Call):
            r.value_call = dotted_name(value.func)
            if self._full_name(value.func) in TYPEVAR:
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
            found = [string_value(e.elts[0] if isinstance(e, ast.Tuple) and e.elts else e) for e in spec.elts]
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
        if last_part(ann) == "ClassVar":
            return
        if last_part(ann) == "KW_ONLY":
            owner.fields.append(("*", None, True))
            return
        default: str | None = None
        kw_only = False
        if isinstance(value, ast.Call) and last_part(dotted_name(value.func)) == "field":
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
        base = self.absolute(st.module, st.level)
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
        bind = Bind("import" if inside else "external", target, line, type_only, reexport, origin)
        self.ops.append(("bind", name, bind))

    def absolute(self, module: str | None, level: int) -> str | None:
        """The module a `from` import names, or None where the import system refuses it."""
        return resolve_relative(self.package, level, module or "") if level else module

    # __all__ ---------------------------------------------------------------------------

    @property
    def all_parts(self) -> tuple[dunder_all.Part, ...] | None:
        """None: the module binds no `__all__`; empty too when what it binds is unknowable."""
        return (self.all_state.parts or ()) if self.all_state.defined else None

    @property
    def all_dynamic(self) -> bool:
        return self.all_state.defined and self.all_state.parts is None

    def _scan_runtime_names(self, tree: ast.Module) -> None:
        """Names built at run time: `globals()[k] = v`, `globals().update(...)`, setattr on sys.modules."""
        probe = b"".join(self.text.lines)
        if b"globals()" not in probe and b"vars()" not in probe and b"sys.modules" not in probe:
            return
        listed: set[int] = set()  # `for n in ("a", "b"): globals()[n] = ...` binds a fixed set of names
        for node in ast.walk(tree):
            if isinstance(node, ast.For) and isinstance(node.target, ast.Name) and string_values(node.iter) is not None:
                for sub in ast.walk(node):
                    if (isinstance(sub, ast.Assign) and len(sub.targets) == 1 and isinstance(sub.targets[0], ast.Subscript)
                            and is_namespace_call(sub.targets[0].value) and isinstance(sub.targets[0].slice, ast.Name)
                            and sub.targets[0].slice.id == node.target.id):
                        listed.add(id(sub))
                        for name in string_values(node.iter) or ():
                            self.served.setdefault(name, None)
        for node in ast.walk(tree):
            if isinstance(node, (ast.Assign, ast.AugAssign, ast.AnnAssign)) and id(node) not in listed:
                targets = node.targets if isinstance(node, ast.Assign) else [node.target]
                if any(isinstance(t, ast.Subscript) and is_namespace_call(t.value) for t in targets):
                    self.runtime_names = True
                    return
            elif isinstance(node, ast.Call):
                func = node.func
                if isinstance(func, ast.Attribute) and func.attr in ("update", "setdefault", "__setitem__") and is_namespace_call(func.value):
                    self.runtime_names = True
                    return
                if isinstance(func, ast.Name) and func.id == "setattr" and node.args and "sys.modules" in ast.unparse(node.args[0]):
                    self.runtime_names = True
                    return

    # parameters ------------------------------------------------------------------------

    def parameters(self, args: ast.arguments, drop_first: bool) -> tuple[Parameter, ...]:
        """The parameters as callers see them (`_annotations` gives theirs in the same order)."""
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


def _subscript_items(node: ast.expr) -> tuple[str | None, ...]:
    """`Base[A, "B"]`: the items' dotted texts (a string item read as a forward reference)."""
    if not isinstance(node, ast.Subscript):
        return ()
    items = node.slice.elts if isinstance(node.slice, ast.Tuple) else [node.slice]
    out: list[str | None] = []
    for item in items:
        if isinstance(item, ast.Constant) and isinstance(item.value, str):
            parsed = forward_reference(item.value)
            item = parsed if parsed is not None else item
        out.append(dotted_name(item))
    return tuple(out)


def _annotations(args: ast.arguments, drop_first: bool) -> tuple[ast.expr | None, ...]:
    """The annotations of `ModuleReader.parameters(args, drop_first)`, in the same order."""
    positional = [*args.posonlyargs, *args.args]
    start = 1 if drop_first and positional else 0
    out = [a.annotation for a in positional[start:]]
    if args.vararg is not None:
        out.append(args.vararg.annotation)
    out.extend(a.annotation for a in args.kwonlyargs)
    if args.kwarg is not None:
        out.append(args.kwarg.annotation)
    return tuple(out)
