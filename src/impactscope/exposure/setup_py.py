"""setup.py, read with libcst and never run: literal install_requires, extras_require, python_requires."""

from __future__ import annotations

import libcst as cst
from libcst.metadata import MetadataWrapper, PositionProvider

from impactscope.exposure.reader import Reader


class _SetupScan(cst.CSTVisitor):
    """Collects module-level literal bindings, names changed elsewhere, and setup() calls."""

    def __init__(self) -> None:
        self.bindings: dict[str, list[cst.BaseExpression]] = {}
        self.changed: set[str] = set()
        self.calls: list[cst.Call] = []
        self._depth = 0

    def visit_FunctionDef(self, node: cst.FunctionDef) -> None:
        self._depth += 1

    def leave_FunctionDef(self, original_node: cst.FunctionDef) -> None:
        self._depth -= 1

    def visit_ClassDef(self, node: cst.ClassDef) -> None:
        self._depth += 1

    def leave_ClassDef(self, original_node: cst.ClassDef) -> None:
        self._depth -= 1

    def visit_Assign(self, node: cst.Assign) -> None:
        for target in node.targets:
            if isinstance(target.target, cst.Name):
                if self._depth == 0:
                    self.bindings.setdefault(target.target.value, []).append(node.value)
                else:
                    self.changed.add(target.target.value)
            else:
                for name in _names_in(target.target):
                    self.changed.add(name)

    def visit_AugAssign(self, node: cst.AugAssign) -> None:
        self.changed.update(_names_in(node.target))

    def visit_AnnAssign(self, node: cst.AnnAssign) -> None:
        self.changed.update(_names_in(node.target))

    def visit_Call(self, node: cst.Call) -> None:
        func = node.func
        if isinstance(func, cst.Attribute) and isinstance(func.value, cst.Name):
            self.changed.add(func.value.value)  # REQUIRES.append(...) and friends
        if (isinstance(func, cst.Name) and func.value == "setup") or (
            isinstance(func, cst.Attribute) and func.attr.value == "setup"
        ):
            self.calls.append(node)


def _names_in(node: cst.CSTNode) -> set[str]:
    if isinstance(node, cst.Name):
        return {node.value}
    if isinstance(node, (cst.Tuple, cst.List)):
        return {n for element in node.elements for n in _names_in(element.value)}
    if isinstance(node, (cst.StarredElement, cst.Subscript)):
        return _names_in(node.value)
    return set()


def read_setup_py(path: str, reader: Reader) -> None:
    try:
        module = cst.parse_module(reader.files[path])
    except cst.ParserSyntaxError as exc:
        reader.problem(f"{path}:{exc.raw_line}: cannot parse (syntax error or Python 2); not read")
        return
    except (UnicodeDecodeError, LookupError) as exc:
        reader.problem(f"{path}: cannot decode ({exc}); not read")
        return
    wrapper = MetadataWrapper(module)
    scan = _SetupScan()
    wrapper.visit(scan)
    positions = wrapper.resolve(PositionProvider)

    def line_of(node: cst.CSTNode) -> int:
        return positions[node].start.line

    def strings(node: cst.BaseExpression, seen: frozenset[str]) -> tuple[list[tuple[str, int]], bool]:
        """Literal strings of a requirement list and whether some part of it is dynamic."""
        if isinstance(node, (cst.List, cst.Tuple)):
            found, dynamic = [], False
            for element in node.elements:
                value = element.value
                if isinstance(element, cst.Element) and isinstance(value, (cst.SimpleString, cst.ConcatenatedString)):
                    evaluated = value.evaluated_value
                    if isinstance(evaluated, str):
                        found.append((evaluated, line_of(value)))
                        continue
                dynamic = True
            return found, dynamic
        if isinstance(node, cst.Name):
            bound = scan.bindings.get(node.value, [])
            if len(bound) == 1 and node.value not in scan.changed and node.value not in seen:
                return strings(bound[0], seen | {node.value})
            return [], True
        if isinstance(node, cst.BinaryOperation) and isinstance(node.operator, cst.Add):
            left, left_dynamic = strings(node.left, seen)
            right, right_dynamic = strings(node.right, seen)
            return left + right, left_dynamic or right_dynamic
        return [], True

    def read(node: cst.BaseExpression, table: str, call_line: int) -> None:
        found, dynamic = strings(node, frozenset())
        for text, line in found:
            reader.add_requirement(text.strip(), f"{path}:{line}")
        if dynamic:
            how = "partly dynamic; only its literal strings were read" if found else "dynamic; not read"
            reader.problem(f"{path}:{call_line}: {table} is {how}")

    for call in scan.calls:
        call_line = line_of(call)
        keywords = {arg.keyword.value: arg.value for arg in call.args if arg.keyword is not None}
        python = keywords.get("python_requires")
        if isinstance(python, (cst.SimpleString, cst.ConcatenatedString)) and isinstance(python.evaluated_value, str):
            reader.add_python(python.evaluated_value.strip(), f"{path}:{line_of(python)}")
        if "install_requires" in keywords:
            read(keywords["install_requires"], "install_requires", call_line)
        elif any(arg.star == "**" for arg in call.args):
            reader.problem(f"{path}:{call_line}: setup() takes **keyword arguments; install_requires is dynamic; not read")
        extras = keywords.get("extras_require")
        if isinstance(extras, cst.Dict):
            for element in extras.elements:
                if isinstance(element, cst.DictElement):
                    key = element.key
                    label = (
                        f"extras_require[{key.evaluated_value!r}]"
                        if isinstance(key, cst.SimpleString)
                        else "extras_require"
                    )
                    read(element.value, label, call_line)
                else:
                    reader.problem(f"{path}:{call_line}: extras_require is partly dynamic")
        elif extras is not None:
            reader.problem(f"{path}:{call_line}: extras_require is dynamic; not read")
