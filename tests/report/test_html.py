"""The HTML report, read as text: self-contained, allowed by its own content security policy,
tables before charts, every change and figure of the model, the same bytes for the same results.

The browser's view of it is tests/report/test_html_browser.py.
"""

from __future__ import annotations

import base64
import dataclasses
import hashlib
import re
from html.parser import HTMLParser
from pathlib import Path

import pytest

from impactscope.findings import Confidence
from impactscope.report.html import to_html
from impactscope.report.model import Report
from impactscope.report.views import hit_projects

from .conftest import model_of

# HTML Living Standard, "Void elements": these have no end tag.
VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "track", "wbr"}
# SVG elements written self-closed (`<line .../>`).
SELF_CLOSED = {"line"}


@pytest.fixture(scope="module")
def model(demo_model: Report) -> Report:
    return demo_model


@pytest.fixture(scope="module")
def page(model: Report) -> str:
    return to_html(model)


class Tags(HTMLParser):
    """Every start tag with its attributes, and a check that every element is closed in order."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.starts: list[tuple[str, dict[str, str | None]]] = []
        self.problems: list[str] = []
        self.text: list[str] = []
        self.style = ""
        self._in_style = False

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.starts.append((tag, dict(attrs)))
        if tag == "style":
            self._in_style = True
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.starts.append((tag, dict(attrs)))
        if tag not in VOID and tag not in SELF_CLOSED:
            self.problems.append(f"<{tag}/> is not a void element")

    def handle_endtag(self, tag: str) -> None:
        if tag == "style":
            self._in_style = False
        if not self.stack or self.stack[-1] != tag:
            self.problems.append(f"</{tag}> closes {self.stack[-1] if self.stack else 'nothing'}")
        else:
            self.stack.pop()

    def handle_data(self, data: str) -> None:
        if self._in_style:
            self.style += data
        else:
            self.text.append(data)


def _parse(page: str) -> Tags:
    tags = Tags()
    tags.feed(page)
    tags.close()
    return tags


def test_the_page_is_well_formed(page: str) -> None:
    tags = _parse(page)
    assert page.startswith("<!DOCTYPE html>\n")
    assert tags.problems == [] and tags.stack == []


def test_nothing_is_loaded_from_anywhere(page: str) -> None:
    tags = _parse(page)
    names = {tag for tag, _ in tags.starts}
    assert not names & {"script", "link", "img", "iframe", "object", "embed", "image", "use", "foreignobject"}
    for tag, attrs in tags.starts:
        for key, value in attrs.items():
            assert key not in ("src", "srcset", "style") and not key.startswith("on"), (tag, key)
            if key == "href":
                assert value and value.startswith("#"), (tag, value)  # links within the page only
    assert not re.search(r"(?i)https?:|//[a-z0-9]|url\(|@import|@font-face", page)


def test_the_content_security_policy_allows_exactly_the_page_s_style(page: str) -> None:
    tags = _parse(page)
    metas = [attrs for tag, attrs in tags.starts if tag == "meta" and attrs.get("http-equiv") == "Content-Security-Policy"]
    assert len(metas) == 1
    policy = {d.split()[0]: d.split()[1:] for d in (metas[0]["content"] or "").split(";") if d.strip()}
    assert policy["default-src"] == ["'none'"]
    # CSP Level 3, "hash-source": the base64 of the SHA-256 of the style element's text.
    digest = base64.b64encode(hashlib.sha256(tags.style.encode("utf-8")).digest()).decode("ascii")
    assert policy["style-src"] == [f"'sha256-{digest}'"]
    assert [tag for tag, _ in tags.starts].index("meta") < [tag for tag, _ in tags.starts].index("style")


def test_tables_come_before_the_charts_and_show_every_change(page: str, model: Report) -> None:
    assert page.index("<table>") < page.index("<svg")
    summary = page[page.index('<section id="summary">'):page.index('<section id="charts">')]
    rows = re.findall(r'<tr><td><a href="#([^"]+)">', summary)
    assert rows == [c.id for c in sorted(model.changes, key=lambda c: (-c.projects.resolved, -c.projects.possible))]
    for change in model.changes:
        row = re.search(rf'<tr><td><a href="#{re.escape(change.id)}">.*?</tr>', summary)
        assert row is not None
        cells = re.findall(r"<td[^>]*>(.*?)</td>", row.group(0))
        assert cells[1] == f"<code>{change.member}</code>" and cells[2] == change.kind.value
        assert cells[3:6] == [str(change.projects[level]) for level in Confidence.strongest_first()]
        assert f'<section id="{change.id}">' in page


def test_every_hit_project_is_listed_under_its_change(page: str, model: Report) -> None:
    for change in model.changes:
        part = page[page.index(f'<section id="{change.id}">'):]
        part = part[:part.index("</section>")]
        listed = re.findall(r"<li>([^<]+) \(", part)
        assert listed == [h.project for h in hit_projects(model, change.id)], change.id


def test_the_impact_chart_draws_each_level_with_its_interval(page: str, model: Report) -> None:
    chart = re.search(r'<svg[^>]*aria-label="projects hit per change[^"]*".*?</svg>', page)
    assert chart is not None
    titles = re.findall(r"<title>([^<]+)</title>", chart.group(0))
    words = {Confidence.RESOLVED: "proven", Confidence.INFERRED: "likely", Confidence.POSSIBLE: "at most"}
    expected = []
    for change in sorted(model.changes, key=lambda c: (-c.projects.resolved, -c.projects.possible)):
        for level in Confidence.strongest_first():
            e = change.share.levels[level]
            expected.append(f"{change.id} {words[level]}: {change.projects[level]} projects, {e.estimate:.1%} "
                            f"(interval {e.low:.1%}–{e.high:.1%})")
    assert titles == expected
    # Three bars per change, each as long as its share, its error bar from the low end to the high end.
    left, span = 210, 760 - 210 - 90  # the chart's scale (report/charts.py)
    bars = re.findall(r'<rect x="([\d.]+)" y="([\d.]+)" width="([\d.]+)"', chart.group(0))
    ends = re.findall(r'<line x1="([\d.]+)" y1="([\d.]+)" x2="([\d.]+)" y2="\2"', chart.group(0))
    assert len(bars) == len(ends) == 3 * len(model.changes)
    shares = [c.share.levels[level] for c in sorted(model.changes, key=lambda c: (-c.projects.resolved, -c.projects.possible))
              for level in Confidence.strongest_first()]
    for (x, _, width), (x1, _, x2), e in zip(bars, ends, shares):
        assert float(x) == left and abs(float(width) - e.estimate * span) <= 0.05
        assert abs(float(x1) - (left + e.low * span)) <= 0.05 and abs(float(x2) - (left + e.high * span)) <= 0.05


def test_the_same_results_give_the_same_bytes(scanned_demo_corpus, page: str) -> None:
    assert to_html(model_of(scanned_demo_corpus.results)) == page
    assert not re.search(r"20\d\d-\d\d-\d\d|/tmp/|pytest-of", page)


def test_warnings_and_weights_show(model: Report) -> None:
    from impactscope.report.model import WeightsUsed

    interrupted = dataclasses.replace(model, complete=False, weights=WeightsUsed("downloads.csv", 9, 7))
    page = to_html(interrupted)
    assert '<p class="warning">Warning: the scan was interrupted' in page
    assert "weighted by downloads.csv: 9 entries, matching 7 of the" in page
    assert "Warning:" not in to_html(model)
