"""Sound shortcuts: skip what cannot hold a finding at any confidence, before libcst runs.

A finding needs a chain from an import of the library, made in the file itself or in a
project module it imports; so a file that names neither the library nor such a module (nor
imports relatively, which names no module) cannot hold one. Among the files that can, a
reference to a changed member has to spell the member's own name, unless it arrives from
another project module under a new name (a re-export). So a file is kept when it touches the
library and names a changed member or another touching module as a whole word; a project that
never names the library is skipped whole.
"""

from __future__ import annotations

import re
from typing import Iterable, Mapping

_RELATIVE_IMPORT = re.compile(r"(?m)^[ \t]*from[ \t]+\.")

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
        # `from . import name` names no module, so a relative import may reach any of them.
        touching |= {path for path, text in texts.items() if _RELATIVE_IMPORT.search(text)}
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
        for path in touching:
            text = texts[path]
            if self._members is not None and self._members.search(text):
                keep.add(path)
            elif via_modules is not None and _names_other(via_modules, text, leaf_of[path]):
                keep.add(path)
        return keep


def _names_other(pattern: re.Pattern[str], text: str, own: str) -> bool:
    return any(m.group(0) != own for m in pattern.finditer(text))
