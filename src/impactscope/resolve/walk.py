"""What every part of the walk of one module shares: the module, the compiled query, where the
walk stands, and how a reference is collected there."""

from __future__ import annotations

from contextlib import contextmanager
from typing import TYPE_CHECKING, Iterator

import libcst as cst

from impactscope.resolve.query import Query
from impactscope.resolve.receivers import Receiver
from impactscope.resolve.refs import CallShape, Cursor, ModuleResult, Ref
from impactscope.resolve.scopes import Scope
from impactscope.resolve.values import UNKNOWN, UserFunc, Value

if TYPE_CHECKING:
    from impactscope.resolve.imports import ProjectView


class Walk:
    """The state of one module's walk. The parts (statements, bindings, imports, definitions,
    expressions, calls) are mixins over it; `evaluate.ModuleEvaluator` puts them together."""

    def __init__(
        self, query: Query, project: "ProjectView", module: str, is_package: bool, path: str, importer: str
    ) -> None:
        self.q = query
        self.importer = importer  # the package or script directory imports are looked up from
        self.project = project
        self.module = module
        self.is_package = is_package
        self.path = path
        self.result = ModuleResult()
        self.scope = Scope("module", None)
        self.at = Cursor()
        self._quiet = 0  # > 0 while a body is read only to learn what it returns
        self._recording = 0  # how many function bodies are being read and recorded
        # Whether a recorded body met a module of an import cycle still running: then the
        # module's functions are read once more when every module has run (Python runs a body
        # only when it is called, by then the cycle is complete).
        self.met_partial = False
        self.functions: list[UserFunc] = []  # the module's functions and methods, in order

    def _ref(
        self, node: cst.CSTNode, context: str, *, name: str | None = None, attr: str | None = None,
        receiver: Receiver = "", bound: bool = False, call: CallShape | None = None, import_text: str = "",
        among: tuple[str, ...] = (),
    ) -> Ref:
        ref = Ref(cell=self.at.cell, node=node, context=context, top=self.at.top, name=name, attr=attr,
                  receiver=receiver, bound=bound, call=call, import_text=import_text, handled=self.at.handled,
                  among=among)
        if not self._quiet:
            self.result.refs.append(ref)
        return ref

    def export_of(self, module: str, name: str) -> Value:
        """What a project module binds to `name`, noting a reading that met a module still running."""
        value = self.project.export(module, name)
        if value is UNKNOWN and self._recording and self.project.is_partial(module):
            self.met_partial = True
        return value

    @contextmanager
    def _standing(self, at: Cursor) -> Iterator[None]:
        """Read something elsewhere (a function body, a handled path), then come back."""
        before, self.at = self.at, at
        try:
            yield
        finally:
            self.at = before

    @contextmanager
    def _quietly(self, quiet: bool) -> Iterator[None]:
        """When `quiet`, collect nothing: a body read only to learn what it returns."""
        if quiet:
            self._quiet += 1
        try:
            yield
        finally:
            if quiet:
                self._quiet -= 1
