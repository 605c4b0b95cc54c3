"""Sound shortcuts: skip what cannot hold a finding at any confidence, before libcst runs.

A reference to a changed member has to spell the member's own name somewhere in the file,
unless it arrives through another project module under a new name (a re-export). So a file
is kept when it names a changed member as a whole word, or names a project module that
(transitively) mentions the library; a project that never names the library is skipped whole.
"""

from __future__ import annotations

import re
from typing import Iterable, Mapping

from impactscope.resolve.project import module_names


def _words(names: Iterable[str]) -> re.Pattern[str] | None:
    names = sorted(set(names))
    if not names:
        return None
    # Lookarounds instead of \b: identifiers may contain non-ASCII letters (PEP 3131).
    return re.compile(r"(?<![\w])(?:" + "|".join(map(re.escape, names)) + r")(?![\w])")


class Prefilter:
    def __init__(self, library_tops: Iterable[str], member_names: Iterable[str]) -> None:
        self._library = _words(library_tops)
        self._members = _words(member_names)

    def mentions_library(self, text: str) -> bool:
        return self._library is not None and self._library.search(text) is not None

    def candidates(self, texts: Mapping[str, str]) -> set[str]:
        """The files of one project worth resolving; empty when the project never names the library."""
        touching = {path for path, text in texts.items() if self.mentions_library(text)}
        if not touching:
            return set()
        # Close over re-exports: a module that names a touching module touches the library too.
        leaf_of = {path: module_names(path)[0].rpartition(".")[2] for path in texts}
        frontier = set(touching)
        while frontier:
            leaves = _words(leaf_of[p] for p in frontier if leaf_of[p])
            frontier = set()
            if leaves is None:
                break
            for path, text in texts.items():
                if path not in touching and leaves.search(text):
                    touching.add(path)
                    frontier.add(path)
        via_modules = _words(leaf_of[p] for p in touching if leaf_of[p])
        keep = set()
        for path, text in texts.items():
            if self._members is not None and self._members.search(text):
                keep.add(path)
            elif via_modules is not None and path in touching and _names_other(via_modules, text, leaf_of[path]):
                keep.add(path)
        return keep


def _names_other(pattern: re.Pattern[str], text: str, own: str) -> bool:
    return any(m.group(0) != own for m in pattern.finditer(text))
