"""Expressions: names, attribute chains, subscripts, literals, comprehensions and lambdas, each
to the value it is known to be; references to the library are collected on the way."""

from __future__ import annotations

import libcst as cst

from impactscope.resolve.arguments import fact_of, string_keys
from impactscope.resolve.calls import BINARY, COMPARISON, UNARY, instance_of
from impactscope.resolve.definitions import all_params
from impactscope.resolve.overloads import UNKNOWN_FACT, Fact
from impactscope.resolve.receivers import Receiver, ThroughSuper
from impactscope.resolve.refs import CallShape
from impactscope.resolve.scopes import Scope
from impactscope.resolve.values import (
    UNKNOWN,
    Display,
    Foreign,
    Inst,
    Items,
    NOT_LIBRARY,
    Lib,
    OneOf,
    ProjMod,
    Super,
    Tup,
    UserClass,
    UserFunc,
    UserInst,
    Value,
    item_of,
    either,
    join,
    opened,
    plain,
)
from impactscope.resolve.walk import Walk


_COMPREHENSIONS = {"ListComp": "list", "SetComp": "set", "DictComp": "dict", "GeneratorExp": "generator"}


class Expressions(Walk):
    def expr(
        self, node: cst.BaseExpression, scope: Scope, record: bool = True, context: str = "use",
        call: CallShape | None = None,
    ) -> Value:
        """The value of `node`. `call` is given when `node` is called: the references it yields
        itself (not those of its receiver or arguments) record how."""
        if isinstance(node, cst.Name):
            return self._name(node, scope, record, context, call)
        if isinstance(node, cst.Attribute):
            inner_chain = isinstance(node.value, (cst.Name, cst.Attribute))
            receiver = self.expr(node.value, scope, record=not inner_chain)
            return self.attribute_ref(node, receiver, scope, record, context, call)
        if isinstance(node, cst.Call):
            return self.call(node, scope)
        if isinstance(node, (cst.SimpleString, cst.Integer, cst.Float, cst.Imaginary, cst.Ellipsis)):
            return Foreign("literal")
        if isinstance(node, cst.Tuple) and not any(isinstance(el, cst.StarredElement) for el in node.elements):
            return Tup(tuple(self.expr(el.value, scope) for el in node.elements))
        if isinstance(node, cst.ConcatenatedString):
            # A chain `'a' 'b' 'c' ...` nests one node per part: walked in a loop, not recursively,
            # or a long one (pydoc_data/topics.py has hundreds of parts) exhausts the stack.
            part: cst.BaseExpression = node
            while isinstance(part, cst.ConcatenatedString):
                if isinstance(part.left, cst.FormattedString):
                    self.generic(part.left, scope)
                part = part.right
            if isinstance(part, cst.FormattedString):
                self.generic(part, scope)
            return Foreign("literal")
        if isinstance(node, (cst.List, cst.Set)) and all(type(el) is cst.Element for el in node.elements):
            kind = "list" if isinstance(node, cst.List) else "set"
            return Display("literal", kind, tuple(self.expr(el.value, scope) for el in node.elements))
        if isinstance(node, cst.Dict) and all(isinstance(el, cst.DictElement) for el in node.elements):
            values = []
            for el in node.elements:
                self.expr(el.key, scope)  # type: ignore[union-attr]
                values.append(self.expr(el.value, scope))
            return Display("literal", "dict", tuple(values), keys=string_keys(node))
        if isinstance(node, (cst.FormattedString, cst.List, cst.Tuple, cst.Set, cst.Dict)):
            self.generic(node, scope)
            return Foreign("literal")
        if isinstance(node, (cst.ListComp, cst.SetComp, cst.DictComp, cst.GeneratorExp)):
            item = self.comprehension(node, scope)
            # Every item is what the element gives: a library instance is kept, as in a display,
            # so that `concat([t.copy() for t in ts], ...)` can tell overloads apart.
            return Display("literal", _COMPREHENSIONS[type(node).__name__], (item,) if isinstance(item, (Inst, OneOf)) else ())
        if isinstance(node, cst.Lambda):
            self.lambda_expr(node, scope)
            return Foreign("lambda")
        if isinstance(node, cst.Subscript):
            return self.subscript(node, scope)
        if isinstance(node, cst.BinaryOperation) and type(node.operator).__name__ in BINARY:
            left, right = self.expr(node.left, scope), self.expr(node.right, scope)
            return self.operator(BINARY[type(node.operator).__name__], left, right, node.left, node.right)
        if isinstance(node, cst.Comparison) and len(node.comparisons) == 1:
            left = self.expr(node.left, scope)
            target = node.comparisons[0]
            right = self.expr(target.comparator, scope)
            dunders = COMPARISON.get(type(target.operator).__name__)
            if dunders is None:
                return Foreign("literal")  # `in`, `is`: a bool (the Language Reference, "Comparisons")
            return self.operator(dunders, left, right, node.left, target.comparator)
        if isinstance(node, cst.UnaryOperation):
            operand = self.expr(node.expression, scope)
            dunder = UNARY.get(type(node.operator).__name__)
            if dunder is None:
                return Foreign("literal")  # `not x` is a bool
            return self.call_dunder(operand.cls, dunder) if isinstance(operand, Inst) else UNKNOWN
        if isinstance(node, cst.IfExp):
            self.expr(node.test, scope)
            return either(self.expr(node.body, scope), self.expr(node.orelse, scope))
        if isinstance(node, cst.BooleanOperation):
            return either(self.expr(node.left, scope), self.expr(node.right, scope))
        if isinstance(node, cst.NamedExpr):
            value = self.expr(node.value, scope)
            target_scope = scope
            while target_scope.kind == "comprehension" and target_scope.parent is not None:
                target_scope = target_scope.parent
            self.assign(node.target, value, target_scope)
            return value
        self.generic(node, scope)
        return UNKNOWN

    def subscript(self, node: cst.Subscript, scope: Scope) -> Value:
        """`x[key]`: for a library instance, what the library's `__getitem__` is typed to return
        (column selection, `.loc[...]` indexers); anything else is not known."""
        receiver = plain(self.expr(node.value, scope))
        index: tuple[cst.BaseExpression, Value] | None = None  # `x[key]`: the key and its value
        parts: list[Value | None] = []  # each part's value (None for a slice)
        for element in node.slice:
            if isinstance(element.slice, cst.Index) and element.slice.star is None:
                parts.append(self.expr(element.slice.value, scope))
                if len(node.slice) == 1:
                    index = element.slice.value, parts[-1]
            else:
                parts.append(None)
                self.generic(element, scope)

        def key() -> tuple[list[Fact], dict[str, Fact]]:
            if len(node.slice) > 1:
                return [Fact(builtin="tuple")], {}  # `x[a, b]` passes one tuple
            if isinstance(node.slice[0].slice, cst.Slice):
                return [Fact(builtin="slice")], {}
            return [fact_of(*index) if index is not None else UNKNOWN_FACT], {}

        if isinstance(receiver, Inst):
            getitem = f"{receiver.cls}.__getitem__"
            typed = self.q.model.returns(getitem)
            if typed is not None:
                return opened(Inst(typed), receiver.open)
            picked = self.pick_overload(getitem, key)
            if picked is not None:
                return opened(picked, receiver.open)
            outcomes = self.q.model.returns_all(getitem)
            if not outcomes and self._keeps_dimensions(node, parts) and self.q.model.kind(getitem) is not None:
                # Nothing types the subscript, but its key keeps every dimension: a slice of a
                # sequence is a sequence of the same type (the Language Reference, "The standard
                # type hierarchy"), and array libraries keep an axis for a slice or a list of
                # labels (NumPy's indexing guide, from memory). An indexer built around an
                # instance (`df.loc[:t]`) gives the instance's class.
                return Inst(receiver.over or receiver.cls, open=receiver.open)
            return opened(instance_of(outcomes), receiver.open)
        if isinstance(receiver, Items) and len(node.slice) == 1:
            # A slice of the list is a list of the same items; an index, one item.
            return receiver if isinstance(node.slice[0].slice, cst.Slice) else Inst(receiver.cls)
        if isinstance(receiver, Tup) and len(node.slice) == 1 and isinstance(node.slice[0].slice, cst.Index):
            key = node.slice[0].slice.value
            if isinstance(key, cst.Integer) and int(key.value, 0) < len(receiver.items):
                return receiver.items[int(key.value, 0)]
        return UNKNOWN

    @staticmethod
    def _keeps_dimensions(node: cst.Subscript, parts: list[Value | None]) -> bool:
        """Every part of the key is a slice (`x[a:b]`, `x[:, 1:]`) or a list (`x[["a", "b"]]`, a name
        bound to a list display): no part picks a single item."""
        for element, value in zip(node.slice, parts):
            if isinstance(element.slice, cst.Slice):
                continue
            if isinstance(value, Display) and value.kind == "list":
                continue
            return False
        return True

    def _name(self, node: cst.Name, scope: Scope, record: bool, context: str, call: CallShape | None) -> Value:
        if node.value == "None":
            return UNKNOWN  # a placeholder that is usually rebound later: it tells nothing
        if node.value in ("True", "False"):
            return Foreign("literal")
        value = self.lookup(scope, node.value)
        if record and isinstance(value, Lib):
            self._ref(node, context, name=value.name, receiver=value.name.rpartition(".")[0], bound=value.bound,
                      call=call)
        return value

    def attribute_ref(
        self, node: cst.Attribute, receiver: Value, scope: Scope, record: bool = True, context: str = "use",
        call: CallShape | None = None,
    ) -> Value:
        """`receiver.attr` read at `node`: its value, and the references it makes."""
        attr = node.attr.value
        receiver = plain(receiver)
        value, how = self.attribute(receiver, attr)
        named = how if isinstance(value, Inst) else None  # a typed attribute: its own path, kept
        if record and (isinstance(value, Lib) or named is not None):
            name = value.name if isinstance(value, Lib) else f"{named}.{attr}"
            bound = value.bound if isinstance(value, Lib) else True
            receiver_text = how if isinstance(value, Lib) else f"<{named}>"
            self._ref(node.attr, context, name=name, receiver=receiver_text, bound=bound, call=call)
        if attr not in self.q.names:
            return value
        if isinstance(receiver, OneOf) and not receiver.member:
            among = self._among(receiver.classes, attr)
            self._ref(node.attr, context, attr=attr, receiver=f"<{'|'.join(among)}>", among=among, call=call)
            if not receiver.open:
                return value
        if isinstance(receiver, Inst) and (among := self._among((receiver.cls,), attr)) != (receiver.cls,):
            # A value typed as a base class is an instance of the base or of a subclass; a name only
            # subclasses have says it is one of them (or a class nobody here knows).
            self._ref(node.attr, context, attr=attr, receiver=f"<{receiver.cls}>", among=among, call=call)
        if (receiver is UNKNOWN or self._untyped(receiver) or self._unlinked(value)
                or (isinstance(receiver, (Inst, OneOf)) and receiver.open)):
            # Not proven to be anything in particular (an open receiver's unknown path may be any
            # class that has the name): the name alone decides.
            self._ref(node.attr, context, attr=attr, receiver="?", call=call)
        return value

    def _among(self, classes: tuple[str, ...], attr: str) -> tuple[str, ...]:
        """The classes an instance of one of `classes` may be when it has `attr`: a class that lacks
        the name (a TypeVar's bound, an abstract base) stands for its library subclasses that
        have it, or a class nobody here knows (`NOT_LIBRARY`)."""
        if not self.q.model.knows_kinds:
            return classes
        out: list[str] = []
        lacking: list[str] = []
        for cls in classes:
            if cls == NOT_LIBRARY or self.q.model.kind(f"{cls}.{attr}") is not None or any(
                    self.q.owns(cls, cc) for cc in self.q.by_name(attr)):  # the change list is the authority
                out.append(cls)
                continue
            base = self.q.model.canonical(cls)
            found = {
                owner for owner in self.q.model.owners(attr)
                if owner != base and base in self.q.model.mro(owner) and self.q.model.is_class(owner)
            }
            if not found:
                lacking.append(cls)
                continue
            # The topmost ones: a subclass of one listed owns what its ancestor owns.
            out.extend(sorted(c for c in found if not any(a in found for a in self.q.model.mro(c)[1:])))
            out.append(NOT_LIBRARY)
        # On a class that lacks the name, as do all its subclasses, the use would raise AttributeError
        # on the release the code runs on: where another class has the name, the use is that class's.
        return tuple(dict.fromkeys(out or lacking))

    def _unlinked(self, value: Value) -> bool:
        """Without the library's source a path it re-exports under another name
        (`lib.sub.f` for `lib.f`) cannot be told from another member: the name alone decides."""
        return isinstance(value, Lib) and not self.q.model.knows_kinds and not self.q.match(value.name)

    def _untyped(self, receiver: Value) -> bool:
        """A library value whose own type is not known: an attribute reached through an instance
        (a column, an attribute the source does not type) rather than a module or class path."""
        if not isinstance(receiver, Lib) or not receiver.bound:
            return False
        kind = self.q.model.kind(receiver.name)
        return kind not in ("module", "class", "method", "function", "classmethod", "staticmethod")

    def attribute(self, receiver: Value, attr: str) -> tuple[Value, Receiver]:
        """The value of `receiver.attr`, and how a pattern should name the receiver.

        An attribute of a library instance that the library types (a property, a typed
        attribute) is an instance of that type; then `how` is the receiver's class."""
        if isinstance(receiver, Lib):
            return Lib(f"{receiver.name}.{attr}", bound=receiver.bound, open=receiver.open), receiver.name
        if isinstance(receiver, Inst):
            dotted = f"{receiver.cls}.{attr}"
            typed = self.q.model.attribute_type(dotted)
            if typed is not None:
                over = receiver.cls if self.q.model.wraps_owner(dotted) else ""
                return opened(Inst(typed, over=over), receiver.open), receiver.cls
            if (self.q.model.knows_kinds and attr not in self.q.names and not attr.startswith("__")
                    and self.q.model.kind(dotted) is None):
                # The Language Reference, "Customizing attribute access": __getattr__ answers a
                # name the class does not have (a column read as an attribute).
                served = self.q.model.returns(f"{receiver.cls}.__getattr__")
                if served is not None:
                    return opened(Inst(served), receiver.open), receiver.cls
            return Lib(dotted, bound=True, open=receiver.open), f"<{receiver.cls}>"
        if isinstance(receiver, OneOf):
            if receiver.member:
                return UNKNOWN, "?"
            kinds = {self.q.model.attribute_type(f"{cls}.{attr}") for cls in receiver.classes}
            if len(kinds) == 1 and None not in kinds:
                return opened(Inst(kinds.pop()), receiver.open), ""  # type: ignore[arg-type]
            return OneOf(receiver.classes, attr, open=receiver.open), ""
        if isinstance(receiver, ProjMod):
            sub = f"{receiver.name}.{attr}"
            if self.is_project_module(sub):
                return ProjMod(sub), ""
            return self.export_of(receiver.name, attr), ""
        if isinstance(receiver, (UserClass, UserInst)):
            cls = receiver if isinstance(receiver, UserClass) else receiver.cls
            found = cls.lookup(attr)
            if found is not None:
                if isinstance(receiver, UserInst) and isinstance(found, UserFunc) and found.kind == "property":
                    return self.returns_of(found), ""
                return found, ""
            bases = cls.all_lib_bases()
            if bases:
                return Lib(f"{bases[0]}.{attr}", bound=isinstance(receiver, UserInst)), f"<{bases[0]}>"
            return Foreign(None), ""
        if isinstance(receiver, Super):
            for base in receiver.cls.user_bases:
                found = base.lookup(attr)
                if found is not None:
                    return found, ""
            bases = receiver.cls.all_lib_bases()
            if bases:
                return Lib(f"{bases[0]}.{attr}", bound=True), ThroughSuper(bases[0])
            return Foreign(None), ""
        if isinstance(receiver, Foreign):
            return Foreign(f"{receiver.name}.{attr}" if receiver.name and receiver.name != "literal" else None), ""
        if isinstance(receiver, (UserFunc, Tup)):
            return Foreign(None), ""
        return UNKNOWN, "?"

    def comprehension(self, node: cst.BaseComp, scope: Scope) -> Value:
        """Read a comprehension; what its element (a dict comprehension's value) gives."""
        inner = Scope("comprehension", scope)
        clause: cst.CompFor | None = node.for_in
        first = True
        while clause is not None:
            iterated = self.expr(clause.iter, scope if first else inner)
            first = False
            self.assign(clause.target, item_of(iterated), inner)
            for cond in clause.ifs:
                self.expr(cond.test, inner)
                # The element is computed only for items that pass: `if isinstance(f, T)` narrows.
                narrowed = self._isinstance(cond.test, inner)  # type: ignore[attr-defined]
                if narrowed is not None:
                    inner.names[narrowed[0]] = narrowed[1]
            clause = clause.inner_for_in
        if isinstance(node, cst.DictComp):
            self.expr(node.key, inner)
            return self.expr(node.value, inner)
        return self.expr(node.elt, inner)  # type: ignore[attr-defined]

    def lambda_expr(self, node: cst.Lambda, scope: Scope) -> None:
        for p in (*node.params.posonly_params, *node.params.params, *node.params.kwonly_params):
            if p.default is not None:
                self.expr(p.default, scope)
        inner = Scope("function", scope)
        for p in all_params(node.params):
            inner.names[p.name.value] = UNKNOWN
        self.expr(node.body, inner)

    def generic(self, node: cst.CSTNode, scope: Scope) -> None:
        """Evaluate every expression below a node this walk has no special rule for."""
        for child in node.children:
            if isinstance(child, cst.BaseExpression):
                self.expr(child, scope)
            elif isinstance(child, (cst.BaseStatement, cst.BaseSmallStatement)):
                self.stmt(child, scope)
            elif isinstance(child, cst.BaseSuite):
                self.suite(child, scope)
            else:
                self.generic(child, scope)
