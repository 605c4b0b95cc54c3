"""Charts as inline SVG, drawn here: no script, no style attribute, no outside resource.

Every chart is a string of SVG elements with presentation attributes only (fill, stroke, ...),
so that a page whose content security policy allows no inline style attribute shows them. Each
mark carries a <title> with its exact figures, which a browser shows on hover and a screen
reader reads. Numbers are written with fixed decimals, so the same report gives the same bytes.
"""

from __future__ import annotations

from html import escape
from typing import Sequence

from impactscope.findings import Confidence
from impactscope.report.model import ChangeReport, PatternRow, Totals
from impactscope.report.views import LEVEL_WORDS, interval, percent

WIDTH = 760
LABEL = 210  # room on the left for a bar's label
BAR = 14
INK = "#1f2933"
GRID = "#c9d1d9"
# One colour per level, strongest darkest; one per exposure class; one per file status.
LEVEL_FILL = {Confidence.RESOLVED: "#1d4e89", Confidence.INFERRED: "#4f86c6", Confidence.POSSIBLE: "#a9c6e8"}
EXPOSURE_FILL = (("exposed", "admits the release", "#b3261e"), ("shielded", "excludes it", "#2e7d32"),
                 ("unconstrained", "states none", "#9e9e9e"))
STATUS_FILL = (("parsed", "#1d4e89"), ("skipped", "#9e9e9e"), ("unparsed", "#b3261e"))


def _n(value: float) -> str:
    return f"{value:.1f}"


def _text(x: float, y: float, text: str, *, anchor: str = "start", size: int = 12, weight: str = "normal") -> str:
    bold = ' font-weight="bold"' if weight == "bold" else ""
    return (f'<text x="{_n(x)}" y="{_n(y)}" font-size="{size}" text-anchor="{anchor}" fill="{INK}"{bold}>'
            f"{escape(text)}</text>")


def _rect(x: float, y: float, w: float, h: float, fill: str, title: str) -> str:
    return (f'<rect x="{_n(x)}" y="{_n(y)}" width="{_n(max(w, 0.0))}" height="{_n(h)}" fill="{fill}">'
            f"<title>{escape(title)}</title></rect>")


def _svg(height: float, label: str, body: list[str]) -> str:
    return (f'<svg width="{WIDTH}" height="{_n(height)}" viewBox="0 0 {WIDTH} {_n(height)}" role="img" '
            f'aria-label="{escape(label)}" font-family="sans-serif">' + "".join(body) + "</svg>")


def _axis(top: float, bottom: float, left: float, span: float, ticks: Sequence[tuple[float, str]]) -> list[str]:
    out = []
    for fraction, label in ticks:
        x = left + fraction * span
        out.append(f'<line x1="{_n(x)}" y1="{_n(top)}" x2="{_n(x)}" y2="{_n(bottom)}" stroke="{GRID}" stroke-width="1"/>')
        out.append(_text(x, bottom + 14, label, anchor="middle", size=11))
    return out


PERCENT_TICKS = tuple((f / 4, f"{f * 25}%") for f in range(5))


def impact_chart(changes: Sequence[ChangeReport], users: int) -> str:
    """Per change, the share of the projects that use the library hit at each level (bars, with
    the count), with each share's interval as an error bar."""
    left, span = LABEL, WIDTH - LABEL - 90
    group = 3 * (BAR + 2) + 22
    height = 28 + group * len(changes) + 24
    body = [_text(left, 14, f"share of the {users} projects that use the library, with the interval", size=11)]
    body += _axis(22, height - 22, left, span, PERCENT_TICKS)
    y = 28.0
    for change in changes:
        body.append(_text(4, y + 12, f"{change.id} {change.member}", size=12, weight="bold"))
        y += 16
        for level in Confidence.strongest_first():
            estimate = change.share.levels[level]
            count = change.projects[level]
            title = (f"{change.id} {LEVEL_WORDS[level]}: {count} projects, {percent(estimate.estimate)} "
                     f"(interval {interval(estimate)})")
            body.append(_text(left - 6, y + BAR - 3, LEVEL_WORDS[level], anchor="end", size=11))
            body.append(_rect(left, y, estimate.estimate * span, BAR, LEVEL_FILL[level], title))
            lo, hi, mid = left + estimate.low * span, left + estimate.high * span, y + BAR / 2
            body.append(f'<line x1="{_n(lo)}" y1="{_n(mid)}" x2="{_n(hi)}" y2="{_n(mid)}" stroke="{INK}" stroke-width="1.5"/>')
            for x in (lo, hi):
                body.append(f'<line x1="{_n(x)}" y1="{_n(y + 2)}" x2="{_n(x)}" y2="{_n(y + BAR - 2)}" stroke="{INK}" stroke-width="1.5"/>')
            body.append(_text(left + span + 6, y + BAR - 3, f"{count} ({percent(estimate.estimate)})", size=11))
            y += BAR + 2
        y += 6
    return _svg(height, "projects hit per change, at each level, with intervals", body)


def pattern_chart(patterns: Sequence[PatternRow], limit: int) -> str:
    """A change's call patterns by projects, coloured by their strongest level."""
    shown = list(patterns[:limit])
    most = max((p.projects for p in shown), default=1) or 1
    left, span = 330, WIDTH - 330 - 60
    height = 8 + len(shown) * (BAR + 4) + 4
    body = []
    y = 6.0
    for p in shown:
        label = p.label if len(p.label) <= 52 else p.label[:51] + "…"
        body.append(_text(left - 6, y + BAR - 3, label, anchor="end", size=11))
        body.append(_rect(left, y, p.projects / most * span, BAR, LEVEL_FILL[p.confidence],
                          f"{p.label}: {p.projects} projects, {p.sites} sites ({p.confidence.label})"))
        body.append(_text(left + p.projects / most * span + 4, y + BAR - 3, str(p.projects), size=11))
        y += BAR + 4
    return _svg(height, "projects per call pattern", body)


def exposure_chart(changes: Sequence[ChangeReport], release: str) -> str:
    """Per change, its proven projects split by what their declared requirement says of the release."""
    left, span = LABEL, WIDTH - LABEL - 20
    most = max((c.projects.resolved for c in changes), default=1) or 1
    height = 40 + len(changes) * (BAR + 6) + 4
    body = []
    x = 4.0
    for key, words, fill in EXPOSURE_FILL:
        body.append(_rect(x, 4, 12, 12, fill, words))
        body.append(_text(x + 16, 14, f"requirement {words}" if key != "unconstrained" else "no requirement", size=11))
        x += 190
    body.append(_text(4, 32, f"proven projects, by their requirement on {release}", size=11))
    y = 40.0
    for change in changes:
        body.append(_text(left - 6, y + BAR - 3, f"{change.id} {change.member}"[:34], anchor="end", size=11))
        x = float(left)
        for key, words, fill in EXPOSURE_FILL:
            count = getattr(change.exposure, key)
            w = count / most * span
            body.append(_rect(x, y, w, BAR, fill, f"{change.id}: {count} proven projects whose requirement {words}"))
            x += w
        y += BAR + 6
    return _svg(height, "exposure of the proven projects per change", body)


def files_chart(totals: Totals, reasons: Sequence[tuple[str, str, int]]) -> str:
    """Every file of the corpus accounted for: parsed, skipped, unparsed, then each reason."""
    left, span = LABEL, WIDTH - LABEL - 60
    total = totals.files or 1
    height = 34 + len(reasons) * (BAR + 4) + 4
    body = [_text(left - 6, 16, f"{totals.files} files", anchor="end", size=11, weight="bold")]
    x = float(left)
    for status, fill in STATUS_FILL:
        count = getattr(totals, f"files_{status}")
        body.append(_rect(x, 4, count / total * span, BAR + 2, fill, f"{status}: {count} files"))
        x += count / total * span
    y = 28.0
    most = max((n for _, _, n in reasons), default=1) or 1
    for status, reason, count in reasons:
        fill = dict(STATUS_FILL)[status]
        body.append(_text(left - 6, y + BAR - 3, f"{status}: {reason}"[:34], anchor="end", size=11))
        body.append(_rect(left, y, count / most * span, BAR, fill, f"{status}, {reason}: {count} files"))
        body.append(_text(left + count / most * span + 4, y + BAR - 3, str(count), size=11))
        y += BAR + 4
    return _svg(height, "files accounted for", body)


__all__ = ["exposure_chart", "files_chart", "impact_chart", "pattern_chart"]
