"""Forks and copies among downstream projects, from the content hashes of their files.

A corpus gathered from code hosts holds forks, mirrors and vendored copies of the same project.
Counting each as a separate user of a member inflates the impact, so sizing reports also give the
number of distinct sources and groups near-identical projects into fork families.

Input is `project -> {path: sha256 of content}`. Two projects are related when at least
`threshold` of the Python files of each are identical by content, counted as multisets of hashes
(two identical copies of one file count twice). With A and B those multisets, that is

    |A ∩ B| / |A| >= threshold  and  |A ∩ B| / |B| >= threshold,

i.e. |A ∩ B| / max(|A|, |B|) >= threshold: the smaller of the two overlap ratios decides, so a
small project wholly copied into a big one is not the big one's fork. Families are the connected
components of that relation.
"""

from __future__ import annotations

import math
from collections import Counter, defaultdict
from collections.abc import Mapping

from impactscope.errors import InputError

__all__ = ["ForkError", "fork_families", "unique_sources"]

# Ratios are compared with this slack so that 9 of 10 files meets a threshold of 0.9 despite
# 0.9 * 10 being 9.000000000000002 in binary floating point.
_TOLERANCE = 1e-9


class ForkError(InputError):
    """An argument to the fork analysis is out of its domain."""


def unique_sources(project_hashes: Mapping[str, Mapping[str, str]]) -> int:
    """The number of distinct content hashes over all files of all projects."""
    return len({digest for files in project_hashes.values() for digest in files.values()})


def _python_files(files: Mapping[str, str]) -> Counter[str]:
    return Counter(digest for path, digest in files.items() if path.lower().endswith(".py"))


def _needed(size: int, threshold: float) -> int:
    """Fewest shared files for a project of `size` files to reach `threshold`."""
    return max(1, math.ceil(threshold * size - _TOLERANCE))


def fork_families(project_hashes: Mapping[str, Mapping[str, str]], threshold: float = 0.9) -> dict[str, str]:
    """Map each project that belongs to a family of two or more to its family id.

    Only paths ending in `.py` count as Python files; a project without any is never in a
    family. The family id is the lexicographically smallest member name, so ids do not depend
    on input order.

    The search avoids comparing all pairs: projects with identical multisets are merged first,
    and the remaining candidates come from a prefix filter (the set-similarity-join technique):
    with files ordered rarest first, two projects that share at least `t` files must share one
    among the first `size - t + 1` files of each, so only those are indexed and probed. Files
    common to many projects (an empty `__init__.py`) sort last and rarely reach a prefix.
    """
    if isinstance(threshold, bool) or not isinstance(threshold, (int, float)) or not 0.0 < threshold <= 1.0:
        raise ForkError(f"threshold must be a number in (0, 1], got {threshold!r}")

    # One representative per distinct multiset of Python files.
    groups: dict[tuple[tuple[str, int], ...], list[str]] = defaultdict(list)
    for project in sorted(project_hashes):
        files = _python_files(project_hashes[project])
        if files:
            groups[tuple(sorted(files.items()))].append(project)
    keys = list(groups)

    parent = list(range(len(keys)))

    def find(i: int) -> int:
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    def union(i: int, j: int) -> None:
        a, b = find(i), find(j)
        if a != b:
            parent[max(a, b)] = min(a, b)

    # A multiset becomes a set of (hash, occurrence) tokens so that set overlap is multiset overlap.
    tokens = [[(digest, k) for digest, count in key for k in range(count)] for key in keys]
    frequency: Counter[tuple[str, int]] = Counter(t for ts in tokens for t in ts)
    for ts in tokens:
        ts.sort(key=lambda t: (frequency[t], t))
    counters = [Counter(dict(key)) for key in keys]
    sizes = [len(ts) for ts in tokens]

    index: dict[tuple[str, int], list[int]] = defaultdict(list)
    # Smaller projects first: a candidate found in the index is never larger than the probe.
    for i in sorted(range(len(keys)), key=lambda i: (sizes[i], i)):
        prefix = tokens[i][: sizes[i] - _needed(sizes[i], threshold) + 1]
        need = _needed(sizes[i], threshold)
        seen: set[int] = set()
        for token in prefix:
            for j in index[token]:
                if j in seen:
                    continue
                seen.add(j)
                # Size filter: the smaller one must hold at least `need` files of the larger.
                if sizes[j] < need or find(i) == find(j):
                    continue
                shared = sum((counters[i] & counters[j]).values())
                if shared >= need:
                    union(i, j)
            index[token].append(i)

    members: dict[int, list[str]] = defaultdict(list)
    for i, key in enumerate(keys):
        members[find(i)].extend(groups[key])
    families: dict[str, str] = {}
    for names in members.values():
        if len(names) >= 2:
            family = min(names)
            for name in names:
                families[name] = family
    return dict(sorted(families.items()))
