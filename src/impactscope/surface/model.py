"""The value types of a library surface, and the fast look-ups the resolver asks of it.

A `Surface` is built once (from source text, or from JSON) and then only queried. Every
look-up the resolver makes per reference is a handful of dict hits: the indices behind them are
computed when the surface is constructed and kept in private fields of the frozen object.
"""

from __future__ import annotations

import json
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

from impactscope.errors import InputError

from .overloads import Overload

PARAMETER_KINDS = ("positional-only", "positional-or-keyword", "var-positional", "keyword-only", "var-keyword")
MEMBER_KINDS = (
    "module",
    "class",
    "function",
    "method",
    "classmethod",
    "staticmethod",
    "property",
    "constant",
    "unknown",
    "dynamic",  # served by a module-level __getattr__ (PEP 562) from a fixed set of names
)
SELF = "typing.Self"  # in `Member.returns_all`: the receiver's class (PEP 673), filled in per look-up
JSON_FORMAT = 1
_VALUE_KINDS = frozenset({"property", "constant", "unknown", "dynamic"})


class SurfaceError(InputError):
    """A library surface could not be built, located or loaded."""


@dataclass(frozen=True)
class Parameter:
    """One parameter of a callable, as written in the source."""

    name: str
    kind: str
    position: int | None  # 0-based among positional parameters, self/cls excluded; None otherwise
    default: str | None  # source text of the default; None when the parameter is required

    def render(self) -> str:
        prefix = {"var-positional": "*", "var-keyword": "**"}.get(self.kind, "")
        text = prefix + self.name
        return text if self.default is None else f"{text}={self.default}"


@dataclass(frozen=True)
class Member:
    """One named thing of the library, at its canonical (defining) path.

    `returns` is the canonical library class a call returns (a class: itself). For properties,
    constants and unknowns it is the library class of the value, when the source says so.
    `shape` is a short digest of the definition's body, used to recognise a definition that
    moved or was renamed; "" when the body is trivial (a stub, `pass`) or not a definition.
    `returns_all` lists every library class a call (or read) can give, in source order, over
    overloads (PEP 484) and unions; `returns` is set only when they all agree. An entry `SELF`
    stands for the receiver's class. `doc` is a short digest of the docstring (whitespace
    folded; "" when there is none), the second fingerprint a draft uses to recognise a member
    that moved; `annotation` the return annotation as written (normalised by `ast.unparse`).
    """

    name: str
    kind: str
    parameters: tuple[Parameter, ...] | None
    returns: str | None
    bases: tuple[str, ...]
    deprecated: str | None
    line: int
    shape: str = ""
    returns_self: bool = False  # annotated `-> Self` (PEP 673): the receiver's class, not the definer's
    returns_all: tuple[str, ...] = ()
    doc: str = ""
    annotation: str = ""
    overloads: tuple[Overload, ...] = ()  # PEP 484 overloads, kept when they return different things
    items: str | None = None  # for `-> list[X]` and kin: the library class X of the items
    # A property whose every return is built around the instance (`return _Indexer("loc", self)`):
    # what it gives indexes the instance, so a dimension-keeping subscript gives the instance's class.
    wraps_owner: bool = False
    # PEP 484 generics: the TypeVar a callable's return names (`-> NDFrameT`; `returns` holds its
    # bound), and on a class what its generic bases fix each TypeVar to (inherited), so that a
    # method a subclass of `GroupBy[DataFrame]` inherits returns a DataFrame.
    returns_var: str = ""
    binds: tuple[tuple[str, str], ...] = ()

    def signature(self) -> str:
        if self.parameters is None:
            return ""
        out: list[str] = []
        for i, p in enumerate(self.parameters):
            nxt = self.parameters[i + 1] if i + 1 < len(self.parameters) else None
            if p.kind == "keyword-only" and (i == 0 or self.parameters[i - 1].kind not in ("keyword-only", "var-positional")):
                out.append("*")
            out.append(p.render())
            if p.kind == "positional-only" and (nxt is None or nxt.kind != "positional-only"):
                out.append("/")
        return "(" + ", ".join(out) + ")"


@dataclass(frozen=True)
class Problem:
    """A module that could not be read; the rest of the surface is still built."""

    module: str
    path: str
    message: str


def _mapping(value: Mapping[str, Any]) -> Mapping[str, Any]:
    return value if isinstance(value, MappingProxyType) else MappingProxyType(dict(value))


def _is_private(segment: str) -> bool:
    return segment.startswith("_") and not (segment.startswith("__") and segment.endswith("__"))


@dataclass(frozen=True)
class Surface:
    """A library's API, read statically.

    `aliases` holds public re-export paths (`heronframe.Table` -> its canonical name);
    `private_aliases` the other re-export paths (through private modules or names), which
    `canonical()` follows too. `declared` lists modules whose `exports` come from a static
    `__all__`; `problems` the modules that could not be parsed.
    """

    library: str
    members: Mapping[str, Member]
    aliases: Mapping[str, str]
    exports: Mapping[str, tuple[str, ...] | None]
    dynamic: frozenset[str]
    private_aliases: Mapping[str, str] = field(default_factory=dict)
    declared: frozenset[str] = frozenset()
    problems: tuple[Problem, ...] = ()
    # Per module whose top-level names are all known, every name it binds there (imports of
    # compiled or outside modules too): what `from module import name` can find.
    bound: Mapping[str, tuple[str, ...]] = field(default_factory=dict)
    # Indices, derived from the fields above in __post_init__.
    _links: Mapping[str, str] = field(init=False, repr=False, compare=False)
    _children: Mapping[str, Mapping[str, str]] = field(init=False, repr=False, compare=False)
    _attrs: Mapping[str, Mapping[str, str]] = field(init=False, repr=False, compare=False)
    _mro: Mapping[str, tuple[str, ...]] = field(init=False, repr=False, compare=False)
    _owners: Mapping[str, frozenset[str]] = field(init=False, repr=False, compare=False)
    _public: frozenset[str] = field(init=False, repr=False, compare=False)
    _reach: Mapping[str, tuple[str, ...]] = field(init=False, repr=False, compare=False)
    _hash: int = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        put = object.__setattr__
        put(self, "members", _mapping(self.members))
        put(self, "aliases", _mapping(self.aliases))
        put(self, "private_aliases", _mapping(self.private_aliases))
        put(self, "exports", _mapping(self.exports))
        put(self, "dynamic", frozenset(self.dynamic))
        put(self, "declared", frozenset(self.declared))
        put(self, "problems", tuple(self.problems))
        put(self, "bound", _mapping({k: tuple(v) for k, v in self.bound.items()}))
        links = {**self.private_aliases, **self.aliases}
        children: dict[str, dict[str, str]] = {}
        for name in self.members:
            parent, _, attr = name.rpartition(".")
            if parent:
                children.setdefault(parent, {})[attr] = name
        for path, target in links.items():
            parent, _, attr = path.rpartition(".")
            # A re-export rebinds the attribute, as `from .x import x` shadows submodule x.
            children.setdefault(parent, {})[attr] = target
        mro = class_mros(self.members)
        attrs: dict[str, dict[str, str]] = {}
        for cls, order in mro.items():
            table: dict[str, str] = {}
            for c in reversed(order):
                table.update(children.get(c, {}))
            attrs[cls] = table
        owners: dict[str, set[str]] = {}
        for cls, table in attrs.items():
            for attr in table:
                owners.setdefault(attr, set()).add(cls)
        for name, member in self.members.items():
            if member.kind == "module":
                for attr in children.get(name, {}):
                    owners.setdefault(attr, set()).add(name)
        put(self, "_links", links)
        put(self, "_children", children)
        put(self, "_mro", mro)
        put(self, "_attrs", attrs)
        put(self, "_owners", {k: frozenset(v) for k, v in owners.items()})
        put(self, "_public", frozenset(self._public_paths()))
        put(self, "_hash", hash((self.library, frozenset(self.members), frozenset(self.aliases.items()))))
        reach: dict[str, list[str]] = {}
        for path in self._public:
            reach.setdefault(self.canonical(path), []).append(path)
        put(self, "_reach", {target: self._ranked(paths, target) for target, paths in reach.items()})

    def __hash__(self) -> int:
        # The mappings are not hashable; equal surfaces have equal names, so this is consistent with ==.
        return self._hash

    # -- look-ups the resolver makes ------------------------------------------------------

    def canonical(self, dotted: str) -> str:
        """The defining path of `dotted`, through re-exports, aliases and inheritance.

        A name the surface does not know comes back unchanged past its longest known prefix,
        which is itself canonicalised.
        """
        # A re-export wins over a member at the same path: `from .main import main` in a package
        # makes `pkg.main` the function, as attribute access sees it, not the submodule.
        target = self._links.get(dotted)
        if target is not None:
            return target
        if dotted in self.members:
            return dotted
        parts = dotted.split(".")
        for i in range(len(parts) - 1, 0, -1):
            head = ".".join(parts[:i])
            base = self._links.get(head) or (head if head in self.members else None)
            if base is not None:
                break
        else:
            return dotted
        for j in range(i, len(parts)):
            nxt = self._attr(base, parts[j])
            if nxt is None:
                return ".".join((base, *parts[j:]))
            base = nxt
        return base

    def member(self, dotted: str) -> Member | None:
        return self.members.get(self.canonical(dotted))

    def is_class(self, dotted: str) -> bool:
        member = self.member(dotted)
        return member is not None and member.kind == "class"

    def returns(self, dotted: str) -> str | None:
        """The canonical library class that calling `dotted` returns (a class returns itself)."""
        member = self.member(dotted)
        if member is None:
            return None
        if member.kind == "class":
            return member.name
        if member.returns_self:
            # PEP 673: Self is the class of the receiver, e.g. a subclass that inherits the method.
            owner = self.canonical(dotted.rpartition(".")[0])
            if self.is_class(owner):
                return owner
        return self._bound(dotted, member) or member.returns

    def _bound(self, dotted: str, member: Member) -> str | None:
        """PEP 484: what the receiver's class fixes the TypeVar a method returns to, if anything."""
        if not member.returns_var:
            return None
        owner = self.members.get(self.canonical(dotted.rpartition(".")[0]))
        if owner is None or owner.kind != "class":
            return None
        return dict(owner.binds).get(member.returns_var)

    def returns_all(self, dotted: str) -> tuple[str, ...]:
        """Every canonical library class calling `dotted` can return, in order, without repeats.

        Overloads (PEP 484) and unions list each of their classes; `returns()` is the one class
        only when all of them agree (a `None` outcome does not count: it has no attributes).
        A class returns itself; `Self` (PEP 673) is the receiver's class, as in `returns()`.
        """
        member = self.member(dotted)
        if member is None:
            return ()
        if member.kind == "class":
            return (member.name,)
        fixed = self._bound(dotted, member)
        if fixed is not None:
            return (fixed,)
        if not member.returns_all:
            return () if member.returns is None else (member.returns,)
        receiver = self.canonical(dotted.rpartition(".")[0])
        if not self.is_class(receiver):
            receiver = member.name.rpartition(".")[0]
        out = (receiver if c == SELF else c for c in member.returns_all)
        return tuple(dict.fromkeys(out))

    def overloads(self, dotted: str) -> tuple[Overload, ...]:
        """The overloads of the callable `dotted` when they return different things, with `SELF`
        read as the receiver's class (as in `returns_all`); () otherwise."""
        member = self.member(dotted)
        if member is None or not member.overloads:
            return ()
        receiver = self.canonical(dotted.rpartition(".")[0])
        if not self.is_class(receiver):
            receiver = member.name.rpartition(".")[0]
        return tuple(
            Overload(o.parameters, tuple(receiver if c == SELF else c for c in o.outcomes)) for o in member.overloads
        )

    def attribute_type(self, dotted: str) -> str | None:
        """The library class of the value `obj.attr` reads, when `dotted` names a property, a
        descriptor or a data attribute (class-level annotation, constant, instance attribute);
        None for methods, classes, modules and values of unknown type."""
        member = self.member(dotted)
        if member is None or member.kind not in _VALUE_KINDS:
            return None
        return self.returns(dotted)

    def parameters(self, dotted: str) -> tuple[Parameter, ...] | None:
        """Parameters of a callable; for a class, those of its `__init__` without self."""
        member = self.member(dotted)
        return None if member is None else member.parameters

    def binds(self, module: str, name: str) -> bool | None:
        """Whether the module binds `name` at top level (so `from module import name` finds it, a
        submodule aside); None when its names are not all known."""
        names = self.bound.get(module)
        if names is None:
            names = self.bound.get(self.canonical(module))
        return None if names is None else name in names

    def star_names(self, module: str) -> tuple[str, ...] | None:
        """Names `from module import *` binds; None when that is not knowable statically."""
        if module in self.exports:  # an import statement names the module itself, even if shadowed
            return self.exports[module]
        return self.exports.get(self.canonical(module))

    def owners(self, attr: str) -> frozenset[str]:
        """Canonical classes and modules that have a member called `attr`, inherited included."""
        return self._owners.get(attr, frozenset())

    def names_in(self, dotted: str) -> tuple[str, ...]:
        """The attribute names known on a module or class (a class's inherited ones too), sorted;
        () for anything else."""
        target = self.canonical(dotted)
        member = self.members.get(target)
        if member is None:
            return ()
        if member.kind == "class":
            return tuple(sorted(self._attrs.get(target, {})))
        if member.kind == "module":
            return tuple(sorted(self._children.get(target, {})))
        return ()

    def public_names(self) -> frozenset[str]:
        """Every public dotted path: canonical members, re-exports, and class members through them."""
        return self._public

    def mro(self, cls: str) -> tuple[str, ...]:
        """The class and its library-internal ancestors in C3 order (empty for a non-class)."""
        return self._mro.get(self.canonical(cls), ())

    def attributes(self, cls: str) -> Mapping[str, str]:
        """Attribute name -> canonical member for a class, inherited members included."""
        return self._attrs.get(self.canonical(cls), {})

    def module_of(self, dotted: str) -> str | None:
        """The module that defines a canonical member (a module is its own)."""
        name = dotted
        while name:
            member = self.members.get(name)
            if member is not None and member.kind == "module":
                return name
            name = name.rpartition(".")[0]
        return None

    def _attr(self, owner: str, attr: str) -> str | None:
        member = self.members.get(owner)
        if member is None:
            return None
        if member.kind == "class":
            return self._attrs.get(owner, {}).get(attr)
        if member.kind == "module":
            return self._children.get(owner, {}).get(attr)
        if member.kind in ("constant", "unknown") and member.returns is not None and member.returns in self._attrs:
            # A module-level instance (`c = Calendar()`): its attributes are its class's.
            return self._attrs[member.returns].get(attr)
        return None

    # -- public paths ---------------------------------------------------------------------

    def is_public(self, name: str) -> bool:
        """Whether a canonical member's own path is public API.

        Private: any module segment or module-level name with a leading underscore, a name left
        out of a static `__all__` (but for names a module `__getattr__` serves), or a class-level name with a leading underscore (dunders are
        public at class level: they are protocol).
        """
        module = self.module_of(name)
        if module is None:
            return False
        if any(seg.startswith("_") for seg in module.split(".")):
            return False
        if name == module:
            return True
        rest = name[len(module) + 1 :].split(".")
        if rest[0].startswith("_"):
            return False
        head = self.members.get(f"{module}.{rest[0]}")
        served = head is not None and head.kind == "dynamic"  # PEP 562 names: __all__ leaves them out by design
        if module in self.declared and rest[0] not in (self.exports.get(module) or ()) and not served:
            return False
        return not any(_is_private(seg) for seg in rest[1:])

    def _public_paths(self) -> set[str]:
        public = {name for name in self.members if self.is_public(name)}
        public.update(self.aliases)
        for path in list(public):
            target = self.aliases.get(path, path if path in self.members else None)
            if target is not None and self.members[target].kind == "class":
                self._expand(path, target, public, (target,))
        return public

    def _expand(self, path: str, cls: str, out: set[str], chain: tuple[str, ...]) -> None:
        for attr, target in self._attrs.get(cls, {}).items():
            if _is_private(attr):
                continue
            sub = f"{path}.{attr}"
            out.add(sub)
            member = self.members.get(target)
            if member is not None and member.kind == "class" and target not in chain and len(chain) < 4:
                self._expand(sub, target, out, (*chain, target))

    def public_paths(self, canonical: str) -> tuple[str, ...]:
        """Public paths that lead to a canonical member, most natural first.

        Order: paths that reach it without inheritance, then fewest segments, then shortest.
        """
        return self._reach.get(canonical, ())

    def _ranked(self, paths: list[str], target: str) -> tuple[str, ...]:
        return tuple(sorted(paths, key=lambda path: self._rank(path, target)))

    def _rank(self, path: str, target: str) -> tuple[int, int, int, str]:
        # A path through a subclass (`Sub.inherited`) ranks after paths through the defining class.
        via = self.canonical(path.rpartition(".")[0]) if path != target else target.rpartition(".")[0]
        owner = self.members.get(via)
        inherited = owner is not None and owner.kind == "class" and via != target.rpartition(".")[0]
        return (1 if inherited else 0, path.count("."), len(path), path)

    # -- serialisation and display --------------------------------------------------------

    def to_json(self) -> dict[str, Any]:
        return {
            "format": JSON_FORMAT,
            "library": self.library,
            "members": {name: _member_json(m) for name, m in sorted(self.members.items())},
            "aliases": dict(sorted(self.aliases.items())),
            "private_aliases": dict(sorted(self.private_aliases.items())),
            "exports": {k: (None if v is None else list(v)) for k, v in sorted(self.exports.items())},
            "declared": sorted(self.declared),
            "dynamic": sorted(self.dynamic),
            "problems": [{"module": p.module, "path": p.path, "message": p.message} for p in self.problems],
            "bound": {k: list(v) for k, v in sorted(self.bound.items())},
        }

    @classmethod
    def from_json(cls, data: Mapping[str, Any]) -> Surface:
        if not isinstance(data, Mapping):
            raise SurfaceError(f"surface JSON must be an object, got {type(data).__name__}")
        if data.get("format") != JSON_FORMAT:
            raise SurfaceError(f"surface JSON format {data.get('format')!r} is not supported; expected {JSON_FORMAT}")
        try:
            members = {name: _member_from_json(name, m) for name, m in data["members"].items()}
            exports = {k: (None if v is None else tuple(v)) for k, v in data["exports"].items()}
            problems = tuple(Problem(p["module"], p["path"], p["message"]) for p in data.get("problems", ()))
            return cls(
                library=data["library"],
                members=members,
                aliases=dict(data["aliases"]),
                exports=exports,
                dynamic=frozenset(data["dynamic"]),
                private_aliases=dict(data.get("private_aliases", {})),
                declared=frozenset(data.get("declared", ())),
                problems=problems,
                bound={k: tuple(v) for k, v in data.get("bound", {}).items()},
            )
        except KeyError as exc:
            raise SurfaceError(f"surface JSON is missing the key {exc.args[0]!r}") from None
        except (TypeError, AttributeError) as exc:
            raise SurfaceError(f"surface JSON has a value of the wrong type: {exc}") from None

    def dumps(self) -> str:
        return json.dumps(self.to_json(), indent=1, sort_keys=False)

    def render_table(self) -> str:
        """A plain-text table, one row per member: name, kind, signature, returns."""
        rows = [(m.name, m.kind + (" (deprecated)" if m.deprecated else ""), m.signature(), m.returns or "")
                for _, m in sorted(self.members.items())]
        heads = ("member", "kind", "signature", "returns")
        widths = [min(max([len(h), *(len(r[i]) for r in rows)]), cap) for i, (h, cap) in enumerate(zip(heads, (64, 24, 48, 64)))]

        def line(cells: Iterable[str]) -> str:
            return "  ".join(c.ljust(w) for c, w in zip(cells, widths)).rstrip()

        modules = sum(1 for m in self.members.values() if m.kind == "module")
        out = [f"{self.library}: {modules} modules, {len(self.members) - modules} members, "
               f"{len(self.aliases)} public re-exports, {len(self.problems)} unreadable modules",
               line(heads), line("-" * w for w in widths)]
        out.extend(line(r) for r in rows)
        if self.aliases:
            out.append("")
            out.append("re-exports:")
            out.extend(f"  {path} -> {target}" for path, target in sorted(self.aliases.items()))
        for p in self.problems:
            out.append(f"unreadable: {p.module} ({p.path}): {p.message}")
        return "\n".join(out) + "\n"


def merge_surfaces(primary: Surface, secondary: Surface) -> Surface:
    """One surface with the names of both: `primary` wins wherever both say something.

    For a library read twice, from its stubs and from its sources: stubs describe C-defined
    names a source does not show, sources keep names a stub has dropped.
    """
    taken = set(primary.members) | set(primary.aliases) | set(primary.private_aliases)
    members = {**{k: v for k, v in secondary.members.items() if k not in taken}, **primary.members}
    aliases = {**{k: v for k, v in secondary.aliases.items() if k not in taken}, **primary.aliases}
    private = {**{k: v for k, v in secondary.private_aliases.items() if k not in taken}, **primary.private_aliases}
    links = {**private, **aliases}

    def target(path: str) -> str | None:
        for _ in range(8):  # a re-export of a re-export: follow it to a member
            if path in members:
                return path
            if path not in links:
                return None
            path = links[path]
        return None

    aliases = {k: t for k, t in ((k, target(v)) for k, v in aliases.items()) if t is not None}
    private = {k: t for k, t in ((k, target(v)) for k, v in private.items()) if t is not None}
    return Surface(
        library=primary.library,
        members=members,
        aliases=aliases,
        exports={**secondary.exports, **primary.exports},
        dynamic=primary.dynamic | secondary.dynamic,
        private_aliases=private,
        declared=primary.declared,
        problems=primary.problems,
        # A name either side binds may be found: the union, where both know the module's names.
        bound={m: tuple(sorted({*primary.bound.get(m, ()), *secondary.bound.get(m, ())}))
               for m in primary.bound.keys() | secondary.bound.keys()
               if (m in primary.bound or m not in primary.exports) and (m in secondary.bound or m not in secondary.exports)},
    )


def _member_json(m: Member) -> dict[str, Any]:
    return {
        "kind": m.kind,
        "parameters": None if m.parameters is None else [
            {"name": p.name, "kind": p.kind, "position": p.position, "default": p.default} for p in m.parameters
        ],
        "returns": m.returns,
        "bases": list(m.bases),
        "deprecated": m.deprecated,
        "line": m.line,
        "shape": m.shape,
        "returns_self": m.returns_self,
        "returns_all": list(m.returns_all),
        "doc": m.doc,
        "annotation": m.annotation,
        **({"overloads": [o.to_json() for o in m.overloads]} if m.overloads else {}),
        **({"items": m.items} if m.items else {}),
        **({"wraps_owner": True} if m.wraps_owner else {}),
        **({"returns_var": m.returns_var} if m.returns_var else {}),
        **({"binds": [list(b) for b in m.binds]} if m.binds else {}),
    }


def _member_from_json(name: str, d: Mapping[str, Any]) -> Member:
    if d["kind"] not in MEMBER_KINDS:
        raise SurfaceError(f"surface JSON member {name!r} has unknown kind {d['kind']!r}")
    params = d["parameters"]
    return Member(
        name=name,
        kind=d["kind"],
        parameters=None if params is None else tuple(
            Parameter(p["name"], p["kind"], p["position"], p["default"]) for p in params
        ),
        returns=d["returns"],
        bases=tuple(d["bases"]),
        deprecated=d["deprecated"],
        line=int(d["line"]),
        shape=d.get("shape", ""),
        returns_self=bool(d.get("returns_self", False)),
        returns_all=tuple(d.get("returns_all", ())),
        doc=d.get("doc", ""),
        annotation=d.get("annotation", ""),
        overloads=tuple(Overload.from_json(o) for o in d.get("overloads", ())),
        items=d.get("items"),
        wraps_owner=bool(d.get("wraps_owner", False)),
        returns_var=d.get("returns_var", ""),
        binds=tuple((str(k), str(v)) for k, v in d.get("binds", ())),
    )


def linearize(cls: str, orders: list[tuple[str, ...]], bases: list[str]) -> tuple[str, ...]:
    """The C3 order of `cls` from its bases' orders; a depth-first order where Python would
    refuse the class (an inconsistent hierarchy), so that look-ups still work."""
    merged = c3_merge(cls, [*orders, tuple(bases)])
    if merged is not None:
        return merged
    seen: dict[str, None] = {cls: None}
    for order in orders:
        seen.update(dict.fromkeys(order))
    return tuple(seen)


def c3_merge(name: str, base_orders: list[tuple[str, ...]]) -> tuple[str, ...] | None:
    """C3 linearisation (as Python computes `__mro__`); None when the bases are inconsistent."""
    seqs = [list(s) for s in base_orders if s]
    out = [name]
    while seqs:
        for seq in seqs:
            head = seq[0]
            if not any(head in s[1:] for s in seqs):
                break
        else:
            return None
        out.append(head)
        seqs = [s[1:] if s[0] == head else s for s in seqs]
        seqs = [s for s in seqs if s]
    return tuple(out)


def class_mros(members: Mapping[str, Member]) -> dict[str, tuple[str, ...]]:
    """C3 order over library-internal bases for every class; outside bases are left out."""
    done: dict[str, tuple[str, ...]] = {}

    def visit(cls: str, active: frozenset[str]) -> tuple[str, ...]:
        if cls in done:
            return done[cls]
        bases = [b for b in members[cls].bases if b in members and members[b].kind == "class" and b not in active]
        orders = [visit(b, active | {cls}) for b in bases]
        merged = linearize(cls, orders, bases)
        done[cls] = merged
        return merged

    for name, member in members.items():
        if member.kind == "class":
            visit(name, frozenset())
    return done
