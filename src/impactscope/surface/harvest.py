"""Harvest the deprecations a library already announces in its own source.

Three signals, all read statically: a `warnings.warn(..., DeprecationWarning |
PendingDeprecationWarning | FutureWarning)` call in a member's body; a PEP 702 `@deprecated("msg")`
decorator (from `warnings` or `typing_extensions`); and the library's own deprecation helpers. A
helper is a function that issues such a warning with a message it is given (a decorator factory,
a `warn_deprecated(what, instead)` function); a decorator or function that calls a helper counts
too, one level deep. Members that call or are wrapped by a helper are deprecated, as are
class-level aliases made by one (`failUnless = _deprecate(assertTrue)`).

What a deprecation will become is not in the source, so every entry's kind is a guess: `removed`,
or `parameter-removed` when the warning only fires when a particular parameter is passed.
"""

from __future__ import annotations

import ast
import string
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from pathlib import Path

from .build import ParsedModule, discover_modules, dotted_name, parse_modules, surface_from_parsed
from .compare import DraftChange, render_draft as _render
from .model import Surface

CATEGORIES = frozenset({"DeprecationWarning", "PendingDeprecationWarning", "FutureWarning"})
_HINTS = ("deprecat", "warn")
_GUESS = "the kind is a guess"


@dataclass(frozen=True)
class HarvestedChange:
    """A deprecation found in the library's source, as a draft change-list entry."""

    member: str  # the most natural public path
    kind: str
    note: str
    certainty: str
    why: str
    module: str
    line: int
    mechanism: str  # "warnings.warn", "@deprecated (PEP 702)", or "helper <canonical name>"
    replacement: str | None = None
    parameter: str | None = None
    position: int | None = None

    def to_draft(self) -> DraftChange:
        return DraftChange(self.member, self.kind, self.note, self.certainty, self.why,
                           replacement=self.replacement, parameter=self.parameter, position=self.position)


def render_draft(changes: Iterable[HarvestedChange], library: str, release: str | None = None) -> str:
    """The harvested deprecations as a change-list TOML draft."""
    return _render((c.to_draft() for c in changes), library, release, origin="harvesting deprecation warnings")


# -- messages -------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Template:
    """A warning message: literal text and holes (expressions filled in at run time)."""

    parts: tuple[str | ast.expr, ...]

    @property
    def literal(self) -> bool:
        return all(isinstance(p, str) for p in self.parts)

    def render(self, given: dict[str, ast.expr] | None = None) -> str:
        out = []
        for part in self.parts:
            if isinstance(part, str):
                out.append(part)
                continue
            value = _fill(part, given or {})
            out.append(value if value is not None else "{" + ast.unparse(part) + "}")
        return "".join(out)


def _fill(hole: ast.expr, given: dict[str, ast.expr]) -> str | None:
    """A hole's text when it names a helper parameter the call site passes a literal (or a name) for."""
    if isinstance(hole, ast.Name) and hole.id in given:
        arg = given[hole.id]
        if isinstance(arg, ast.Constant) and isinstance(arg.value, str):
            return arg.value
    if isinstance(hole, ast.Attribute) and hole.attr == "__name__" and isinstance(hole.value, ast.Name) and hole.value.id in given:
        text = dotted_name(given[hole.value.id])
        if text is not None:
            return text.rpartition(".")[2]
    return None


def _template(node: ast.expr | None) -> _Template | None:
    if node is None:
        return None
    if isinstance(node, ast.Constant) and isinstance(node.value, str):
        return _Template((node.value,))
    if isinstance(node, ast.JoinedStr):
        parts: list[str | ast.expr] = []
        for v in node.values:
            if isinstance(v, ast.Constant):
                parts.append(str(v.value))
            elif isinstance(v, ast.FormattedValue):
                parts.append(v.value)
        return _Template(tuple(parts))
    if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Add):
        left, right = _template(node.left), _template(node.right)
        return _Template(left.parts + right.parts) if left and right else left or right
    if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Mod):
        return _template(node.left)
    if (isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute) and node.func.attr == "format"
            and isinstance(node.func.value, ast.Constant) and isinstance(node.func.value.value, str)):
        parts = []
        auto = 0
        try:
            fields = list(string.Formatter().parse(node.func.value.value))
        except ValueError:
            return _Template((node.func.value.value,))
        for text, field, _, _ in fields:
            parts.append(text)
            if field is None:
                continue
            key = field.split(".")[0].split("[")[0]
            if key == "":
                key, auto = str(auto), auto + 1
            arg = (node.args[int(key)] if key.isdigit() and int(key) < len(node.args)
                   else next((k.value for k in node.keywords if k.arg == key), None))
            parts.append(arg if arg is not None else "{" + field + "}")
        return _Template(tuple(parts))
    if isinstance(node, ast.Name):
        return _Template((node,))
    return _Template((node,))


# -- the functions of a module --------------------------------------------------------------


@dataclass(frozen=True)
class _Site:
    """A call inside a function: the conditions it sits under and whether it is in a nested def."""

    call: ast.Call
    conditions: tuple[ast.expr, ...]
    nested: bool


@dataclass(frozen=True)
class _Unit:
    """A function or method of the library, with the calls in its body."""

    path: str  # canonical
    module: str
    cls: str | None
    node: ast.FunctionDef | ast.AsyncFunctionDef
    sites: tuple[_Site, ...]

    @property
    def arg_names(self) -> list[str]:
        a = self.node.args
        return [x.arg for x in (*a.posonlyargs, *a.args)] + [x.arg for x in a.kwonlyargs]

    @property
    def self_name(self) -> str | None:
        a = self.node.args
        positional = [*a.posonlyargs, *a.args]
        return positional[0].arg if self.cls is not None and positional else None


def _sites(body: Iterable[ast.AST], conditions: tuple[ast.expr, ...] = (), nested: bool = False) -> Iterator[_Site]:
    for node in body:
        yield from _visit(node, conditions, nested)


def _visit(node: ast.AST, conditions: tuple[ast.expr, ...], nested: bool) -> Iterator[_Site]:
    if isinstance(node, ast.Call):
        yield _Site(node, conditions, nested)
    if isinstance(node, ast.If):
        yield from _visit(node.test, conditions, nested)
        yield from _sites([*node.body, *node.orelse], (*conditions, node.test), nested)
        return
    if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)):
        nested = True
    yield from _sites(ast.iter_child_nodes(node), conditions, nested)


@dataclass(frozen=True)
class _Assignment:
    """`a = b = helper(x)` at module or class level."""

    names: tuple[str, ...]
    call: ast.Call
    scope: str
    module: str
    in_class: bool
    line: int


class _Module:
    """What harvest needs of one module: its functions, helper-made assignments and imports."""

    def __init__(self, parsed: ParsedModule) -> None:
        self.name = parsed.file.name
        self.units: list[_Unit] = []
        self.assignments: list[_Assignment] = []
        self.top_calls: list[ast.Call] = []
        self.imports: dict[str, str] = {}
        tree = parsed.tree
        for st in tree.body:
            self._import(st)
        for node in ast.walk(tree):  # function-local `import warnings` too
            self._import(node)
        self._block(tree.body, self.name, False)

    def _import(self, node: ast.AST) -> None:
        if isinstance(node, ast.Import):
            for a in node.names:
                name = a.asname or a.name.partition(".")[0]
                self.imports.setdefault(name, a.name if a.asname else name)
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            for a in node.names:
                self.imports.setdefault(a.asname or a.name, f"{node.module}.{a.name}")

    def _block(self, body: list[ast.stmt], scope: str, in_class: bool) -> None:
        for st in body:
            if isinstance(st, (ast.FunctionDef, ast.AsyncFunctionDef)):
                self.units.append(_Unit(f"{scope}.{st.name}", self.name, scope if in_class else None, st,
                                        tuple(_sites(st.body))))
            elif isinstance(st, ast.ClassDef):
                self._block(st.body, f"{scope}.{st.name}", True)
            elif isinstance(st, ast.Assign) and isinstance(st.value, ast.Call):
                names = tuple(t.id for t in st.targets if isinstance(t, ast.Name))
                if names:
                    self.assignments.append(_Assignment(names, st.value, scope, self.name, in_class, st.lineno))
            elif isinstance(st, ast.Expr) and isinstance(st.value, ast.Call) and not in_class:
                self.top_calls.append(st.value)
            elif isinstance(st, ast.If):
                self._block(st.body, scope, in_class)
                self._block(st.orelse, scope, in_class)
            elif isinstance(st, (ast.Try, ast.With, ast.AsyncWith, ast.For, ast.While)) or type(st).__name__ == "TryStar":
                for field in ("body", "orelse", "finalbody"):
                    self._block(getattr(st, field, []), scope, in_class)
                for handler in getattr(st, "handlers", []):
                    self._block(handler.body, scope, in_class)


# -- finding deprecations ---------------------------------------------------------------------


@dataclass(frozen=True)
class _Warning:
    site: _Site
    template: _Template | None


class _Harvester:
    def __init__(self, surface: Surface, parsed: Iterable[ParsedModule]) -> None:
        self.surface = surface
        self.modules = [_Module(p) for p in parsed]
        self.units = {u.path: (m, u) for m in self.modules for u in m.units}
        self.warnings: dict[str, list[_Warning]] = {
            path: list(self._warnings(m, u)) for path, (m, u) in self.units.items()
        }
        self.helpers: dict[str, _Template | None] = {}
        self.conditional: set[str] = set()  # helpers that themselves warn only under a condition
        for path, found in self.warnings.items():
            if found and self._helper_like(self.units[path][1], found):
                self.helpers[path] = found[0].template
                if all(w.site.conditions for w in found):
                    self.conditional.add(path)
        # One level further: decorators and functions that call a helper are helpers too.
        second: dict[str, _Template | None] = {}
        for path, (m, u) in self.units.items():
            if path in self.helpers or not self._hinted(u):
                continue
            for site in u.sites:
                callee = self._callee(m, u.cls, u.self_name, site.call.func)
                if callee in self.helpers:
                    second[path] = self._through(self.helpers[callee], site.call, callee)
                    if callee in self.conditional or site.conditions:
                        self.conditional.add(path)
                    break
        self.helpers.update(second)
        self.out: dict[tuple[str, str, str | None], HarvestedChange] = {}

    # recognising warnings and helpers ---------------------------------------------------

    def _is_warn(self, module: _Module, func: ast.expr) -> bool:
        text = dotted_name(func)
        if text is None:
            return False
        first, _, rest = text.partition(".")
        base = module.imports.get(first)
        full = ".".join(filter(None, (base, rest))) if base else text
        return full == "warnings.warn"

    def _is_category(self, module: _Module, unit: _Unit | None, node: ast.expr | None) -> bool:
        text = dotted_name(node)
        if text is None:
            return False
        if text in CATEGORIES or (text.startswith("builtins.") and text[9:] in CATEGORIES):
            return True
        if unit is not None and isinstance(node, ast.Name):
            # `def _warn(msg, category=DeprecationWarning): warnings.warn(msg, category)`
            a = unit.node.args
            positional = [*a.posonlyargs, *a.args]
            pairs = list(zip(positional[len(positional) - len(a.defaults):], a.defaults)) + list(zip(a.kwonlyargs, a.kw_defaults))
            for arg, default in pairs:
                if arg.arg == node.id and default is not None:
                    return self._is_category(module, None, default)
        cls = self.surface.canonical(f"{module.name}.{text}")
        member = self.surface.members.get(cls)
        if member is None or member.kind != "class":
            return False
        return any(b.rpartition(".")[2] in CATEGORIES for k in self.surface.mro(cls)
                   for b in self.surface.members[k].bases if b not in self.surface.members)

    def _warnings(self, module: _Module, unit: _Unit) -> Iterator[_Warning]:
        for site in unit.sites:
            call = site.call
            if not self._is_warn(module, call.func):
                continue
            found = self._deprecation(module, unit, call)
            if found is not None:
                yield _Warning(site, found)

    def _deprecation(self, module: _Module, unit: _Unit | None, call: ast.Call) -> _Template | None:
        """The message template of a deprecation `warn(...)` call; None if it is another category.

        A message may be the warning itself: `warn(FutureWarning("msg"))` takes its category.
        """
        message = call.args[0] if call.args else next((k.value for k in call.keywords if k.arg == "message"), None)
        category = call.args[1] if len(call.args) > 1 else next((k.value for k in call.keywords if k.arg == "category"), None)
        if category is None and isinstance(message, ast.Call) and self._is_category(module, unit, message.func):
            return _template(message.args[0] if message.args else None) or _Template(())
        if not self._is_category(module, unit, category):
            return None
        return _template(message) or _Template(())

    @staticmethod
    def _hinted(unit: _Unit) -> bool:
        lowered = unit.node.name.lower()
        return any(h in lowered for h in _HINTS) or any(s.nested for s in unit.sites)

    def _helper_like(self, unit: _Unit, found: list[_Warning]) -> bool:
        """A helper warns with a message it is given, and looks like one (name, wrapper, or private and unconditional)."""
        if all(w.template is not None and w.template.literal for w in found):
            return False
        lowered = unit.node.name.lower()
        if any(h in lowered for h in _HINTS) or any(w.site.nested for w in found):
            return True
        return unit.node.name.startswith("_") and any(not w.site.conditions for w in found)

    def _callee(self, module: _Module, cls: str | None, self_name: str | None, func: ast.expr) -> str | None:
        text = dotted_name(func)
        if text is None:
            return None
        first, _, rest = text.partition(".")
        if cls is not None and self_name is not None and first == self_name:
            return self.surface.canonical(f"{cls}.{rest}") if rest else None
        if cls is not None and self.surface.member(f"{cls}.{text}") is not None:
            return self.surface.canonical(f"{cls}.{text}")
        return self.surface.canonical(f"{module.name}.{text}")

    def _through(self, template: _Template | None, call: ast.Call, helper: str) -> _Template | None:
        """The helper's message with this call's arguments filled in."""
        if template is None or helper not in self.units:
            return template
        unit = self.units[helper][1]
        given = self._arguments(unit, call)
        parts: list[str | ast.expr] = []
        for part in template.parts:
            if isinstance(part, str):
                parts.append(part)
                continue
            filled = _fill(part, given)
            if filled is not None:
                parts.append(filled)
            elif isinstance(part, ast.Name) and part.id in given:
                parts.append(given[part.id])  # still a hole, but now the caller's expression
            else:
                parts.append(part)
        return _Template(tuple(parts))

    @staticmethod
    def _arguments(unit: _Unit, call: ast.Call) -> dict[str, ast.expr]:
        names = [x.arg for x in (*unit.node.args.posonlyargs, *unit.node.args.args)]
        if unit.self_name is not None and isinstance(call.func, ast.Attribute):
            names = names[1:]  # called as self.helper(...)
        given = dict(zip(names, call.args))
        given.update({k.arg: k.value for k in call.keywords if k.arg})
        return given

    # entries ----------------------------------------------------------------------------

    def run(self) -> list[HarvestedChange]:
        for name, member in self.surface.members.items():
            if member.deprecated is not None:
                self._add(name, name.rpartition(".")[0] if member.kind != "module" else name, member.line,
                          "@deprecated (PEP 702)", member.deprecated or f"{name} is deprecated", "high",
                          "decorated with PEP 702 @deprecated")
        for module in self.modules:
            for unit in module.units:
                self._unit(module, unit)
            for assignment in module.assignments:
                self._assignment(module, assignment)
            for call in module.top_calls:
                self._top_call(module, call)
        return sorted(self.out.values(), key=lambda c: (c.member, c.kind, c.parameter or ""))

    def _add(self, canonical: str, module: str, line: int, mechanism: str, note: str, certainty: str, why: str,
             *, parameter: str | None = None, position: int | None = None, replacement: str | None = None,
             via: str | None = None) -> None:
        paths = self.surface.public_paths(canonical)
        if not paths:
            return  # private: not part of what downstream code may use
        if via in self.conditional:
            certainty, why = "low", f"{why}, which itself warns only under a condition"
        kind = "parameter-removed" if parameter is not None else "removed"
        change = HarvestedChange(paths[0], kind, note, certainty, f"{why}; {_GUESS}", self.surface.module_of(module) or module,
                                 line, mechanism, replacement=replacement, parameter=parameter, position=position)
        self.out.setdefault((change.member, kind, parameter), change)

    def _unit(self, module: _Module, unit: _Unit) -> None:
        if unit.path in self.helpers:
            return
        target = unit.path
        name = unit.node.name
        if unit.cls is not None and name in ("__init__", "__new__"):
            target = unit.cls  # a warning on construction deprecates the class
        if unit.cls is None and name == "__getattr__":
            self._module_getattr(module, unit)
            return
        # Direct warnings first, then helper calls, then helper decorators.
        found: list[tuple[_Site | None, _Template | None, str, str | None]] = [
            (w.site, w.template, "warnings.warn", None) for w in self.warnings.get(unit.path, ())]
        for site in unit.sites:
            callee = self._callee(module, unit.cls, unit.self_name, site.call.func)
            if callee is not None and callee in self.helpers and callee != unit.path:
                found.append((site, self._through(self.helpers[callee], site.call, callee), f"helper {callee}", callee))
        for deco in unit.node.decorator_list:
            func = deco.func if isinstance(deco, ast.Call) else deco
            callee = self._callee(module, unit.cls, None, func)
            if callee is not None and callee in self.helpers:
                template = self._through(self.helpers[callee], deco, callee) if isinstance(deco, ast.Call) else self.helpers[callee]
                found.append((None, template, f"helper {callee} (decorator)", callee))
        if not found:
            return
        found.sort(key=lambda f: (f[0] is not None and bool(f[0].conditions), f[2] != "warnings.warn"))
        first, template, mechanism, via = found[0]
        note = _note(template, f"{target} is deprecated")
        direct = mechanism == "warnings.warn"
        if first is None or not first.conditions:
            self._add(target, module.name, unit.node.lineno, mechanism, note, "high" if direct else "medium",
                      "calls warnings.warn with a deprecation category" if direct else f"uses the deprecation {mechanism}", via=via)
            return
        parameter = self._parameter(unit, first.conditions)
        why = f"warns only under a condition ({ast.unparse(first.conditions[-1])})"
        if parameter is None:
            self._add(target, module.name, unit.node.lineno, mechanism, note, "low", why, via=via)
            return
        position = next((p.position for p in self.surface.parameters(target) or () if p.name == parameter), None)
        self._add(target, module.name, unit.node.lineno, mechanism, note, "low",
                  f"{why}, which tests the parameter `{parameter}`", parameter=parameter, position=position, via=via)

    @staticmethod
    def _parameter(unit: _Unit, conditions: tuple[ast.expr, ...]) -> str | None:
        """The one parameter a warning's condition tests (`if x is not None`, `if "x" in kwargs`)."""
        a = unit.node.args
        plain = {x.arg for x in (*a.posonlyargs, *a.args, *a.kwonlyargs)} - {unit.self_name}
        var_kw = a.kwarg.arg if a.kwarg is not None else None
        keys: set[str] = set()
        names: set[str] = set()
        for test in conditions:
            for node in ast.walk(test):
                if isinstance(node, ast.Name) and node.id in plain:
                    names.add(node.id)
                elif (isinstance(node, ast.Compare) and isinstance(node.left, ast.Constant) and isinstance(node.left.value, str)
                      and len(node.ops) == 1 and isinstance(node.ops[0], (ast.In, ast.NotIn))
                      and isinstance(node.comparators[0], ast.Name) and node.comparators[0].id == var_kw):
                    keys.add(node.left.value)
        if len(keys) == 1:
            return keys.pop()
        return names.pop() if not keys and len(names) == 1 else None

    def _module_getattr(self, module: _Module, unit: _Unit) -> None:
        """PEP 562 `__getattr__` that warns for particular names: each name is deprecated."""
        a = unit.node.args
        positional = [*a.posonlyargs, *a.args]
        if not positional:
            return
        arg = positional[0].arg
        for site in unit.sites:
            callee = self._callee(module, None, None, site.call.func)
            template = None
            if self._is_warn(module, site.call.func):
                found = [w for w in self.warnings.get(unit.path, ()) if w.site.call is site.call]
                if not found:
                    continue
                template = found[0].template
            elif callee in self.helpers:
                template = self._through(self.helpers[callee], site.call, callee)
            else:
                continue
            for name in _names_tested(site.conditions, arg):
                path = f"{module.name}.{name}"
                filled = _Template(tuple(_fill(p, {arg: ast.Constant(name)}) or p if not isinstance(p, str) else p
                                         for p in template.parts)) if template is not None else None
                note = _note(filled, f"{path} is deprecated")
                self._add_path(path, module.name, site.call.lineno, "module __getattr__", note, "medium",
                               f"the module's __getattr__ warns when `{name}` is looked up")

    def _add_path(self, path: str, module: str, line: int, mechanism: str, note: str, certainty: str, why: str) -> None:
        if self.surface.member(path) is not None:
            self._add(self.surface.canonical(path), module, line, mechanism, note, certainty, why)
            return
        if any(seg.startswith("_") for seg in path.split(".")):
            return
        change = HarvestedChange(path, "removed", note, certainty, f"{why}; {_GUESS}", module, line, mechanism)
        self.out.setdefault((path, "removed", None), change)

    def _assignment(self, module: _Module, a: _Assignment) -> None:
        callee = self._callee(module, a.scope if a.in_class else None, None, a.call.func)
        if callee not in self.helpers:
            return
        template = self._through(self.helpers[callee], a.call, callee)
        original = None
        if a.call.args:
            text = dotted_name(a.call.args[0])
            if text is not None:
                found = self.surface.canonical(f"{a.scope}.{text}" if a.in_class else f"{module.name}.{text}")
                if found in self.surface.members:
                    original = found
        helper = callee.rpartition(".")[2]
        for name in a.names:
            path = f"{a.scope}.{name}"
            replacement = None
            if original is not None:
                paths = self.surface.public_paths(original)
                replacement = paths[0] if paths else original
            lead = (f"deprecated alias of {replacement or original}, made by {helper}()" if original
                    else f"made by the deprecation helper {helper}()")
            message = _note(template, "")
            note = f"{lead}: {message}" if message else lead
            self._add(self.surface.canonical(path), module.name, a.line, f"helper {callee}", note, "medium",
                      f"assigned from the deprecation helper {helper}()", replacement=replacement, via=callee)

    def _top_call(self, module: _Module, call: ast.Call) -> None:
        """A deprecation warning issued at import time deprecates the module itself."""
        template = self._deprecation(module, None, call) if self._is_warn(module, call.func) else None
        if template is None:
            return
        note = _note(template, f"{module.name} is deprecated")
        self._add(module.name, module.name, call.lineno, "warnings.warn", note, "high",
                  "the module warns when it is imported")


def _note(template: _Template | None, fallback: str) -> str:
    """A message as one line of text; when none of it is literal, say so beside the fallback."""
    if template is None:
        return fallback
    text = " ".join(template.render().split())
    literal = "".join(p for p in template.parts if isinstance(p, str)).strip()
    if literal:
        return text
    if not text:
        return fallback
    return f"{fallback} (the message is built at run time: {text})" if fallback else f"message built at run time: {text}"


def _names_tested(conditions: tuple[ast.expr, ...], arg: str) -> list[str]:
    """String constants a condition compares `arg` with: `arg == "x"`, `arg in ("x", "y")`."""
    out: list[str] = []
    for test in conditions:
        for node in ast.walk(test):
            if not (isinstance(node, ast.Compare) and isinstance(node.left, ast.Name) and node.left.id == arg and len(node.ops) == 1):
                continue
            right = node.comparators[0]
            if isinstance(node.ops[0], ast.Eq) and isinstance(right, ast.Constant) and isinstance(right.value, str):
                out.append(right.value)
            elif isinstance(node.ops[0], ast.In) and isinstance(right, (ast.Tuple, ast.List, ast.Set)):
                out.extend(e.value for e in right.elts if isinstance(e, ast.Constant) and isinstance(e.value, str))
    return out


def harvest_deprecations(source: Path | str, library: str | None = None) -> list[HarvestedChange]:
    """Deprecations the library at `source` announces in its own code (read, never run)."""
    name, files = discover_modules(Path(source), library)
    parsed, problems = parse_modules(files)
    surface = surface_from_parsed(name, parsed, problems)
    return _Harvester(surface, parsed).run()

