"""Score the scans against the hand-checked verdicts.

    python examples/realworld/score.py --work /tmp/rw [--archives] [--verdicts DIR] [--json OUT]

A finding matches a verdict by (project, file, cell, line, change); several findings on one line
for one change are one site, at the strongest confidence among them. Per library, per scan mode
(`plain`: without the library's source; `source`: with it) and per change it prints:

  sites     true sites in the verdicts (unsure ones are left out of every figure)
  R-prec    resolved precision: true / judged, over lines with a resolved finding
  R-rec     resolved recall: true sites with a resolved finding / true sites
  any-rec   recall at any level: true sites with a finding at any level / true sites
  poss      share of lines whose strongest finding is `possible` that are true sites
  unjudged  finding lines with no verdict (listed below the table, to be judged)

and, below, the time each scan took (from run.py scan).
"""

from __future__ import annotations

import argparse
import csv
import json
from collections import defaultdict
from dataclasses import dataclass
from pathlib import Path

from run import HERE, MODES, Corpus, changes_of, load_corpus, results_dir, results_path

RANK = {"possible": 0, "inferred": 1, "resolved": 2}
Key = tuple[str, str, str, int, str]


@dataclass(frozen=True)
class Figures:
    change: str
    sites: int
    unsure: int
    resolved_judged: int
    resolved_true: int
    any_true: int
    possible_judged: int
    possible_true: int
    unjudged: int

    @staticmethod
    def ratio(num: int, den: int) -> float | None:
        return num / den if den else None

    @property
    def resolved_precision(self) -> float | None:
        return self.ratio(self.resolved_true, self.resolved_judged)

    @property
    def resolved_recall(self) -> float | None:
        return self.ratio(self.resolved_true, self.sites)

    @property
    def any_recall(self) -> float | None:
        return self.ratio(self.any_true, self.sites)

    @property
    def possible_share(self) -> float | None:
        return self.ratio(self.possible_true, self.possible_judged)


def read_verdicts(path: Path) -> dict[Key, str]:
    with path.open(newline="", encoding="utf-8") as handle:
        return {(r["project"], r["file"], r["cell"], int(r["line"]), r["change"]): r["verdict"]
                for r in csv.DictReader(handle)}


def read_findings(path: Path) -> dict[Key, str]:
    """Strongest confidence per site."""
    best: dict[Key, str] = {}
    for f in json.loads(path.read_text(encoding="utf-8"))["findings"]:
        key = (f["project"], f["file"], "" if f["cell"] is None else str(f["cell"]), int(f["line"]), f["change"])
        if key not in best or RANK[f["confidence"]] > RANK[best[key]]:
            best[key] = f["confidence"]
    return best


def figures(change: str, verdicts: dict[Key, str], found: dict[Key, str]) -> tuple[Figures, list[Key]]:
    mine = {k: v for k, v in verdicts.items() if k[4] == change}
    hits = {k: c for k, c in found.items() if k[4] == change}
    true = {k for k, v in mine.items() if v == "true"}
    judged = {k for k, v in mine.items() if v in ("true", "false")}
    resolved = {k for k, c in hits.items() if c == "resolved"}
    possible = {k for k, c in hits.items() if c == "possible"}
    unjudged = sorted(k for k in hits if k not in mine)
    return Figures(
        change=change,
        sites=len(true),
        unsure=sum(v == "unsure" for v in mine.values()),
        resolved_judged=len(resolved & judged),
        resolved_true=len(resolved & true),
        any_true=len(set(hits) & true),
        possible_judged=len(possible & judged),
        possible_true=len(possible & true),
        unjudged=len(unjudged),
    ), unjudged


def _fmt(value: float | None) -> str:
    return "   -" if value is None else f"{value:4.2f}"


def run(corpus: Corpus, work: Path, verdict_dir: Path = HERE / "verdicts", json_out: Path | None = None,
        archives: bool = False) -> int:
    summary: dict = {"libraries": {}, "archives": archives}
    timings_file = results_dir(work, archives) / "timings.json"
    timings = json.loads(timings_file.read_text()) if timings_file.exists() else {}
    for lib in corpus.libraries:
        verdicts = read_verdicts(verdict_dir / f"{lib.name}.csv")
        change_ids = [c["id"] for c in changes_of(lib)]
        summary["libraries"][lib.name] = {}
        for mode in MODES:
            if mode == "stubs" and lib.stubs is None:
                continue  # no stub package pinned for this library
            path = results_path(work, lib.name, mode, archives)
            if not path.exists():
                print(f"{lib.name} {mode}: no results at {path} (run.py scan first)")
                continue
            found = read_findings(path)
            judged_changes = {k[4] for k in verdicts}
            label = {"plain": "without the library's source", "source": "with the library's source",
                     "stubs": f"with the library's source and {lib.stubs.name if lib.stubs else 'its'} stubs"}[mode]
            print(f"\n{lib.name} {lib.old.version} -> {lib.new.version}, {label} "
                  f"(scan {timings.get(f'{lib.name}-{mode}', '?')} s)")
            print(f"  {'change':26} {'sites':>5} {'R-prec':>6} {'R-rec':>6} {'any-rec':>7} {'poss':>5} "
                  f"{'R/I/P lines':>12} {'unjudged':>8}")
            rows, all_unjudged = [], []
            totals = defaultdict(int)
            for cid in change_ids:
                if cid not in judged_changes and not any(k[4] == cid for k in found):
                    continue  # no candidate at all: nothing to score
                fig, unjudged = figures(cid, verdicts, found)
                all_unjudged += unjudged
                levels = defaultdict(int)
                for k, c in found.items():
                    if k[4] == cid:
                        levels[c] += 1
                print(f"  {cid:26} {fig.sites:5} {_fmt(fig.resolved_precision):>6} {_fmt(fig.resolved_recall):>6} "
                      f"{_fmt(fig.any_recall):>7} {_fmt(fig.possible_share):>5} "
                      f"{levels['resolved']:>4}/{levels['inferred']}/{levels['possible']:<4} {fig.unjudged:8}"
                      + (f"  ({fig.unsure} unsure)" if fig.unsure else ""))
                for field in ("sites", "unsure", "resolved_judged", "resolved_true", "any_true",
                              "possible_judged", "possible_true", "unjudged"):
                    totals[field] += getattr(fig, field)
                rows.append({**fig.__dict__, "resolved_precision": fig.resolved_precision,
                             "resolved_recall": fig.resolved_recall, "any_recall": fig.any_recall,
                             "possible_share": fig.possible_share})
            total = Figures(change="all", **totals)
            print(f"  {'all changes':26} {total.sites:5} {_fmt(total.resolved_precision):>6} "
                  f"{_fmt(total.resolved_recall):>6} {_fmt(total.any_recall):>7} {_fmt(total.possible_share):>5} "
                  f"{'':>12} {total.unjudged:8}")
            for key in all_unjudged[:40]:
                print(f"    unjudged: {key[0]},{key[1]},{key[2]},{key[3]},{key[4]} ({found[key]})")
            if len(all_unjudged) > 40:
                print(f"    ... and {len(all_unjudged) - 40} more")
            summary["libraries"][lib.name][mode] = {
                "seconds": timings.get(f"{lib.name}-{mode}"), "changes": rows,
                "all": {**total.__dict__, "resolved_precision": total.resolved_precision,
                        "resolved_recall": total.resolved_recall, "any_recall": total.any_recall,
                        "possible_share": total.possible_share},
                "unjudged": [list(k) for k in all_unjudged]}
    if json_out is not None:
        json_out.write_text(json.dumps(summary, indent=1))
    return 0


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--work", type=Path, required=True)
    parser.add_argument("--verdicts", type=Path, default=HERE / "verdicts")
    parser.add_argument("--json", type=Path, help="also write the figures here")
    parser.add_argument("--archives", action="store_true", help="score the scans of the archives (run.py scan --archives)")
    args = parser.parse_args()
    return run(load_corpus(), args.work.resolve(), args.verdicts, args.json, args.archives)


if __name__ == "__main__":
    raise SystemExit(main())
