"""Population lists and reproducible samples of projects.

When the population of downstream projects is too large to scan, a maintainer scans a random
sample and lets `impactscope.estimate` size the whole. This module reads the population list and
draws the sample. A population list is either

- a text file: one project name or path per line; blank lines are ignored, and a `#` at the
  start of a line or after whitespace starts a comment (so `a#b` stays a name); or
- a CSV file (chosen by the `.csv` suffix) with a header row: the first column holds the project
  and an optional column headed `weight` (any case) a non-negative number such as downloads.
  Projects without a weight column weigh 1.

Samples are reproducible: the same names, size and seed give the same sample (for the same
Python version, whose `random` module fixes the stream). Samples come back in population order,
not draw order, so they diff cleanly.
"""

from __future__ import annotations

import csv
import io
import math
import os
import random
import re
from collections.abc import Sequence
from dataclasses import dataclass

from impactscope.errors import InputError
from impactscope.estimate import EstimateError, cochran_sample_size

__all__ = [
    "Member",
    "Population",
    "SamplingError",
    "draw_sample",
    "draw_stratified",
    "needed_size",
    "parse_population",
    "read_population",
    "weight_strata",
]

_COMMENT = re.compile(r"(^|\s)#.*$")


class SamplingError(InputError):
    """A population list or a sample request that cannot be honoured."""


@dataclass(frozen=True)
class Member:
    """One project of a population; `line` is its 1-based line in the list file."""

    name: str
    weight: float
    line: int


@dataclass(frozen=True)
class Population:
    """The projects of a population list, in file order; `source` names the file."""

    source: str
    members: tuple[Member, ...]

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(m.name for m in self.members)

    @property
    def weights(self) -> tuple[float, ...]:
        return tuple(m.weight for m in self.members)

    def __len__(self) -> int:
        return len(self.members)

    def sample(self, size: int, seed: int | str) -> list[str]:
        """`draw_sample` over this population; errors name the list file."""
        return draw_sample(self.names, size, seed, source=self.source)

    def stratified(self, size: int, seed: int | str, strata: int = 4) -> list[str]:
        """`draw_stratified` over this population's weights; errors name the list file."""
        return draw_stratified(self.names, self.weights, size, seed, strata, source=self.source)


def _parse_weight(text: str, source: str, line: int) -> float:
    try:
        weight = float(text)
    except ValueError:
        raise SamplingError(f"{source}:{line}: weight {text!r} is not a number") from None
    if not math.isfinite(weight) or weight < 0:
        raise SamplingError(f"{source}:{line}: weight {text!r} must be a finite number >= 0")
    return weight


def _parse_text(text: str, source: str) -> list[Member]:
    members = []
    for number, raw in enumerate(text.splitlines(), start=1):
        name = _COMMENT.sub("", raw).strip()
        if name:
            members.append(Member(name, 1.0, number))
    return members


def _parse_csv(text: str, source: str) -> list[Member]:
    reader = csv.reader(io.StringIO(text))
    header = next(reader, None)
    if header is None or not any(cell.strip() for cell in header):
        raise SamplingError(f"{source}:1: a CSV population list needs a header row")
    labels = [cell.strip().lower() for cell in header]
    weight_column = labels.index("weight") if "weight" in labels else None
    if weight_column == 0:
        raise SamplingError(f"{source}:1: the first column must hold the project, not the weight")
    members = []
    for row in reader:
        # line_num counts physical lines read, so it is the row's last line; rows are one line
        # unless a quoted cell spans several.
        number = reader.line_num
        if not any(cell.strip() for cell in row):
            continue
        name = row[0].strip()
        if not name:
            raise SamplingError(f"{source}:{number}: the project (first column) is empty")
        weight = 1.0
        if weight_column is not None:
            if weight_column >= len(row) or not row[weight_column].strip():
                raise SamplingError(f"{source}:{number}: project {name!r} has no weight")
            weight = _parse_weight(row[weight_column].strip(), source, number)
        members.append(Member(name, weight, number))
    return members


def parse_population(text: str, source: str = "<population>", *, csv_format: bool = False) -> Population:
    """Parse a population list held in `text`; `source` is used in error messages."""
    members = _parse_csv(text, source) if csv_format else _parse_text(text, source)
    if not members:
        raise SamplingError(f"{source}: the population list names no projects")
    first_line: dict[str, int] = {}
    for member in members:
        if member.name in first_line:
            raise SamplingError(
                f"{source}:{member.line}: project {member.name!r} is listed twice"
                f" (first on line {first_line[member.name]})"
            )
        first_line[member.name] = member.line
    return Population(source, tuple(members))


def read_population(path: str | os.PathLike[str]) -> Population:
    """Read a population list file (CSV when the name ends in `.csv`, else text)."""
    source = os.fspath(path)
    try:
        with open(source, encoding="utf-8-sig", newline="") as handle:
            text = handle.read()
    except OSError as exc:
        raise SamplingError(f"{source}: cannot read the population list ({exc.strerror})") from None
    except UnicodeDecodeError as exc:
        raise SamplingError(f"{source}: the population list is not UTF-8 ({exc.reason})") from None
    return parse_population(text, source, csv_format=source.lower().endswith(".csv"))


def _check_names(names: Sequence[str], source: str) -> None:
    if not names:
        raise SamplingError(f"{source}: the population is empty")
    seen: set[str] = set()
    for name in names:
        if name in seen:
            raise SamplingError(f"{source}: project {name!r} appears more than once")
        seen.add(name)


def _check_size(size: int, total: int, source: str) -> None:
    if isinstance(size, bool) or not isinstance(size, int) or size < 0:
        raise SamplingError(f"{source}: sample size must be a non-negative integer, got {size!r}")
    if size > total:
        raise SamplingError(f"{source}: sample size {size} exceeds the population of {total} projects")


def draw_sample(names: Sequence[str], size: int, seed: int | str, *, source: str = "population") -> list[str]:
    """A simple random sample of `size` distinct names, without replacement, in population order."""
    _check_names(names, source)
    _check_size(size, len(names), source)
    picked = random.Random(seed).sample(range(len(names)), size)
    return [names[i] for i in sorted(picked)]


def weight_strata(names: Sequence[str], weights: Sequence[float], strata: int = 4) -> tuple[tuple[str, ...], ...]:
    """Split the population into `strata` weight-quantile strata, lightest first.

    Projects are ranked by weight (ties kept in population order) and the ranking is cut into
    `strata` runs of equal size, the first runs taking one extra project when the count does not
    divide. Cutting by rank rather than by weight value keeps every stratum non-empty even when
    many weights tie. Fewer projects than strata give one stratum per project.
    """
    return tuple(tuple(names[i] for i in group) for group in _strata_indices(names, weights, strata, "population"))


def _strata_indices(
    names: Sequence[str], weights: Sequence[float], strata: int, source: str
) -> list[list[int]]:
    _check_names(names, source)
    if len(weights) != len(names):
        raise SamplingError(f"{source}: {len(names)} projects but {len(weights)} weights")
    for name, weight in zip(names, weights):
        if isinstance(weight, bool) or not isinstance(weight, (int, float)) or not math.isfinite(weight) or weight < 0:
            raise SamplingError(f"{source}: project {name!r} has weight {weight!r}; expected a finite number >= 0")
    if isinstance(strata, bool) or not isinstance(strata, int) or strata < 1:
        raise SamplingError(f"{source}: strata must be a positive integer, got {strata!r}")
    ranked = sorted(range(len(names)), key=lambda i: (weights[i], i))
    count = min(strata, len(ranked))
    base, extra = divmod(len(ranked), count)
    groups, start = [], 0
    for h in range(count):
        end = start + base + (1 if h < extra else 0)
        groups.append(ranked[start:end])
        start = end
    return groups


def _allocate(sizes: Sequence[int], total: int) -> list[int]:
    """Proportional allocation of `total` draws over strata of `sizes`, by largest remainder."""
    population = sum(sizes)
    shares = [total * s / population for s in sizes]
    counts = [math.floor(x) for x in shares]
    # Hand out what flooring left over to the largest remainders (ties to the earlier stratum).
    order = sorted(range(len(sizes)), key=lambda h: (-(shares[h] - counts[h]), h))
    for h in order[: total - sum(counts)]:
        counts[h] += 1
    if total >= len(sizes):
        # Every stratum is represented once the sample can afford it; the draw comes from the
        # stratum furthest above its proportional share.
        for h in range(len(sizes)):
            if counts[h] == 0:
                donor = max(
                    (g for g in range(len(sizes)) if counts[g] > 1),
                    key=lambda g: (counts[g] - shares[g], -g),
                )
                counts[donor] -= 1
                counts[h] += 1
    return counts


def draw_stratified(
    names: Sequence[str],
    weights: Sequence[float],
    size: int,
    seed: int | str,
    strata: int = 4,
    *,
    source: str = "population",
) -> list[str]:
    """A stratified random sample: weight-quantile strata, proportional allocation.

    Strata are those of `weight_strata`. Each stratum h of N_h projects gets n_h = size * N_h / N
    draws, rounded by largest remainder so the n_h add up to `size`; when `size` is at least the
    number of strata every stratum gets at least one. Within a stratum the draw is a simple random
    sample. Because allocation is proportional, the sample is (up to rounding) self-weighting:
    every project had about the same chance, so plain shares over the sample stay unbiased while
    the strata guarantee heavy and light projects are both seen.
    """
    groups = _strata_indices(names, weights, strata, source)
    _check_size(size, len(names), source)
    rng = random.Random(seed)
    picked: list[int] = []
    for group, count in zip(groups, _allocate([len(g) for g in groups], size)):
        picked.extend(rng.sample(group, count))
    return [names[i] for i in sorted(picked)]


def needed_size(population_size: int, margin: float, confidence: float = 0.95) -> int:
    """Projects to sample to estimate a share within +-`margin` (Cochran's formula with FPC, p = 0.5)."""
    if isinstance(population_size, bool) or not isinstance(population_size, int) or population_size < 1:
        raise SamplingError(f"population size must be a positive integer, got {population_size!r}")
    try:
        return cochran_sample_size(margin, confidence, p=0.5, population=population_size)
    except EstimateError as exc:
        raise SamplingError(str(exc)) from None
