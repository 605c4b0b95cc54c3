"""The review files: every site left for a person, with where it is and why (review.md, review.json)."""

from __future__ import annotations

import json
from typing import Iterable

from impactscope.rewrite.plan import Review


def review_json(items: Iterable[Review]) -> str:
    rows = [
        {
            "project": r.finding.project,
            "file": r.finding.file,
            "cell": r.finding.cell,
            "line": r.finding.line,
            "column": r.finding.column,
            "change": r.finding.change,
            "confidence": r.finding.confidence.label,
            "pattern": r.finding.label,
            "why": r.why,
        }
        for r in _ordered(items)
    ]
    return json.dumps({"sites": rows}, indent=2, ensure_ascii=False) + "\n"


def review_markdown(items: Iterable[Review], *, rewritten: int, projects: int) -> str:
    items = _ordered(items)
    out = [
        "# Sites to review",
        "",
        f"{rewritten} site(s) rewritten in {projects} project(s); {len(items)} site(s) left for a person.",
        "",
    ]
    current = None
    for r in items:
        f = r.finding
        if f.project != current:
            current = f.project
            out += ["", f"## {_cell_text(current)}", "", "| file | cell | line | change | confidence | why |",
                    "| --- | --- | --- | --- | --- | --- |"]
        cell = "" if f.cell is None else str(f.cell)
        out.append(f"| {_cell_text(f.file)} | {cell} | {f.line} | {f.change} | {f.confidence.label} | {_cell_text(r.why)} |")
    return "\n".join(out).rstrip("\n") + "\n"


def _cell_text(text: str) -> str:
    """Text for a Markdown table cell: a `|` would end the cell, a newline the row."""
    return text.replace("\\", "\\\\").replace("|", "\\|").replace("\n", " ")


def _ordered(items: Iterable[Review]) -> list[Review]:
    return sorted(items, key=lambda r: (r.finding.project, r.finding.file, r.finding.cell if r.finding.cell is not None else -1,
                                        r.finding.line, r.finding.column, r.finding.change))
