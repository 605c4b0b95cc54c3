"""Population estimates from a sample of projects: shares with intervals, and sample sizes.

A scan of a sample of downstream projects says "k of n use the member"; a maintainer wants "about
this share of all N projects, give or take". The methods here are the published ones, by name:

- the Wilson (1927) score interval for a binomial proportion, which behaves well near 0 and 1
  where the normal ("Wald") interval collapses; the formula is the one in Newcombe (1998), method 3;
- a finite population correction when the sample is a large part of a known population;
- Kish's effective sample size for weighted samples (e.g. projects weighted by downloads);
- Cochran's (1977) sample size formula, with its finite population correction.

The normal quantile comes from `statistics.NormalDist`, so there is no runtime dependency on scipy.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from statistics import NormalDist

from impactscope.errors import InputError

__all__ = [
    "EstimateError",
    "Interval",
    "cochran_sample_size",
    "kish_effective_n",
    "weighted_share",
    "wilson_interval",
]


class EstimateError(InputError):
    """An argument to an estimate is out of its domain."""


@dataclass(frozen=True)
class Interval:
    """An estimated share with a two-sided confidence interval.

    `n` is the sample size the interval was computed from: the count of sampled projects, or
    Kish's effective sample size for a weighted share (hence a float).
    """

    estimate: float
    low: float
    high: float
    confidence: float
    n: float

    @property
    def width(self) -> float:
        return self.high - self.low


def _z(confidence: float) -> float:
    """The two-sided normal quantile for `confidence`."""
    if not isinstance(confidence, (int, float)) or not 0.0 < confidence < 1.0:
        raise EstimateError(f"confidence must be a number strictly between 0 and 1, got {confidence!r}")
    return NormalDist().inv_cdf(0.5 + confidence / 2.0)


def _score_bounds(p: float, n: float, z2: float) -> tuple[float, float]:
    """Wilson score bounds for share `p` over `n` trials, with `z2` standing for z squared.

    The algebraic form is Newcombe's (1998): (2np + z^2 +- z sqrt(z^2 + 4npq)) / (2(n + z^2)).
    """
    denom = 2.0 * (n + z2)
    center = (2.0 * n * p + z2) / denom
    delta = math.sqrt(z2 * (4.0 * n * p * (1.0 - p) + z2)) / denom
    # At p == 0 and p == 1 the bounds are exactly 0 and 1 algebraically; pin them so rounding
    # never puts them a hair outside [0, 1].
    low = 0.0 if p <= 0.0 else max(0.0, center - delta)
    high = 1.0 if p >= 1.0 else min(1.0, center + delta)
    return low, high


def wilson_interval(
    successes: int,
    n: int,
    confidence: float = 0.95,
    population: int | None = None,
) -> Interval:
    """Wilson (1927) score interval for `successes` out of `n` sampled projects.

    With `population` (the number N of projects the sample of n was drawn from without
    replacement), the finite population correction f = (N - n) / (N - 1) shrinks the variance.
    The correction is applied by replacing z^2 with z^2 * f everywhere in the Wilson formula,
    which is the score interval whose variance term p(1 - p)/n is multiplied by f. So the
    interval narrows as n approaches N and has zero width at the observed share when n == N
    (the whole population was seen). With n == 0 nothing is known: estimate 0, interval [0, 1].
    """
    for label, value in (("successes", successes), ("n", n)):
        if isinstance(value, bool) or not isinstance(value, int) or value < 0:
            raise EstimateError(f"{label} must be a non-negative integer, got {value!r}")
    if successes > n:
        raise EstimateError(f"successes ({successes}) cannot exceed the sample size n ({n})")
    z = _z(confidence)
    correction = 1.0
    if population is not None:
        if isinstance(population, bool) or not isinstance(population, int) or population < n:
            raise EstimateError(
                f"population must be an integer at least the sample size n ({n}), got {population!r}"
            )
    if n == 0:
        return Interval(estimate=0.0, low=0.0, high=1.0, confidence=confidence, n=0.0)
    if population is not None:
        correction = 0.0 if population == n else (population - n) / (population - 1)
    p = successes / n
    if correction == 0.0:
        return Interval(estimate=p, low=p, high=p, confidence=confidence, n=float(n))
    low, high = _score_bounds(p, float(n), z * z * correction)
    return Interval(estimate=p, low=low, high=high, confidence=confidence, n=float(n))


def _check_weights(weights: Sequence[float], label: str) -> list[float]:
    checked = []
    for index, w in enumerate(weights):
        if isinstance(w, bool) or not isinstance(w, (int, float)) or not math.isfinite(w) or w < 0:
            raise EstimateError(f"{label}[{index}] must be a finite non-negative number, got {w!r}")
        checked.append(float(w))
    return checked


def kish_effective_n(weights: Sequence[float]) -> float:
    """Kish's effective sample size, (sum w)^2 / sum w^2.

    It equals the count when all weights are equal and falls towards 1 as one weight dominates.
    No weights, or only zero weights, give 0.
    """
    ws = _check_weights(weights, "weights")
    squares = math.fsum(w * w for w in ws)
    if squares == 0.0:
        return 0.0
    total = math.fsum(ws)
    return total * total / squares


def weighted_share(
    hit_weights: Sequence[float],
    all_weights: Sequence[float],
    confidence: float = 0.95,
) -> Interval:
    """Weighted share sum(hit) / sum(all), with a Wilson interval at Kish's effective n.

    `all_weights` are the weights of every sampled project and `hit_weights` those of the
    sampled projects that use the member (a sub-multiset of `all_weights`). Treating the
    weighted share as a proportion over Kish's effective n is the usual design-effect
    approximation; it is not exact for any one weighting scheme.
    """
    hits = _check_weights(hit_weights, "hit_weights")
    everything = _check_weights(all_weights, "all_weights")
    if len(hits) > len(everything):
        raise EstimateError(
            f"hit_weights has {len(hits)} entries but all_weights only {len(everything)};"
            " the hits must be a subset of all sampled projects"
        )
    z = _z(confidence)
    total = math.fsum(everything)
    n_eff = kish_effective_n(everything)
    if total == 0.0 or n_eff == 0.0:
        return Interval(estimate=0.0, low=0.0, high=1.0, confidence=confidence, n=0.0)
    hit_total = math.fsum(hits)
    # Allow for rounding in the two sums; anything beyond that is a caller error.
    if hit_total > total * (1.0 + 1e-12):
        raise EstimateError(
            f"hit weights sum to {hit_total!r}, more than all weights ({total!r});"
            " the hits must be a subset of all sampled projects"
        )
    p = min(1.0, hit_total / total)
    low, high = _score_bounds(p, n_eff, z * z)
    return Interval(estimate=p, low=low, high=high, confidence=confidence, n=n_eff)


def cochran_sample_size(
    margin: float,
    confidence: float = 0.95,
    p: float = 0.5,
    population: int | None = None,
) -> int:
    """Cochran's (1977) sample size for estimating a share within +-`margin`.

    n0 = z^2 p (1 - p) / margin^2; with a finite `population` N, n = n0 / (1 + (n0 - 1) / N).
    The result is rounded up, is at least 1, and is at most N. p = 0.5 is the conservative
    choice when nothing is known about the share.
    """
    if not isinstance(margin, (int, float)) or not 0.0 < margin < 1.0:
        raise EstimateError(f"margin must be a number strictly between 0 and 1, got {margin!r}")
    if not isinstance(p, (int, float)) or not 0.0 <= p <= 1.0:
        raise EstimateError(f"p must be a number between 0 and 1, got {p!r}")
    z = _z(confidence)
    size = z * z * p * (1.0 - p) / (margin * margin)
    if population is not None:
        if isinstance(population, bool) or not isinstance(population, int) or population < 1:
            raise EstimateError(f"population must be a positive integer, got {population!r}")
        size = size / (1.0 + (size - 1.0) / population)
    # Round up, but do not let float noise such as 100.00000000000001 cost a whole project.
    needed = max(1, math.ceil(size - 1e-9))
    return needed if population is None else min(needed, population)
