import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from impactscope.estimate import (
    EstimateError,
    Interval,
    cochran_sample_size,
    kish_effective_n,
    weighted_share,
    wilson_interval,
)

scipy_stats = pytest.importorskip("scipy.stats")

CONFIDENCES = (0.8, 0.9, 0.95, 0.99, 0.999)


@st.composite
def counts(draw):
    n = draw(st.integers(min_value=1, max_value=2000))
    k = draw(st.integers(min_value=0, max_value=n))
    return k, n


# Source: scipy.stats.binomtest(k, n).proportion_ci(method="wilson"), the reference
# implementation of the Wilson score interval without continuity correction.
@settings(max_examples=200, deadline=None)
@given(counts(), st.sampled_from(CONFIDENCES))
def test_wilson_matches_scipy(kn, confidence):
    k, n = kn
    ours = wilson_interval(k, n, confidence)
    ref = scipy_stats.binomtest(k, n).proportion_ci(confidence_level=confidence, method="wilson")
    assert ours.low == pytest.approx(ref.low, abs=1e-9)
    assert ours.high == pytest.approx(ref.high, abs=1e-9)
    assert ours.estimate == k / n
    assert ours.n == n
    assert ours.confidence == confidence


# Source: Newcombe (1998), "Two-sided confidence intervals for the single proportion: comparison
# of seven methods", Statistics in Medicine 17:857-872, Table I, method 3 (Wilson score, no
# continuity correction). The values are from memory of that table; scipy agrees with all four.
@pytest.mark.parametrize(
    ("k", "n", "low", "high"),
    [
        (81, 263, 0.2553, 0.3662),
        (15, 148, 0.0624, 0.1605),
        (0, 20, 0.0, 0.1611),
        (1, 29, 0.0061, 0.1718),
    ],
)
def test_wilson_newcombe_table(k, n, low, high):
    interval = wilson_interval(k, n, 0.95)
    assert round(interval.low, 4) == low
    assert round(interval.high, 4) == high


def test_wilson_empty_sample_knows_nothing():
    assert wilson_interval(0, 0) == Interval(0.0, 0.0, 1.0, 0.95, 0.0)
    assert wilson_interval(0, 0, population=10) == Interval(0.0, 0.0, 1.0, 0.95, 0.0)


def test_wilson_bounds_at_the_edges_are_exact():
    assert wilson_interval(0, 50).low == 0.0
    assert wilson_interval(50, 50).high == 1.0


@settings(max_examples=200, deadline=None)
@given(counts(), st.integers(min_value=1, max_value=5000), st.sampled_from(CONFIDENCES))
def test_finite_population_correction_narrows(kn, extra, confidence):
    k, n = kn
    plain = wilson_interval(k, n, confidence)
    corrected = wilson_interval(k, n, confidence, population=n + extra)
    assert corrected.low >= plain.low - 1e-12
    assert corrected.high <= plain.high + 1e-12
    assert corrected.low <= k / n <= corrected.high


def test_finite_population_correction_formula():
    # z^2 replaced by z^2 (N - n) / (N - 1) is the same as z replaced by z sqrt(fpc), i.e. a
    # plain Wilson interval at a lower confidence whose quantile is z sqrt(fpc).
    from statistics import NormalDist

    k, n, big_n = 30, 100, 400
    fpc = (big_n - n) / (big_n - 1)
    z = NormalDist().inv_cdf(0.975) * math.sqrt(fpc)
    equivalent = 2 * NormalDist().cdf(z) - 1
    corrected = wilson_interval(k, n, 0.95, population=big_n)
    ref = scipy_stats.binomtest(k, n).proportion_ci(confidence_level=equivalent, method="wilson")
    assert corrected.low == pytest.approx(ref.low, abs=1e-9)
    assert corrected.high == pytest.approx(ref.high, abs=1e-9)


@pytest.mark.parametrize(("k", "n"), [(0, 7), (3, 7), (7, 7), (1, 1)])
def test_whole_population_seen_gives_zero_width(k, n):
    interval = wilson_interval(k, n, population=n)
    assert interval.low == interval.high == interval.estimate == k / n
    assert interval.width == 0.0


@pytest.mark.parametrize(
    ("args", "message"),
    [
        ((3, 2), "cannot exceed"),
        ((-1, 2), "non-negative integer"),
        ((1, 2.0), "non-negative integer"),
        ((1, 10, 1.0), "strictly between 0 and 1"),
        ((1, 10, 0.0), "strictly between 0 and 1"),
        ((1, 10, 0.95, 9), "at least the sample size"),
    ],
)
def test_wilson_rejects_bad_arguments(args, message):
    with pytest.raises(EstimateError, match=message):
        wilson_interval(*args)
    assert issubclass(EstimateError, ValueError)


@pytest.mark.parametrize("count", [1, 2, 17, 1000])
def test_kish_equal_weights_is_the_count(count):
    assert kish_effective_n([3.5] * count) == pytest.approx(count)


def test_kish_known_values():
    # (1 + 1 + 2)^2 / (1 + 1 + 4) = 16 / 6, by the formula.
    assert kish_effective_n([1, 1, 2]) == pytest.approx(16 / 6)
    assert kish_effective_n([1000, 0, 0]) == pytest.approx(1.0)
    assert kish_effective_n([]) == 0.0
    assert kish_effective_n([0, 0]) == 0.0
    with pytest.raises(EstimateError, match=r"weights\[1\]"):
        kish_effective_n([1, -1])
    with pytest.raises(EstimateError, match=r"weights\[0\]"):
        kish_effective_n([math.nan])


@settings(max_examples=200, deadline=None)
@given(st.lists(st.floats(min_value=0.01, max_value=1e6), min_size=1, max_size=200))
def test_kish_between_one_and_count(weights):
    n_eff = kish_effective_n(weights)
    assert 1.0 - 1e-9 <= n_eff <= len(weights) + 1e-9


def test_weighted_share_with_equal_weights_is_wilson():
    all_weights = [2.0] * 40
    hit_weights = [2.0] * 13
    ours = weighted_share(hit_weights, all_weights)
    plain = wilson_interval(13, 40)
    assert ours.estimate == pytest.approx(plain.estimate)
    assert ours.low == pytest.approx(plain.low)
    assert ours.high == pytest.approx(plain.high)
    assert ours.n == pytest.approx(40)


def test_weighted_share_uses_kish_n():
    all_weights = [1, 1, 1, 1, 10, 10]
    hit_weights = [1, 10]
    ours = weighted_share(hit_weights, all_weights, confidence=0.9)
    n_eff = kish_effective_n(all_weights)
    assert ours.n == pytest.approx(n_eff)
    assert ours.estimate == pytest.approx(11 / 24)
    # Source: scipy's Wilson formula evaluated at a non-integer n through its internal helper is
    # not public, so check against the closed form (Newcombe 1998, method 3) directly.
    from statistics import NormalDist

    z = NormalDist().inv_cdf(0.95)
    p = 11 / 24
    center = (p + z * z / (2 * n_eff)) / (1 + z * z / n_eff)
    half = z / (1 + z * z / n_eff) * math.sqrt(p * (1 - p) / n_eff + z * z / (4 * n_eff * n_eff))
    assert ours.low == pytest.approx(center - half)
    assert ours.high == pytest.approx(center + half)


def test_weighted_share_edges_and_errors():
    assert weighted_share([], []) == Interval(0.0, 0.0, 1.0, 0.95, 0.0)
    assert weighted_share([], [1, 2]).low == 0.0
    assert weighted_share([1, 2], [1, 2]).high == 1.0
    with pytest.raises(EstimateError, match="subset"):
        weighted_share([5], [1, 2])
    with pytest.raises(EstimateError, match="subset"):
        weighted_share([1, 1, 1], [1, 2])
    with pytest.raises(EstimateError, match=r"hit_weights\[0\]"):
        weighted_share([-1], [1])


def test_cochran_common_values():
    # 385 for a 5% margin at 95% confidence with p = 0.5: common practice (the familiar survey
    # table value).
    assert cochran_sample_size(0.05) == 385
    # With N = 1000: n0 = 1.959964^2 * 0.25 / 0.05^2 = 384.146; 384.146 / (1 + 383.146 / 1000)
    # = 277.7, rounded up to 278 (computed by the formula).
    assert cochran_sample_size(0.05, population=1000) == 278


def test_cochran_formula_by_hand():
    from statistics import NormalDist

    z = NormalDist().inv_cdf(0.995)
    n0 = z * z * 0.2 * 0.8 / 0.03**2
    assert cochran_sample_size(0.03, 0.99, p=0.2) == math.ceil(n0)
    assert cochran_sample_size(0.03, 0.99, p=0.2, population=500) == math.ceil(n0 / (1 + (n0 - 1) / 500))


def test_cochran_bounds_and_errors():
    assert cochran_sample_size(0.05, population=10) <= 10
    assert cochran_sample_size(0.05, p=0.0) == 1
    for bad in (0, 1, -0.1, 1.5):
        with pytest.raises(EstimateError, match="margin"):
            cochran_sample_size(bad)
    with pytest.raises(EstimateError, match="p must"):
        cochran_sample_size(0.05, p=1.2)
    with pytest.raises(EstimateError, match="population"):
        cochran_sample_size(0.05, population=0)


@settings(max_examples=200, deadline=None)
@given(
    st.floats(min_value=0.005, max_value=0.5),
    st.sampled_from(CONFIDENCES),
    st.integers(min_value=1, max_value=100_000),
)
def test_cochran_population_never_needs_more(margin, confidence, population):
    with_fpc = cochran_sample_size(margin, confidence, population=population)
    assert 1 <= with_fpc <= min(population, cochran_sample_size(margin, confidence))
