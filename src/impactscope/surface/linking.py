"""Linking the modules, the second pass: a name is resolved only when something asks for it, memoised
and guarded against cycles, so import order and import cycles inside the library do not matter."""

from __future__ import annotations

import ast
from collections.abc import Iterable, Sequence

from impactscope import dunder_all

from .model import Member, Parameter, Problem, SELF, Surface, linearize
from .overloads import AnnotationReader, Overload, OverloadParameter
from .parsing import ParsedModule
from .reader import Bind, ModuleReader, Raw
from .syntax import (
    CALLABLE_KINDS,
    PEP702,
    PROPERTY_FACTORIES,
    PROPERTY_WORDS,
    SELF_NAMES,
    dotted_name,
    forward_reference,
    is_none,
    last_part,
)

# The containers whose items a subscript or a loop hands out one by one (the `typing` and
# `collections.abc` names, and the builtins PEP 585 made generic).
_SEQUENCE_HEADS = frozenset({
    "list", "List", "Sequence", "MutableSequence", "Iterator", "Iterable", "Generator", "tuple", "Tuple",
    "Collection",
})


class Linker:
    """Resolves names across the library on demand; every recursive step is memoised and guarded."""

    def __init__(self, library: str, readers: dict[str, ModuleReader], raw: dict[str, Raw],
                 class_aliases: dict[str, tuple[str, str, int]], partial_stars: bool = False) -> None:
        self.library = library
        self.partial_stars = partial_stars
        self.readers = readers
        self.raw = raw
        self.class_aliases = class_aliases
        self._ns: dict[str, dict[str, Bind]] = {}
        self._partial: dict[str, dict[str, Bind]] = {}
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

    def namespace(self, module: str) -> dict[str, Bind]:
        if module in self._ns:
            return self._ns[module]
        reader = self.readers.get(module)
        if reader is None:
            return {}
        if module in self._partial:
            return self._partial[module]  # a star-import cycle: what is known so far
        ns: dict[str, Bind] = {}
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
                        ns[n] = Bind("import", f"{target}.{n}", line, type_only, True, target)
        del self._partial[module]
        self._ns[module] = ns
        self._complete[module] = complete
        return ns

    def static_all(self, module: str) -> tuple[str, ...] | None:
        reader = self.readers.get(module)
        if reader is None or reader.all_parts is None or reader.all_dynamic or reader.all_runtime:
            return None
        parts = reader.all_parts

        def other(text: str) -> tuple[str, ...] | None:
            target = self.resolve_expr(module, text)[0]
            sub = self.static_all(target) if target is not None else None
            if sub is None and target in self.readers and self.readers[target].all_runtime:
                sub = self.star_names(target)  # its __all__ grows at run time: its public names
            return sub

        def compute() -> tuple[str, ...] | None:
            return dunder_all.names(parts, other)

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
                if outside in PROPERTY_FACTORIES or self.descriptor(target):
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
        if outside in PROPERTY_FACTORIES:
            return True
        named = last_part(target or outside or text)
        if "property" in named.lower() or named in PROPERTY_WORDS:
            return True
        return target is not None and self.descriptor(target) and self.attr(target, "__call__") is None

    def descriptor(self, target: str | None) -> bool:
        """A library class whose instances are descriptors (Language Reference, "Implementing Descriptors")."""
        return target is not None and self.raw[target].kind == "class" and self.attr(target, "__get__") is not None

    def overloads(self, name: str) -> tuple[Overload, ...]:
        """Each `@overload` of `name` with what its parameters admit, kept only when the overloads
        return different things (else `returns` already says it, and the JSON stays small)."""
        r = self.raw[name]
        if len(r.overloads) < 2:
            return ()
        reader = AnnotationReader(
            resolve=lambda module, text: self.resolve_expr(module, text, typing=True),
            library_class=self._nominal_class,
            alias=self._type_alias,
        )
        out = tuple(
            Overload(tuple(OverloadParameter(p.name, p.kind, p.default is not None, reader.read(r.module, a))
                           for p, a in zip(params, anns)),
                     self.outcomes(r.module, ret, me))
            for ret, me, params, anns in r.overloads
        )
        return out if len({o.outcomes for o in out}) > 1 else ()

    def _nominal_class(self, path: str) -> bool:
        """A library class that `isinstance` tests by inheritance (a protocol is structural)."""
        r = self.raw.get(path)
        if r is None or r.kind != "class":
            return False
        return not any(last_part(b) == "Protocol" for k in self.mro(path) for b in self.raw[k].bases)

    def _type_alias(self, path: str) -> tuple[str, ast.expr] | None:
        r = self.raw.get(path)
        if r is None or r.alias_value is None:
            return None
        return r.module, r.alias_value

    def outcomes_of(self, name: str) -> tuple[str | None, ...]:
        """What calling (for values: reading) `name` gives, one entry per possible outcome: a
        library class, SELF, or None for anything else. Overloads each add theirs (PEP 484)."""

        def compute() -> tuple[str | None, ...]:
            r = self.raw[name]
            if r.kind == "class":
                return (name,)
            kind = self.kind(name)
            if kind == "property" and r.kind not in CALLABLE_KINDS:
                return self.value_outcomes(name)
            if kind in CALLABLE_KINDS:
                if r.returns_first and not r.overloads:
                    return (SELF,)  # unannotated, and every way out is `return self`
                sigs = r.overloads or [(r.returns_ann, r.self_ann, (), ())]
                return tuple(o for ret, me, *_ in sigs for o in self.outcomes(r.module, ret, me))
            found = self.instance_class(name)
            return (found,)

        return self._guarded(("outcomes", name), compute, (None,))

    def value_outcomes(self, name: str) -> tuple[str | None, ...]:
        """`x = property(getter)`: the getter's; `x = Descriptor()`: its `__get__`'s, less the
        descriptor class itself (what access through the class gives, by convention)."""
        r = self.raw[name]
        cls = name.rpartition(".")[0]
        target, outside = self.resolve_expr(r.module, r.value_call or "")
        if outside in PROPERTY_FACTORIES:
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

    def return_typevar(self, name: str) -> str | None:
        """The TypeVar a callable's (or property's) return annotation names, `-> T`, `-> T | None`,
        `Optional[T]`, when it does not also type `self` (that one is Self); None otherwise."""
        r = self.raw[name]
        if r.kind == "class" or r.overloads or self.kind(name) not in (*CALLABLE_KINDS, "property"):
            return None
        node = r.returns_ann
        if isinstance(node, ast.Constant) and isinstance(node.value, str):
            node = forward_reference(node.value)
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.BitOr):
            node = node.right if is_none(node.left) else node.left if is_none(node.right) else None
        elif isinstance(node, ast.Subscript) and last_part(dotted_name(node.value)) == "Optional":
            node = node.slice
        text = dotted_name(node) if node is not None else None
        if text is None:
            return None
        target = self.resolve_expr(r.module, text, typing=True)[0]
        if target is None or not self.raw[target].typevar:
            return None
        if r.self_ann is not None and self._same_typevar(r.module, r.self_ann, target):
            return None
        return target

    def type_parameters(self, cls: str) -> tuple[str, ...]:
        """PEP 484, user-defined generic types: the TypeVars of `Generic[...]` (or `Protocol[...]`)
        when a base names it, else every TypeVar the bases' subscripts name, in order."""
        r = self.raw[cls]
        found: list[str] = []
        for text, args in zip(r.bases, r.base_args):
            typevars = []
            for arg in args:
                target = self.resolve_expr(r.module, arg, typing=True)[0] if arg else None
                if target is not None and self.raw[target].typevar:
                    typevars.append(target)
            if last_part(text) in ("Generic", "Protocol") and typevars:
                return tuple(dict.fromkeys(typevars))
            found.extend(typevars)
        return tuple(dict.fromkeys(found))

    def generic_bindings(self, cls: str) -> dict[str, str]:
        """TypeVar -> what a class's generic bases fix it to (`class DataFrameGroupBy(GroupBy[DataFrame])`
        fixes GroupBy's TypeVar to DataFrame, also in GroupBy's own bases), inherited. A value is a
        library class, or a TypeVar of `cls` itself that a subclass may fix in turn."""

        def compute() -> dict[str, str]:
            r = self.raw[cls]
            out: dict[str, str] = {}
            for text, args in zip(r.bases, r.base_args):
                base = self.resolve_expr(r.module, text)[0] if text else None
                if base is None or base not in self.raw or self.raw[base].kind != "class":
                    continue
                local: dict[str, str] = {}
                for param, arg in zip(self.type_parameters(base), args):
                    target = self.resolve_expr(r.module, arg, typing=True)[0] if arg else None
                    if target is not None and (self.raw[target].kind == "class" or self.raw[target].typevar):
                        local[param] = target
                inherited = {k: local.get(v, v) for k, v in self.generic_bindings(base).items()}
                for k, v in {**inherited, **local}.items():
                    out.setdefault(k, v)  # the first base that fixes it, as the MRO looks it up
            return out

        return self._guarded(("generic", cls), compute, {})

    def item_class(self, name: str) -> str | None:
        """The one library class of the items a callable returns in a builtin container
        (`list[X]`, `Sequence[X]`, `Iterator[X]`, `tuple[X, ...]`), when every signature agrees."""
        r = self.raw[name]
        if r.kind == "class" or self.kind(name) not in CALLABLE_KINDS:
            return None
        sigs = r.overloads or [(r.returns_ann, r.self_ann, (), ())]
        found = {self._items_of(r.module, ret) for ret, *_ in sigs}
        return found.pop() if len(found) == 1 else None

    def _items_of(self, module: str, node: ast.expr | None) -> str | None:
        if isinstance(node, ast.Constant) and isinstance(node.value, str):
            node = forward_reference(node.value)
        if not isinstance(node, ast.Subscript) or last_part(dotted_name(node.value)) not in _SEQUENCE_HEADS:
            return None
        items = node.slice.elts if isinstance(node.slice, ast.Tuple) else [node.slice]
        head = last_part(dotted_name(node.value))
        if head in ("tuple", "Tuple"):
            # `tuple[X, ...]` only: a fixed tuple's items differ by position.
            if len(items) != 2 or not (isinstance(items[1], ast.Constant) and items[1].value is Ellipsis):
                return None
        elif len(items) != 1 and head not in ("Generator", "Iterator", "Iterable"):
            return None
        outs = self.outcomes(module, items[0], None)
        return outs[0] if len(outs) == 1 and outs[0] not in (None, SELF) else None

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
        if is_none(node):
            return ()
        if isinstance(node, ast.Constant) and isinstance(node.value, str):
            inner = forward_reference(node.value)
            return (None,) if inner is None else self.outcomes(module, inner, self_ann)
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.BitOr):
            return self.outcomes(module, node.left, self_ann) + self.outcomes(module, node.right, self_ann)
        if isinstance(node, ast.Subscript):
            head = last_part(dotted_name(node.value))
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
            return (SELF,) if last_part(text) == "Self" and (outside in SELF_NAMES or outside == "Self") else (None,)
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
            parsed = forward_reference(node.value)
            if parsed is None:
                return False
            node = parsed
        if isinstance(node, ast.Subscript) and last_part(dotted_name(node.value)) in ("type", "Type"):
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

    def deprecated(self, r: Raw) -> str | None:
        for text, message in r.decorators:
            if self.resolve_expr(r.module, text, typing=True)[1] in PEP702:
                return message or ""
        return None

    def public_binding(self, reader: ModuleReader, name: str, bind: Bind, declared: tuple[str, ...] | None) -> bool:
        """PEP 8 and the stub rules of PEP 484: which module-level re-exports are public."""
        if name.startswith("_") or any(seg.startswith("_") for seg in reader.module.split(".")):
            return False
        if declared is not None:
            return name in declared
        if bind.kind == "alias" or bind.reexport:
            return True
        return reader.is_package and not reader.stub


def surface_from_parsed(library: str, parsed: Iterable[ParsedModule], problems: Sequence[Problem] = (),
                        *, partial_stars: bool = False) -> Surface:
    """Link parsed modules into a Surface.

    `parsed` may be a lazy iterator; `problems` is read after it is exhausted, and each module
    named there still exists in the surface, with unknowable exports. With `partial_stars`, a
    star import of a module whose names are partly unknowable (it star-imports an extension
    module) still brings the names that are known, instead of none.
    """
    raw: dict[str, Raw] = {}
    class_aliases: dict[str, tuple[str, str, int]] = {}
    readers: dict[str, ModuleReader] = {}
    for p in parsed:
        readers[p.file.name] = ModuleReader(p, library, raw, class_aliases)
    failed = [p.module for p in problems]
    for name in failed:
        raw.setdefault(name, Raw(name, "module", name, 0))
    # A class or function later rebound to something else leaves its members without a parent.
    for name in sorted(raw):
        parent = name.rpartition(".")[0]
        if parent and parent not in raw:
            del raw[name]
    for path in [p for p, (cls, _, _) in class_aliases.items() if cls not in raw]:
        del class_aliases[path]
    link = Linker(library, readers, raw, class_aliases, partial_stars)

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
                               returns_self=kind in CALLABLE_KINDS and bool(outcomes) and all(o == SELF for o in outcomes),
                               # Kept only when it says more than `returns` does, so the JSON stays small.
                               returns_all=every if every != ((returns,) if returns else ()) and r.kind != "class" else (),
                               doc=r.doc, annotation=ast.unparse(r.returns_ann) if r.returns_ann is not None else "",
                               overloads=link.overloads(name) if kind in CALLABLE_KINDS and returns is None else (),
                               items=link.item_class(name) if returns is None else None,
                               wraps_owner=kind == "property" and returns is not None and r.wraps_self is not None
                               and link.resolve_expr(r.module, r.wraps_self)[0] == returns,
                               returns_var=(link.return_typevar(name) or "") if r.kind != "class" else "",
                               binds=tuple(sorted(
                                   (k, v) for k, v in link.generic_bindings(name).items()
                                   if raw[v].kind == "class")) if r.kind == "class" else ())

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
                public = link.public_binding(reader, name, Bind("alias", target or name, reader.served_line), None)
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
        bound={m: tuple(sorted(r.top_names)) for m, r in sorted(readers.items()) if r.top_names is not None},
    )
