"""Renderers: the same report document as a terminal table, JSON, or Markdown."""

from __future__ import annotations

import io
import json
from typing import Any

from rich.console import Console
from rich.table import Table


def to_json(report: dict[str, Any]) -> str:
    return json.dumps(report, indent=2, sort_keys=False) + "\n"


def _bounds(change: dict[str, Any]) -> str:
    p = change["projects"]
    return f"{p['resolved']} / {p['inferred']} / {p['possible']}"


def to_markdown(report: dict[str, Any]) -> str:
    t = report["totals"]
    lines = [
        f"# Impact of {report['library']} {report['release'] or ''}".rstrip(),
        "",
        f"Scanned {t['projects']} projects ({t['projects_using_library']} use {report['library']}); "
        f"{t['files']} files: {t['files_parsed']} parsed, {t['files_skipped']} skipped, "
        f"{t['files_unparsed']} unparsed.",
        "",
        "Projects hit are given as proven / likely / at most (resolved, inferred, possible).",
        "",
        "| change | member | kind | projects hit | sites |",
        "|---|---|---|---|---|",
    ]
    for c in report["changes"]:
        lines.append(f"| {c['id']} | `{c['member']}` | {c['kind']} | {_bounds(c)} | {c['sites']} |")
    for c in report["changes"]:
        if not c["patterns"]:
            continue
        lines += ["", f"## {c['id']}: `{c['member']}` ({c['kind']})", ""]
        if c.get("note"):
            lines += [c["note"], ""]
        lines += ["| call pattern | projects | sites |", "|---|---|---|"]
        for p in c["patterns"]:
            lines.append(f"| `{p['pattern']}` | {p['projects']} | {p['sites']} |")
    if report["file_reasons"]:
        lines += ["", "## Files not analysed", "", "| status | reason | files |", "|---|---|---|"]
        for r in report["file_reasons"]:
            lines.append(f"| {r['status']} | {r['reason']} | {r['files']} |")
    return "\n".join(lines) + "\n"


def to_table(report: dict[str, Any], width: int = 120) -> str:
    buffer = io.StringIO()
    console = Console(file=buffer, width=width, force_terminal=False, color_system=None)
    t = report["totals"]
    console.print(
        f"{report['library']} {report['release'] or ''}: {t['projects']} projects scanned, "
        f"{t['projects_using_library']} use the library; files {t['files']} = "
        f"{t['files_parsed']} parsed + {t['files_skipped']} skipped + {t['files_unparsed']} unparsed"
    )
    summary = Table(title="Projects hit per planned change (proven / likely / at most)", title_justify="left")
    for column in ("change", "member", "kind", "projects hit", "sites"):
        summary.add_column(column, justify="right" if column in ("projects hit", "sites") else "left")
    for c in report["changes"]:
        summary.add_row(c["id"], c["member"], c["kind"], _bounds(c), str(c["sites"]))
    console.print(summary)
    for c in report["changes"]:
        if not c["patterns"]:
            continue
        table = Table(title=f"{c['id']} {c['member']}: call patterns", title_justify="left")
        table.add_column("pattern")
        table.add_column("projects", justify="right")
        table.add_column("sites", justify="right")
        for p in c["patterns"][:8]:
            table.add_row(p["pattern"], str(p["projects"]), str(p["sites"]))
        if len(c["patterns"]) > 8:
            table.add_row(f"... {len(c['patterns']) - 8} more", "", "")
        console.print(table)
    if report["file_reasons"]:
        reasons = Table(title="Files not analysed", title_justify="left")
        for column in ("status", "reason", "files"):
            reasons.add_column(column, justify="right" if column == "files" else "left")
        for r in report["file_reasons"]:
            reasons.add_row(r["status"], r["reason"], str(r["files"]))
        console.print(reasons)
    return buffer.getvalue()
