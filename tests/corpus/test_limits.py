from __future__ import annotations

import dataclasses
import gzip
import io

import pytest

from impactscope.corpus.limits import (
    RATIO_FLOOR,
    REASONS,
    CountingReader,
    LimitExceeded,
    Limits,
    LimitsError,
    RatioGuard,
    read_bounded,
)


class Endless(io.RawIOBase):
    """Zeros without end, counting what was asked for: a stand-in for a member whose header lies."""

    def __init__(self) -> None:
        self.given = 0

    def readable(self) -> bool:
        return True

    def readinto(self, buffer: bytearray | memoryview) -> int:  # type: ignore[override]
        size = len(buffer)
        buffer[:size] = bytes(size)
        self.given += size
        return size


def test_defaults_are_frozen_and_every_field_has_a_reason() -> None:
    limits = Limits()
    with pytest.raises(dataclasses.FrozenInstanceError):
        limits.members = 3  # type: ignore[misc]
    assert set(REASONS) == {f.name for f in dataclasses.fields(Limits)}
    assert len(set(REASONS.values())) == len(REASONS)  # one reason per bound
    assert limits.reason("members") == "too many members"
    assert Limits(members=5) == Limits(members=5) != limits


@pytest.mark.parametrize("value", [0, -1, 1.5, "10", True, None])
def test_a_bound_must_be_a_positive_whole_number(value: object) -> None:
    with pytest.raises(LimitsError, match=r"limit ratio = .*at least 1") as caught:
        Limits(ratio=value)  # type: ignore[arg-type]
    assert isinstance(caught.value, ValueError)


def test_read_bounded_takes_exactly_the_limit() -> None:
    assert read_bounded(io.BytesIO(b"x" * 10), 10, "too large") == b"x" * 10
    with pytest.raises(LimitExceeded) as caught:
        read_bounded(io.BytesIO(b"x" * 11), 10, "too large")
    assert caught.value.reason == "too large" and "10" in caught.value.detail


def test_read_bounded_stops_one_byte_past_the_limit_whatever_the_source_says() -> None:
    source = Endless()
    with pytest.raises(LimitExceeded):
        read_bounded(source, 3_000_000, "too large")
    assert source.given == 3_000_001


def test_read_bounded_judges_the_ratio_past_the_floor_only() -> None:
    data = bytes(RATIO_FLOOR)
    # At the floor, however well it compressed, nothing is judged.
    assert read_bounded(io.BytesIO(data), 10 * RATIO_FLOOR, "too large", compressed=1, ratio=2) == data
    source = Endless()
    with pytest.raises(LimitExceeded) as caught:
        read_bounded(source, 100 * RATIO_FLOOR, "too large", compressed=1000, ratio=100)
    assert caught.value.reason == "compression ratio"
    assert source.given <= 2 * RATIO_FLOOR  # stopped within a chunk of the floor


def test_ratio_guard_counts_bytes_out_against_bytes_in() -> None:
    packed = gzip.compress(bytes(20 * RATIO_FLOOR))  # zeros: about 1000 to 1 (deflate's best)
    counted = CountingReader(io.BytesIO(packed))
    guarded = RatioGuard(gzip.GzipFile(fileobj=io.BufferedReader(counted)), lambda: counted.count, 100)
    with pytest.raises(LimitExceeded) as caught:
        while guarded.read(65536):
            pass
    assert caught.value.reason == "compression ratio"
    assert guarded.count < 3 * RATIO_FLOOR
    # The same stream within a looser ratio reads to the end.
    counted = CountingReader(io.BytesIO(packed))
    loose = RatioGuard(gzip.GzipFile(fileobj=io.BufferedReader(counted)), lambda: counted.count, 10_000)
    assert len(loose.read()) == 20 * RATIO_FLOOR


def test_describe_names_the_bound() -> None:
    assert Limits(members=7).describe("members", 9) == "too many members: 9 seen, limit members = 7"


def test_settings_as_a_command_line_gives_them() -> None:
    assert Limits().updated(["members=5", "file-bytes = 4_000_000"]) == Limits(members=5, file_bytes=4_000_000)
    assert Limits(ratio=7).updated([]) == Limits(ratio=7)
    with pytest.raises(LimitsError, match=r"'member=5': expected NAME=VALUE with NAME one of file_bytes, "):
        Limits().updated(["member=5"])
    with pytest.raises(LimitsError, match=r"'ratio=lots': 'lots' is not a whole number"):
        Limits().updated(["ratio=lots"])
    with pytest.raises(LimitsError, match=r"limit depth = 0"):
        Limits().updated(["depth=0"])


def test_the_time_budget_per_file_is_a_limit_like_the_others() -> None:
    # Seconds, not bytes, but set, checked and reported the same way (scan.budget enforces it).
    assert Limits().updated(["file_seconds=5"]).file_seconds == 5
    assert Limits().reason("file_seconds") == "over time budget"
    with pytest.raises(LimitsError, match=r"limit file_seconds = 0"):
        Limits().updated(["file_seconds=0"])
