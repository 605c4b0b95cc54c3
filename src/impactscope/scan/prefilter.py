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
from dataclasses import dataclass, field
from typing import Iterable, Mapping

from impactscope.import_names import module_name

_RELATIVE_IMPORT = re.compile(r"(?m)^[ \t]*from[ \t]+\.")
_STAR_IMPORT = re.compile(r"(?m)^[ \t]*from[ \t]+([\w.]+)[ \t]+import[ \t]*\*")


def _any_word(names: Iterable[str]) -> re.Pattern[str] | None:
    names = sorted(set(names))
    if not names:
        return None
    return re.compile(r"(?<![\w])(?:" + "|".join(map(re.escape, names)) + r")(?![\w])")


@dataclass(frozen=True)
class Plan:
    """What the prefilter decided for one project.

    `keep`: the files worth resolving. `whole`: those of them to read whole (package
    `__init__` files, and every module of a project with relative or star imports of its own
    modules); the rest may be narrowed to the statements that matter. `importable`: the narrowed
    modules another project file names, whose statements binding a name some other file spells
    stay too (importers see those bindings). `relays`: the leaf names of kept modules, the only
    project modules through which a changed member can reach another file without its name being
    spelled there.
    """

    keep: set[str] = field(default_factory=set)
    whole: set[str] = field(default_factory=set)
    relays: frozenset[str] = frozenset()
    importable: set[str] = field(default_factory=set)


class Prefilter:
    """Compiled once per scan from the change list; `candidates` runs once per project."""

    def __init__(self, library_tops: Iterable[str], member_names: Iterable[str], loose_names: Iterable[str] = ()) -> None:
        """`loose_names`: changed members that count (at possible) in any file of a project that
        uses the library, not only in files that touch it (`Query.loose_names`)."""
        self._tops = frozenset(library_tops)
        self._members = frozenset(member_names)
        self._loose = _any_word(frozenset(loose_names))
        self._library = _any_word(self._tops)
        self._member = _any_word(self._members)
        names = "|".join(map(re.escape, sorted(self._tops)))
        self._import_line = re.compile(
            rf"(?m)^[ \t]*(?:from[ \t]+(?:{names})\b|import[ \t]+(?:[\w.]+[ \t]*,[ \t]*)*(?:{names})\b)"
            # Imports made by a call name the module in a string: import_module("pkg"), __import__("pkg.sub").
            rf"|\b(?:import_module|__import__)\(\s*[rbuRBU]?['\"](?:{names})\b"
        )

    def imports_library(self, text: str) -> bool:
        """A line-level test for files that were not resolved: an import statement of the library,
        or an import by a call (`importlib.import_module`, `__import__`) that names it."""
        return any(top in text for top in self._tops) and self._import_line.search(text) is not None

    def mentions_library(self, text: str) -> bool:
        return any(top in text for top in self._tops) and self._library is not None and (
            self._library.search(text) is not None
        )

    def spells_member(self, text: str) -> bool:
        # A substring test first: it runs in C over the whole text, the word test only where it hits.
        return any(name in text for name in self._members) and self._member is not None and (
            self._member.search(text) is not None
        )

    def candidates(self, texts: Mapping[str, str]) -> set[str]:
        """The files of one project worth resolving; empty when the project never names the library."""
        return self.plan(texts).keep

    def plan(self, texts: Mapping[str, str]) -> Plan:
        """The files worth resolving, which of them to read whole, and which modules may relay a member."""
        library = {path for path, text in texts.items() if self.mentions_library(text)}
        if not library:
            return Plan()
        spelling = {path for path, text in texts.items() if self.spells_member(text)}
        if not spelling:
            return Plan()  # no file spells a changed member: there can be no seed
        relative = {path for path, text in texts.items() if _RELATIVE_IMPORT.search(text)}
        leaf = {path: module_name(path)[0].rpartition(".")[2] for path in texts}

        # Modules that touch the library: name it, or name a touching module, or import relatively.
        touching = _close(library | relative, texts, leaf)
        # Seeds spell a changed member; then whatever names (or relatively imports) a kept module.
        kept = touching & spelling
        if kept:
            kept |= relative & touching
            kept = _close(kept, texts, leaf, within=touching)
        modules = {path for path in kept if not path.endswith(".ipynb")}
        relays = frozenset(leaf[path] for path in modules if leaf[path])
        # A helper that never touches the library may be handed its objects: read it too.
        loose = {path for path in spelling - kept if self._loose is not None and self._loose.search(texts[path])}
        if relative or self._star_imports_project(texts.values()):
            # Any module may be reached by a name no file spells: read them all whole.
            return Plan(kept | loose, modules, relays)
        leaves = {leaf[path] for path in modules if leaf[path]}
        mentioned: dict[str, set[str]] = {}
        for path, text in texts.items():
            for name in _mentioned(text, leaves):
                mentioned.setdefault(name, set()).add(path)
        whole = {path for path in modules if path.endswith("__init__.py")}
        importable = {path for path in modules - whole if mentioned.get(leaf[path], set()) - {path}}
        return Plan(kept | loose, whole, relays, importable)

    def _star_imports_project(self, texts: Iterable[str]) -> bool:
        """Whether some file star-imports a module other than the library's."""
        for text in texts:
            if "*" not in text:
                continue
            for module in _STAR_IMPORT.findall(text):
                if module.split(".")[0] not in self._tops:
                    return True
        return False


def _mentioned(text: str, names: set[str]) -> set[str]:
    """Which of `names` the text spells as whole words."""
    pattern = _any_word(name for name in names if name in text)
    return set(pattern.findall(text)) if pattern is not None else set()


def _close(
    start: set[str], texts: Mapping[str, str], leaf: Mapping[str, str], within: set[str] | None = None
) -> set[str]:
    """Add files that name (as a whole word) the leaf module name of a file already in the set."""
    result = set(start)
    frontier = set(start)
    pool = set(texts) if within is None else set(within)
    while frontier:
        names = {leaf[p] for p in frontier if leaf[p] and not p.endswith(".ipynb")}
        frontier = set()
        if not names:
            break
        for path in pool - result:
            found = _mentioned(texts[path], names)
            if found and any(n != leaf[path] for n in found):
                result.add(path)
                frontier.add(path)
    return result
