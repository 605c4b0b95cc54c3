"""Sound shortcuts: skip what cannot hold a finding at any confidence, before libcst runs.

Why skipping is safe:

- A finding needs a chain from an import of the library, made in the file itself or in a
  project module it imports. A project that never names the library is skipped whole.
- A reference to a changed member spells the member's own name (its last component) where the
  binding is made: at the use, or, for a re-export, in the project module that made the alias
  (`from heronframe import read_table as load`, `T = hf.Table`). So a file that does not spell
  a changed member's name can hold a finding only by importing, directly or through other
  project modules, a module that touches the library and does spell one.
- `from . import name` names no module, so a relative import may reach any module of the
  project.

So the kept files are the "seeds" (files that name the library or a touching project module,
and spell a changed member's name), and then, repeatedly, files that name a kept module or
import relatively while something is kept. The modules a kept file imports are parsed on demand
by the resolver, for their bindings.
"""

from __future__ import annotations

import re
from typing import Iterable, Mapping

from impactscope.resolve.project import module_names

# Identifiers as Python reads them (PEP 3131 letters included); one pass per file.
_IDENTIFIER = re.compile(r"[^\W\d]\w*")
_RELATIVE_IMPORT = re.compile(r"(?m)^[ \t]*from[ \t]+\.")


def _any_word(names: Iterable[str]) -> re.Pattern[str] | None:
    names = sorted(set(names))
    if not names:
        return None
    return re.compile(r"(?<![\w])(?:" + "|".join(map(re.escape, names)) + r")(?![\w])")


class Prefilter:
    """Compiled once per scan from the change list; `candidates` runs once per project."""

    def __init__(self, library_tops: Iterable[str], member_names: Iterable[str]) -> None:
        self._tops = frozenset(library_tops)
        self._members = frozenset(member_names)
        self._library = _any_word(self._tops)
        names = "|".join(map(re.escape, sorted(self._tops)))
        self._import_line = re.compile(
            rf"(?m)^[ \t]*(?:from[ \t]+(?:{names})\b|import[ \t]+(?:[\w.]+[ \t]*,[ \t]*)*(?:{names})\b)"
        )

    def imports_library(self, text: str) -> bool:
        """A line-level test for files that were not resolved: an import statement of the library."""
        return bool(self._tops) and self._import_line.search(text) is not None

    def mentions_library(self, text: str) -> bool:
        return self._library is not None and self._library.search(text) is not None

    def candidates(self, texts: Mapping[str, str]) -> set[str]:
        """The files of one project worth resolving; empty when the project never names the library."""
        if not any(self.mentions_library(text) for text in texts.values()):
            return set()
        words = {path: set(_IDENTIFIER.findall(text)) for path, text in texts.items()}
        relative = {path for path, text in texts.items() if _RELATIVE_IMPORT.search(text)}
        leaf = {path: module_names(path)[0].rpartition(".")[2] for path in texts}

        # Modules that touch the library: name it, or name a touching module, or import relatively.
        touching = {path for path, w in words.items() if w & self._tops}
        touching |= relative
        touching = _close(touching, words, leaf)
        # Seeds spell a changed member; then whatever names (or relatively imports) a kept module.
        kept = {path for path in touching if words[path] & self._members}
        if kept:
            kept |= relative & touching
            kept = _close(kept, words, leaf, within=touching)
        return kept


def _close(
    start: set[str], words: Mapping[str, set[str]], leaf: Mapping[str, str], within: set[str] | None = None
) -> set[str]:
    """Add files that name (as a whole word) the leaf module name of a file already in the set."""
    result = set(start)
    frontier = set(start)
    pool = set(words) if within is None else set(within)
    while frontier:
        names = {leaf[p] for p in frontier if leaf[p] and not p.endswith(".ipynb")}
        frontier = set()
        if not names:
            break
        for path in pool - result:
            if words[path] & names and any(n != leaf[path] for n in words[path] & names):
                result.add(path)
                frontier.add(path)
    return result
