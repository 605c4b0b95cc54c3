"""Follow bindings through one module (or one notebook's cells) and collect library references.

The walk is flow-sensitive: statements run in order, branches are merged with `values.join`,
and function bodies run once, lazily, when first called or at the end of their scope, so they
see the bindings a real call would see. It only collects; matching and positions come later.

The parts live in their own modules (statements, bindings, imports, definitions, expressions,
calls), each a mixin over the shared state in `walk.Walk`; `ModuleEvaluator` joins them.
"""

from __future__ import annotations

from typing import Iterable

import libcst as cst

from impactscope.resolve.bindings import Bindings
from impactscope.resolve.calls import Calls
from impactscope.resolve.definitions import Definitions
from impactscope.resolve.expressions import Expressions
from impactscope.resolve.imports import Imports, ProjectView
from impactscope.resolve.refs import CallShape, Cursor, ModuleResult, Ref
from impactscope.resolve.statements import Statements

__all__ = ["CallShape", "ModuleEvaluator", "ModuleResult", "ProjectView", "Ref"]


class ModuleEvaluator(Statements, Definitions, Imports, Calls, Expressions, Bindings):
    """Runs one module's cells in order in one module scope."""

    def partial(self) -> ModuleResult:
        """What another module importing this one mid-run (an import cycle) sees: the names bound
        so far, as Python's partially initialised module would show them."""
        return ModuleResult(uses_library=self.result.uses_library, exports=dict(self.scope.names),
                            all_names=self.result.all_names)

    def run(self, cells: Iterable[tuple[int | None, cst.Module]]) -> ModuleResult:
        for index, module in cells:
            self.at = Cursor(cell=index, top=self.at.top)
            for stmt in module.body:
                self.at = Cursor(cell=index, top=stmt)
                self.stmt(stmt, self.scope)
        self.flush(self.scope)
        self.result.exports = self.scope.names
        return self.result

    def resume(self) -> None:
        """Read the module-level bodies that later calls sent back, once the module has run."""
        self.flush(self.scope)
