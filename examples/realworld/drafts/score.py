"""Score the drafts of `compare` and `harvest` against what each library's release notes list.

    python examples/realworld/drafts/score.py --work /tmp/drafts

For each library (libraries.toml) and each draft (`<work>/drafts/<name>-compare.toml`,
`-harvest.toml`), against the documented removals and renames (notes/*.toml):

- recall: the share of documented items the draft covers. An entry covers an item when it names
  the same member (the same definition, through the library's re-exports) with a kind that says
  it is gone (removed, renamed, moved), or the same parameter of it with a parameter kind, or a
  module or class the item lives in as gone. Also given over the items whose member the old
  version's readable source (Python files and stubs in the wheel) defines: a member compiled
  into an extension module without a stub entry is out of reach of any static reading.
- right at the highest certainty: the share of `certainty = "high"` entries that are right, that
  is documented (they cover an item, or an item covers them) or verified: an independent reading
  of the two wheels (plain `ast`, written here, sharing no code with impactscope) shows the claim:
  the member is defined in the old version and not in the new one, the parameter is in an old
  signature of that name and in no new one, the default's value differs, the return annotation
  changed.
- private or scaffolding members: entries whose path has a private segment or names a test,
  conftest, example or benchmark module (must be 0 in a default draft).

Nothing is imported from the libraries; their files are read as text.
"""

from __future__ import annotations

import argparse
import ast
import json
import re
import sys
import tomllib
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from measure import load_libraries, source_of  # noqa: E402

from impactscope.surface.build import build_for_drafts  # noqa: E402

GONE = ("removed", "renamed", "moved")
PARAMETER = ("parameter-removed", "parameter-renamed")
SCAFFOLDING = re.compile(r"^(tests?|conftest|examples?|benchmarks?|asv_bench|test_.*|.*_tests?)$")


# -- an independent reading of a package: plain ast, nothing shared with impactscope ------------


@dataclass
class Reading:
    """Names each module binds, class members by class name, signatures by (class, function)."""

    names: dict[str, set[str]] = field(default_factory=dict)
    stars: dict[str, list[str]] = field(default_factory=dict)
    classes: dict[str, tuple[set[str], list[str]]] = field(default_factory=dict)
    defs: dict[str, list[dict[str, str | None]]] = field(default_factory=dict)  # "Cls.f" and "f" -> [{param: default}]
    positional: dict[str, list[list[str]]] = field(default_factory=dict)  # "f" -> positional parameter names, per def
    returns: dict[str, set[str]] = field(default_factory=dict)

    def binds(self, module: str, name: str, seen: frozenset[str] = frozenset()) -> bool:
        if module in seen or module not in self.names:
            return False
        return name in self.names[module] or any(self.binds(m, name, seen | {module}) for m in self.stars[module])

    def class_has(self, cls: str, name: str, seen: frozenset[str] = frozenset()) -> bool:
        if cls in seen or cls not in self.classes:
            return False
        members, bases = self.classes[cls]
        return name in members or any(self.class_has(b, name, seen | {cls}) for b in bases)

    def has(self, dotted: str) -> bool:
        if dotted in self.names:
            return True
        parent, _, last = dotted.rpartition(".")
        if parent in self.names:
            return self.binds(parent, last)
        owner = parent.rpartition(".")[2]
        return bool(owner) and self.class_has(owner, last)

    def mro(self, cls: str, seen: frozenset[str] = frozenset()) -> list[str]:
        if cls in seen or cls not in self.classes:
            return []
        return [cls, *(c for b in self.classes[cls][1] for c in self.mro(b, seen | {cls}))]

    def signatures(self, dotted: str, table: str = "defs") -> list:
        """Signatures of `dotted`: a method through its class's bases, a class by its __init__/__new__,
        else every function of that name (an over-approximation, which only makes checks stricter)."""
        found_in: dict = getattr(self, table)
        parts = dotted.split(".")
        owner, last = (parts[-2] if len(parts) > 1 else ""), parts[-1]
        for cls in self.mro(owner):
            if f"{cls}.{last}" in found_in:
                return found_in[f"{cls}.{last}"]
        for cls in self.mro(last):
            found = found_in.get(f"{cls}.__init__", []) + found_in.get(f"{cls}.__new__", [])
            if found:
                return found
        return found_in.get(last, [])


def _absolute(module: str, node: ast.ImportFrom, is_package: bool) -> str:
    if not node.level:
        return node.module or ""
    base = module.split(".")[: len(module.split(".")) - node.level + (1 if is_package else 0)]
    return ".".join(base + ([node.module] if node.module else []))


def read(package: Path) -> Reading:
    out = Reading()
    for path in sorted([*package.rglob("*.py"), *package.rglob("*.pyi")]):
        rel = path.relative_to(package.parent).with_suffix("")
        if "tests" in rel.parts:
            continue
        is_package = rel.name == "__init__"
        module = ".".join(rel.parts[:-1] if is_package else rel.parts)
        bound, starred = out.names.setdefault(module, set()), out.stars.setdefault(module, [])
        try:
            tree = ast.parse(path.read_bytes())
        except (SyntaxError, ValueError):
            continue
        for item in _top(tree.body):
            if isinstance(item, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)):
                bound.add(item.name)
            elif isinstance(item, (ast.Assign, ast.AnnAssign)):
                targets = item.targets if isinstance(item, ast.Assign) else [item.target]
                bound.update(t.id for t in targets if isinstance(t, ast.Name))
            elif isinstance(item, ast.Import):
                bound.update((a.asname or a.name).split(".")[0] for a in item.names)
            elif isinstance(item, ast.ImportFrom):
                for alias in item.names:
                    if alias.name == "*":
                        starred.append(_absolute(module, item, is_package))
                    else:
                        bound.add(alias.asname or alias.name)
            if isinstance(item, ast.FunctionDef) and item.name == "__getattr__":
                # PEP 562: a name a branch returns for still answers (one that raises does not).
                for branch in ast.walk(item):
                    if isinstance(branch, ast.If) and not any(isinstance(s, ast.Raise) for s in branch.body):
                        bound.update(c.value for c in ast.walk(branch.test)
                                     if isinstance(c, ast.Constant) and isinstance(c.value, str))
        for node in ast.walk(tree):
            if isinstance(node, ast.ClassDef):
                members, bases = out.classes.setdefault(node.name, (set(), []))
                heads = [b.value if isinstance(b, ast.Subscript) else b for b in node.bases]  # Base[T] -> Base
                bases.extend(b.id if isinstance(b, ast.Name) else b.attr for b in heads
                             if isinstance(b, (ast.Name, ast.Attribute)))
                for item in node.body:
                    if isinstance(item, (ast.FunctionDef, ast.AsyncFunctionDef)):
                        members.add(item.name)
                        _signature(out, f"{node.name}.{item.name}", item)
                    elif isinstance(item, (ast.Assign, ast.AnnAssign)):
                        targets = item.targets if isinstance(item, ast.Assign) else [item.target]
                        members.update(t.id for t in targets if isinstance(t, ast.Name))
                for sub in ast.walk(node):  # instance attributes: `self.x = ...` in any method
                    if isinstance(sub, (ast.Assign, ast.AnnAssign)):
                        targets = sub.targets if isinstance(sub, ast.Assign) else [sub.target]
                        members.update(t.attr for t in targets if isinstance(t, ast.Attribute)
                                       and isinstance(t.value, ast.Name) and t.value.id == "self")
            elif isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                _signature(out, node.name, node)
    return out


def _top(body: list[ast.stmt]):
    """Module-level statements, also those under if/else, try/except and with blocks."""
    for node in body:
        if isinstance(node, (ast.If, ast.Try, ast.With)) or type(node).__name__ == "TryStar":
            yield from _top([*node.body, *getattr(node, "orelse", []), *getattr(node, "finalbody", []),
                             *(s for h in getattr(node, "handlers", []) for s in h.body)])
        else:
            yield node


def _signature(out: Reading, key: str, node: ast.FunctionDef | ast.AsyncFunctionDef) -> None:
    a = node.args
    positional = [*a.posonlyargs, *a.args]
    params: dict[str, str | None] = {x.arg: None for x in positional}
    for x, d in zip(positional[len(positional) - len(a.defaults):], a.defaults):
        params[x.arg] = ast.unparse(d)
    for x, d in zip(a.kwonlyargs, a.kw_defaults):
        params[x.arg] = None if d is None else ast.unparse(d)
    for deco in node.decorator_list:  # a keyword a renaming decorator still accepts (common practice)
        if isinstance(deco, ast.Call):
            for k in deco.keywords:
                if k.arg == "old_arg_name" and isinstance(k.value, ast.Constant) and isinstance(k.value.value, str):
                    params.setdefault(k.value.value, "<accepted by a decorator>")
    for k in {key, key.rpartition(".")[2]}:
        out.defs.setdefault(k, []).append(params)
    for k in {key, key.rpartition(".")[2]}:
        out.positional.setdefault(k, []).append([x.arg for x in positional])
    if node.returns is not None:
        out.returns.setdefault(key, set()).add(ast.unparse(node.returns))


def _value(text: str | None) -> object:
    if text is None:
        return ("required",)
    if text == "...":
        return None  # a stub's or an overload's "some default"
    try:
        return ("literal", repr(ast.literal_eval(text)))
    except (ValueError, SyntaxError, TypeError, MemoryError, RecursionError):
        return ("text", text.rpartition(".")[2])


def verified(entry: dict, old: Reading, new: Reading) -> bool:
    """The entry's claim, checked on the independent reading of both versions."""
    member, kind = entry["member"], entry["kind"]
    if kind in GONE:
        return old.has(member) and not new.has(member)
    old_sigs, new_sigs = old.signatures(member), new.signatures(member)
    p = entry.get("parameter")
    if kind in PARAMETER:
        if any(w in entry["note"] for w in ("keyword only", "changed order", "by position")):
            return keyword_only_verified(entry, old, new)
        return any(p in s for s in old_sigs) and not any(p in s for s in new_sigs)
    if kind == "default-changed":
        if not any(p in s for s in old_sigs):
            return any(s.get(p, "x") is None for s in new_sigs)  # a new required parameter
        before = {_value(s[p]) for s in old_sigs if p in s} - {None}
        after = {_value(s[p]) for s in new_sigs if p in s} - {None}
        return bool(before) and bool(after) and not (before & after)
    if kind == "behaviour-changed" and member in old.names:
        # a module that no longer defines names it did (what a folded shim entry says)
        return bool(old.names[member] - new.names.get(member, set()))
    if kind == "behaviour-changed":
        key = ".".join(member.split(".")[-2:])
        return old.returns.get(key, set()) != new.returns.get(key, set())
    return False


def keyword_only_verified(entry: dict, old: Reading, new: Reading) -> bool:
    """For a positional slot that went (keyword-only or reordered): the parameter's position differs."""
    def positions(reading: Reading) -> set[int | None]:
        p = entry["parameter"]
        return {names.index(p) if p in names else None for names in reading.signatures(entry["member"], "positional")}
    return positions(old) != positions(new)


# -- scoring ------------------------------------------------------------------------------------


def documented(entry: dict, items: list[dict], canonical) -> bool:
    """The entry covers a documented item, or a documented item covers it."""
    return any(covers(entry, it, canonical) or covers({**it, "parameter": None}, {**entry}, canonical) for it in items)


def covers(entry: dict, item: dict, canonical) -> bool:
    e, m = canonical(entry["member"]), canonical(item["member"])
    if item["kind"] in PARAMETER:
        if entry["kind"] in PARAMETER and entry.get("parameter") == item["parameter"] and (e == m or entry["member"] == item["member"]):
            return True
    elif entry["kind"] in GONE and (e == m or entry["member"] == item["member"]):
        return True
    # a module or class the item lives in, drafted as gone
    return entry["kind"] in GONE and (m.startswith(e + ".") or item["member"].startswith(entry["member"] + "."))


def private(member: str) -> bool:
    segments = member.split(".")
    return any((s.startswith("_") and not (s.startswith("__") and s.endswith("__"))) or SCAFFOLDING.match(s) for s in segments)


def score_library(lib, work: Path) -> dict:
    items = tomllib.loads(lib.documented.read_text(encoding="utf-8"))["item"]
    old_pkg, new_pkg = source_of(work, lib, "old"), source_of(work, lib, "new")
    surface, _ = build_for_drafts(old_pkg, lib.name)
    old, new = read(old_pkg), read(new_pkg)

    def canonical(path: str) -> str:
        return surface.canonical(path)

    visible = [it for it in items if surface.member(it["member"]) is not None]
    out: dict = {"documented": len(items), "documented_in_readable_source": len(visible)}
    for what in ("compare", "harvest"):
        path = work / "drafts" / f"{lib.name}-{what}.toml"
        if not path.exists():
            continue
        entries = tomllib.loads(path.read_text(encoding="utf-8")).get("change", [])
        hit = [it for it in items if any(covers(e, it, canonical) for e in entries)]
        top = next((c for c in ("high", "medium", "low") if any(e.get("certainty") == c for e in entries)), "high")
        high = [e for e in entries if e.get("certainty") == top]
        documented = [e for e in high if any(covers(e, it, canonical) or covers({**it, "parameter": None}, {**e}, canonical)
                                             for it in items)]
        checked = [e for e in high if e not in documented and verified(e, old, new)]
        wrong = [e for e in high if e not in documented and e not in checked]

        def right(e: dict) -> bool:
            return any(covers(e, it, canonical) or covers({**it, "parameter": None}, {**e}, canonical) for it in items) \
                or verified(e, old, new)

        tiers = {c: [e for e in entries if e.get("certainty") == c] for c in ("high", "medium", "low")}
        right_by = {c: round(sum(map(right, es)) / len(es), 3) for c, es in tiers.items() if es}
        out[what] = {
            "entries": len(entries),
            "by_certainty": dict(Counter(e.get("certainty") for e in entries)),
            "by_kind": dict(Counter(e["kind"] for e in entries)),
            "recall": round(len(hit) / len(items), 3) if items else None,
            "recall_readable": round(sum(1 for it in hit if it in visible) / len(visible), 3) if visible else None,
            "missed": [f"{it['kind']} {it['member']}" + (f" ({it['parameter']})" if it.get("parameter") else "")
                       for it in items if it not in hit],
            "highest": top,
            "high": len(high),
            "high_documented": len(documented),
            "high_verified": len(checked),
            "high_right": round((len(documented) + len(checked)) / len(high), 3) if high else None,
            "right_by_certainty": right_by,
            "high_wrong": [f"{e['kind']} {e['member']}" + (f" ({e['parameter']})" if e.get("parameter") else "") for e in wrong],
            "private_or_scaffolding": [e["member"] for e in entries if private(e["member"])],
        }
    return out


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--work", type=Path, required=True)
    parser.add_argument("--verbose", action="store_true", help="list the missed items and the wrong high entries")
    args = parser.parse_args(argv)
    work = args.work.resolve()
    figures = {}
    for lib in load_libraries():
        figures[lib.name] = found = score_library(lib, work)
        print(f"{lib.name} {lib.old.version} -> {lib.new.version}: {found['documented']} documented removals and renames "
              f"({found['documented_in_readable_source']} in the readable source)")
        for what in ("compare", "harvest"):
            s = found.get(what)
            if s is None:
                continue
            print(f"  {what:8} {s['entries']:4} entries {s['by_certainty']}; recall {s['recall']} "
                  f"(readable {s['recall_readable']}); {s['highest']} right {s['high_right']} "
                  f"({s['high_documented']} documented + {s['high_verified']} verified of {s['high']}; by certainty "
                  f"{s['right_by_certainty']}); "
                  f"private/scaffolding {len(s['private_or_scaffolding'])}")
            if args.verbose:
                for line in s["missed"]:
                    print(f"      missed: {line}")
                for line in s["high_wrong"]:
                    print(f"      high, not shown right: {line}")
    (work / "drafts" / "scores.json").write_text(json.dumps(figures, indent=1) + "\n")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
