"""Turn collected references into findings: apply each change's matching rule, name the pattern."""

from __future__ import annotations

from impactscope.changes import Kind
from impactscope.findings import Confidence
from impactscope.resolve.evaluate import Ref
from impactscope.resolve.query import CompiledChange, Query
from impactscope.resolve.receivers import ThroughSuper


def judge(ref: Ref, query: Query) -> list[tuple[CompiledChange, Confidence]]:
    """The changes a reference falls under, each with how sure the match is."""
    if ref.name is not None:
        candidates = query.match(ref.name)
        base = Confidence.RESOLVED
    else:
        assert ref.attr is not None
        candidates = query.by_name(ref.attr)
    out: list[tuple[CompiledChange, Confidence]] = []
    for cc in candidates:
        if ref.among:
            # One of several library classes: proven when every one of them has this change.
            hits = sum(1 for cls in ref.among if query.owns(cls, cc))
            if not hits:
                continue
            base = Confidence.RESOLVED if hits == len(ref.among) else Confidence.INFERRED
        elif ref.name is None:
            # A module's function reached through an unknown receiver is some object's method.
            specific = cc.parent_is_class and query.is_specific(cc)
            base = Confidence.INFERRED if specific else Confidence.POSSIBLE
        confidence = _apply_rule(ref, cc, base, query)
        if confidence is not None:
            if ref.handled:  # an import path the release does not take, or one whose failure is handled
                confidence = min(confidence, Confidence.POSSIBLE)
            out.append((cc, confidence))
    return out


def _apply_rule(ref: Ref, cc: CompiledChange, base: Confidence, query: Query) -> Confidence | None:
    kind = cc.change.kind
    if not kind.about_parameter:
        return base
    if ref.context == "override":
        return base
    exact = ref.name is None or query.model.canonical(ref.name) == cc.canonical
    if not exact or ref.call is None or ref.context == "import":
        return None  # a parameter change breaks calls only, and only calls of that member itself
    shape = ref.call
    position = cc.position
    if position is not None and not ref.bound and cc.parent_is_class and ref.name is not None:
        position += 1  # called through the class: `Table.sort_by(t, ...)` passes self explicitly
    passed = cc.change.parameter in shape.keywords or (position is not None and shape.positional > position)
    if passed:
        return None if kind is Kind.DEFAULT_CHANGED else base
    unknowable = shape.starstar or (position is not None and shape.star)
    if unknowable:
        return Confidence.POSSIBLE
    return base if kind is Kind.DEFAULT_CHANGED else None


def pattern(ref: Ref, cc: CompiledChange, query: Query) -> str:
    """A normalised shape of the use, so that many sites group into a few readable lines."""
    args = ref.call.render() if ref.call is not None else ""
    shown = query.display(ref.name) if ref.name is not None else None
    receiver = ref.receiver
    through_class = isinstance(receiver, ThroughSuper) or receiver.startswith("<")
    if isinstance(receiver, ThroughSuper):
        receiver = f"super(<{query.display(receiver.base)}>)"
    elif receiver.startswith("<") and receiver.endswith(">"):
        receiver = f"<{query.display(receiver[1:-1])}>"
    if ref.context == "import":
        return ref.import_text
    if ref.context == "override":
        return f"override in class(<{query.display(ref.receiver)}>): def {cc.change.name}"
    if ref.context == "subclass":
        return f"class _({shown})"
    if ref.context == "decorator":
        return f"@{shown}{args}"
    if ref.context == "annotation":
        return f"annotation: {shown}"
    if shown is None and ref.among:
        return "<" + "|".join(query.display(c) for c in ref.among) + f">.{ref.attr}{args}"
    if shown is None:
        return f"?.{ref.attr}{args}"
    leaf = shown.rpartition(".")[2]
    if through_class:
        return f"{receiver}.{leaf}{args}"
    return f"{shown}{args}"


__all__ = ["judge", "pattern"]
