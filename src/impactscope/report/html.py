"""The HTML report: one self-contained page to open offline and share.

Tables come first, so the numbers read without any chart; the charts are inline SVG drawn by
report/charts.py. The page loads nothing: no script, no font, no image, no outside URL, and
it says so in a content security policy (`default-src 'none'`, the one style block allowed by
its SHA-256 hash; CSP Level 3, "hash-source"). The same report gives the same bytes: no
timestamp, no path of the machine, every list in a fixed order. Reads only the report model.
"""

from __future__ import annotations

import base64
import hashlib
from html import escape

from impactscope.findings import Confidence
from impactscope.report.charts import exposure_chart, files_chart, impact_chart, pattern_chart
from impactscope.report.model import ChangeReport, Report
from impactscope.report.views import DEFAULT_SITES, LEVEL_WORDS, by_impact, confidence_text, example_sites
from impactscope.report.views import hit_by_any, hit_projects, interval, percent, plural, site_text, warnings
from impactscope.report.views import release_name, weights_text

PATTERN_ROWS = 8  # patterns drawn per change; the table below the chart lists them all

STYLE = """
body { font-family: sans-serif; color: #1f2933; margin: 2em auto; max-width: 72em; padding: 0 1em; line-height: 1.4; }
h1 { font-size: 1.6em; } h2 { font-size: 1.3em; margin-top: 2em; } h3 { font-size: 1.1em; margin-top: 1.6em; }
table { border-collapse: collapse; margin: 0.6em 0; }
th, td { border-bottom: 1px solid #c9d1d9; padding: 0.2em 0.6em; text-align: left; vertical-align: top; }
th { background: #f3f5f7; }
td.n, th.n { text-align: right; font-variant-numeric: tabular-nums; }
td.n, td:first-child { white-space: nowrap; }
code { font-size: 0.95em; }
.warning { background: #fdecea; border-left: 4px solid #b3261e; padding: 0.4em 0.8em; }
.lead { font-size: 1.1em; }
dl.facts { display: grid; grid-template-columns: max-content auto; gap: 0.2em 1em; }
dl.facts dt { font-weight: bold; } dl.facts dd { margin: 0; }
ul.projects { columns: 3; font-size: 0.95em; }
figure { margin: 1em 0; } figcaption { font-weight: bold; margin-bottom: 0.4em; }
"""


def _policy() -> str:
    digest = base64.b64encode(hashlib.sha256(STYLE.encode("utf-8")).digest()).decode("ascii")
    return f"default-src 'none'; style-src 'sha256-{digest}'; base-uri 'none'; form-action 'none'"


def _e(value: object) -> str:
    return escape(str(value), quote=True)


def _row(cells: list[str], numeric: set[int] = frozenset(), head: bool = False) -> str:  # type: ignore[assignment]
    tag = "th" if head else "td"
    return "<tr>" + "".join(
        f'<{tag} class="n">{c}</{tag}>' if i in numeric else f"<{tag}>{c}</{tag}>" for i, c in enumerate(cells)
    ) + "</tr>"


def _table(header: list[str], rows: list[list[str]], numeric: set[int]) -> str:
    return ("<table><thead>" + _row([_e(h) for h in header], numeric, head=True) + "</thead><tbody>"
            + "".join(_row(r, numeric) for r in rows) + "</tbody></table>")


def _share(change: ChangeReport, level: Confidence) -> str:
    if not change.share.denominator:
        return "n/a"
    e = change.share.levels[level]
    return f"{percent(e.estimate)} ({interval(e)})"


def _summary(report: Report, changes: list[ChangeReport]) -> str:
    levels = Confidence.strongest_first()
    header = ["change", "member", "kind", *(f"projects {LEVEL_WORDS[lv]}" for lv in levels),
              f"share proven ({confidence_text(report)} interval)", f"share at most ({confidence_text(report)} interval)"]
    rows = [[f'<a href="#{_e(c.id)}">{_e(c.id)}</a>', f"<code>{_e(c.member)}</code>", _e(c.kind.value),
             *(str(c.projects[lv]) for lv in levels), _share(c, Confidence.RESOLVED), _share(c, Confidence.POSSIBLE)]
            for c in changes]
    if report.weights is not None:
        header.append("weighted share proven")
        for row, c in zip(rows, changes):
            w = c.weighted_share
            row.append(f"{percent(w.levels.resolved.estimate)} ({interval(w.levels.resolved)})" if w else "n/a")
    return _table(header, rows, {3, 4, 5, 6, 7, 8})


def _exposure_sites(report: Report, changes: list[ChangeReport]) -> str:
    release = report.release or "the release"
    header = ["change", f"proven, requirement admits {release}", "proven, requirement excludes it",
              "proven, no requirement", *(f"sites {LEVEL_WORDS[lv]}" for lv in Confidence.strongest_first()), "files"]
    rows = [[_e(c.id), str(c.exposure.exposed), str(c.exposure.shielded), str(c.exposure.unconstrained),
             *(str(c.sites_by_level[lv]) for lv in Confidence.strongest_first()), str(c.files)] for c in changes]
    return _table(header, rows, set(range(1, 8)))


def _change(report: Report, change: ChangeReport, sites: int) -> str:
    parts = [f'<section id="{_e(change.id)}"><h3>{_e(change.id)}: <code>{_e(change.member)}</code> '
             f"({_e(change.kind.value)})</h3>"]
    if change.note:
        parts.append(f"<p>{_e(change.note)}</p>")
    facts = [("replacement", f"<code>{_e(change.replacement)}</code>" if change.replacement else "none"),
             ("deprecated since", _e(change.deprecated_in or "not deprecated before this release")),
             ("projects hit", " / ".join(f"{change.projects[lv]} {LEVEL_WORDS[lv]}" for lv in Confidence.strongest_first())),
             ("share of users", f"{_share(change, Confidence.RESOLVED)} proven, {_share(change, Confidence.POSSIBLE)} at most"),
             ("sites", " / ".join(f"{change.sites_by_level[lv]} {LEVEL_WORDS[lv]}" for lv in Confidence.strongest_first())),
             ("same-source forks counted once", " / ".join(str(change.projects_fork_collapsed[lv])
                                                           for lv in Confidence.strongest_first()))]
    if change.certainty:
        facts.append(("draft certainty", _e(change.certainty)))
    parts.append('<dl class="facts">' + "".join(f"<dt>{_e(k)}</dt><dd>{v}</dd>" for k, v in facts) + "</dl>")
    hits = hit_projects(report, change.id)
    if not hits:
        parts.append("<p>No project uses it.</p></section>")
        return "".join(parts)
    examples = example_sites(report, change.id, sites)
    if examples:
        parts.append(f"<h4>{plural(len(examples), 'example site')}</h4>")
        parts.append(_table(["where", "pattern", "how sure"],
                            [[f"<code>{_e(site_text(f))}</code>", f"<code>{_e(f.label)}</code>",
                              _e(LEVEL_WORDS[f.confidence])] for f in examples], set()))
    parts.append(f"<details><summary>{plural(len(hits), 'project')} hit</summary><ul class=\"projects\">"
                 + "".join(f"<li>{_e(h.project)} ({_e(LEVEL_WORDS[h.strongest])}, {plural(h.sites, 'site')})</li>"
                           for h in hits) + "</ul></details>")
    parts.append(f"<figure><figcaption>Call patterns (the first {min(PATTERN_ROWS, len(change.patterns))}, "
                 f"by projects)</figcaption>{pattern_chart(change.patterns, PATTERN_ROWS)}</figure>")
    parts.append(_table(["call pattern", "how sure", "projects", "sites", "files"],
                        [[f"<code>{_e(p.label)}</code>", _e(p.confidence.label), str(p.projects), str(p.sites),
                          str(p.files)] for p in change.patterns], {2, 3, 4}))
    parts.append("</section>")
    return "".join(parts)


def _accounting(report: Report) -> str:
    parts = ['<section id="files"><h2>Files accounted for</h2>']
    reasons = [(r.status.value, r.reason, r.files) for r in report.file_reasons]
    parts.append(_table(["status", "reason", "files"], [[_e(s), _e(r), str(n)] for s, r, n in reasons], {2}))
    parts.append(f"<figure><figcaption>Files by status and reason</figcaption>{files_chart(report.totals, reasons)}</figure>")
    legacy = report.token_level()
    if legacy:
        parts.append("<h3>Python 2 files (read at token level; every site counts as possible)</h3>")
        parts.append(_table(["change", "projects", "sites"],
                            [[_e(c.id), str(projects), str(c.legacy_sites)] for c, projects in legacy], {1, 2}))
    if report.failed_files:
        parts.append("<h3>Files the scan failed on (please report these)</h3>")
        parts.append(_table(["project", "file", "reason", "detail"],
                            [[_e(f.project), f"<code>{_e(f.file)}</code>", _e(f.reason), _e(f.detail)]
                             for f in report.failed_files], set()))
    if report.not_projects:
        parts.append("<h3>In the roots but not projects</h3>")
        parts.append(_table(["path", "reason"], [[f"<code>{_e(n.path)}</code>", _e(n.reason)]
                                                  for n in sorted(report.not_projects, key=lambda n: (n.path, n.reason))],
                            set()))
    parts.append("</section>")
    return "".join(parts)


def to_html(report: Report, sites: int = DEFAULT_SITES) -> str:
    name = release_name(report)
    t = report.totals
    hit = hit_by_any(report)
    changes = by_impact(report)
    head = (f'<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
            f'<meta http-equiv="Content-Security-Policy" content="{_e(_policy())}">'
            f'<meta name="viewport" content="width=device-width, initial-scale=1">'
            f"<title>Impact of {_e(name)}</title><style>{STYLE}</style></head>")
    body = [f"<body><h1>Impact of {_e(name)}</h1>",
            f'<p class="lead">The planned changes hit <strong>{hit.resolved}</strong> projects proven, '
            f"{hit.inferred} likely and {hit.possible} at most, of the {plural(t.projects_using_library, 'project')} "
            f"that use {_e(report.library)} ({plural(t.projects, 'project')} scanned).</p>",
            f"<p>Files: {t.files} = {t.files_parsed} parsed + {t.files_skipped} skipped + {t.files_unparsed} unparsed "
            f"({t.files_analysis_error} with an analysis error). Proven: a use resolved to the member; likely: "
            f"inferred; at most: any possible use. Shares are of the projects that use {_e(report.library)}, with "
            f"{confidence_text(report)} Wilson score intervals.</p>"]
    weighted = weights_text(report)
    if weighted:
        body.append(f"<p>Share of the weight: {_e(weighted)}.</p>")
    body += [f'<p class="warning">Warning: {_e(w)}.</p>' for w in warnings(report)]
    low = [c for c in changes if c.low_certainty]
    if low:
        body.append(f'<p class="warning">{plural(len(low), "change")} ({", ".join(_e(c.id) for c in low)}) '
                    "are low-certainty draft entries: review them before relying on their counts.</p>")
    body += ['<section id="summary"><h2>Projects hit by each change</h2>', _summary(report, changes),
             "<h2>Exposure of the proven projects, and sites</h2>", _exposure_sites(report, changes), "</section>",
             '<section id="charts"><h2>Charts</h2>',
             f"<figure><figcaption>Projects hit, proven / likely / at most, with intervals</figcaption>"
             f"{impact_chart(changes, t.projects_using_library)}</figure>",
             f"<figure><figcaption>Exposure of the proven projects</figcaption>"
             f"{exposure_chart(changes, name)}</figure></section>",
             '<section id="changes"><h2>Each change</h2>', *(_change(report, c, sites) for c in changes), "</section>",
             _accounting(report), "</body></html>\n"]
    return head + "".join(body)


__all__ = ["STYLE", "to_html"]
