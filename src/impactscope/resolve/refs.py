"""What the walk of one module collects: references, where it stood when it found each, and the
module's result (its exports and whether it uses the library)."""

from __future__ import annotations

from dataclasses import dataclass, field

import libcst as cst

from impactscope.resolve.receivers import Receiver
from impactscope.resolve.values import Value


@dataclass(frozen=True)
class CallShape:
    """How a call passes its arguments, literals elided."""

    positional: int  # positional arguments before the first `*args`
    star: bool
    starstar: bool
    keywords: tuple[str, ...]

    def render(self) -> str:
        parts = ["_"] * self.positional
        if self.star:
            parts.append("*_")
        parts.extend(f"{k}=_" for k in self.keywords)
        if self.starstar:
            parts.append("**_")
        return "(" + ", ".join(parts) + ")"


@dataclass(frozen=True)
class Cursor:
    """Where the walk stands: what every reference collected there carries along."""

    cell: int | None = None
    top: cst.CSTNode | None = None  # the top-level statement of its cell being read
    # Inside `try: <library import> ... except ImportError:`, on a path the release does not
    # take or whose failure the code handles (see `Ref.handled`).
    handled: bool = False


@dataclass(frozen=True)
class Ref:
    """A reference collected in a module: resolved (`name`) or on an unknown receiver (`attr`)."""

    cell: int | None
    node: cst.CSTNode
    context: str  # import | use | subclass | decorator | annotation | override
    top: cst.CSTNode | None = None  # the top-level statement of its cell that holds it
    name: str | None = None
    attr: str | None = None
    receiver: Receiver = ""  # how the member was reached, for patterns
    bound: bool = False
    call: CallShape | None = None
    import_text: str = ""
    # Inside `try: <library import> ... except ImportError:`, on a path the release does not
    # take or whose failure the code handles: the `try` body when its import breaks on the
    # release, the handler when it does not. Such a use breaks nothing: possible at most.
    handled: bool = False
    among: tuple[str, ...] = ()  # with `attr`: the receiver is an instance of one of these classes


@dataclass
class ModuleResult:
    refs: list[Ref] = field(default_factory=list)
    uses_library: bool = False
    exports: dict[str, Value] = field(default_factory=dict)
    all_names: tuple[str, ...] | None = None  # `__all__` as read statically (dunder_all), which decides what `*` binds
    imported: set[str] = field(default_factory=set)  # project modules it imports
    # Project modules imported by a top-level statement that always runs (no `if`, `try`, def):
    # if one of them fails to import, so does this module.
    imported_first: set[str] = field(default_factory=set)
    # A library name this module imports at top level that the old release does not have (read
    # from its source or stubs): the module fails to import there already, which its file's
    # detail says. Set for an importer of such a module too, naming the same name.
    fails_on_old: str = ""
