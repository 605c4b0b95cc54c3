"""How much of a corpus is read: the bounds that keep a hostile archive, folder or notebook cheap.

A `Limits` value holds every bound; `discover` takes one and hands it to each project it finds
(`Project.limits`), so that the readers of a project's files apply the same bounds.
`Limits().updated(["members=500000", "ratio=300"])` applies NAME=VALUE settings as a command
line or a configuration file would give them.
A bound that is reached is never an exception out of the corpus layer: the file (or the rest of
the archive) becomes an entry skipped with the bound's own reason, and the scan goes on.

| field                 | default     | skip reason               | what it bounds                          |
| --------------------- | ----------- | ------------------------- | --------------------------------------- |
| `file_bytes`          | 2_000_000   | "too large"               | bytes of a file read whole that is not  |
|                       |             |                           | a notebook (a module, a manifest)       |
| `notebook_bytes`      | 100_000_000 | "notebook too large"      | bytes of a notebook, outputs included   |
| `notebook_code_bytes` | 2_000_000   | "notebook code too large" | UTF-8 bytes of a notebook's code cells  |
| `archive_bytes`       | 200_000_000 | "archive too large"       | a zip inside an archive root, which is  |
|                       |             |                           | held in memory for random access        |
| `ratio`               | 100         | "compression ratio"       | bytes out per compressed byte, for a    |
|                       |             |                           | zip member and for a compressed tar     |
| `members`             | 100_000     | "too many members"        | members listed from one archive         |
| `depth`               | 2           | "nested too deep"         | archives opened one inside another      |
| `file_seconds`        | 60          | "over time budget"        | seconds of analysis of one file, all    |
|                       |             |                           | its stages (scan.budget stops it)       |
| `parse_chars`         | 500_000     | "too large to parse"      | characters of code libcst parses in one |
|                       |             |                           | file (a notebook: its cells together);  |
|                       |             |                           | past it the file is read at token level |

Byte counts are checked while reading, whatever a header declares: a read stops one chunk past
the bound. The ratio is judged only once RATIO_FLOOR bytes have come out, since a small file
that compresses very well (a run of blank lines) does no harm. Nesting is at most two deep by
construction (an archive root and the project archives in it; an archive inside a project is a
file, "not source"): `depth=1` refuses even that.
"""

from __future__ import annotations

import dataclasses
import io
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from typing import IO

from impactscope.errors import InputError
from impactscope.reasons import Reason

__all__ = [
    "RATIO_FLOOR",
    "CountingReader",
    "REASONS",
    "LimitExceeded",
    "Limits",
    "LimitsError",
    "RatioGuard",
    "read_bounded",
]

# Below this many bytes out, no ratio is judged (see the module docstring).
RATIO_FLOOR = 1 << 20
_CHUNK = 1 << 20

# Field -> the skip reason of an entry that reaches it.
REASONS = {
    "file_bytes": Reason.TOO_LARGE,
    "notebook_bytes": Reason.NOTEBOOK_TOO_LARGE,
    "notebook_code_bytes": Reason.NOTEBOOK_CODE_TOO_LARGE,
    "archive_bytes": Reason.ARCHIVE_TOO_LARGE,
    "ratio": Reason.COMPRESSION_RATIO,
    "members": Reason.TOO_MANY_MEMBERS,
    "depth": Reason.NESTED_TOO_DEEP,
    "file_seconds": Reason.OVER_TIME_BUDGET,
    "parse_chars": Reason.TOO_LARGE_TO_PARSE,
}


class LimitsError(InputError):
    """A Limits value that cannot work: a bound that is not a positive whole number."""


@dataclass(frozen=True)
class Limits:
    """The bounds on reading a corpus (see the module docstring for each one and its reason)."""

    file_bytes: int = 2_000_000
    notebook_bytes: int = 100_000_000
    notebook_code_bytes: int = 2_000_000
    archive_bytes: int = 200_000_000
    ratio: int = 100
    members: int = 100_000
    depth: int = 2
    file_seconds: int = 60
    # libcst needs about 1 KB of memory per character of code and its parser cannot be
    # interrupted (measured: a 1 MB line took 80 s and 1.2 GB); the largest real module met in
    # the real-world corpus had 123,809 characters.
    parse_chars: int = 500_000

    def __post_init__(self) -> None:
        for item in dataclasses.fields(self):
            value = getattr(self, item.name)
            # bool is an int subclass, and `True` as a byte count is surely a mistake.
            if isinstance(value, bool) or not isinstance(value, int) or value < 1:
                raise LimitsError(
                    f"limit {item.name} = {value!r}: must be a whole number of at least 1"
                )

    def updated(self, settings: Iterable[str]) -> Limits:
        """These limits with `NAME=VALUE` settings applied (as a command line gives them:
        `members=500000`, `file_bytes=4_000_000`). Raises LimitsError naming the bad setting."""
        names = [item.name for item in dataclasses.fields(self)]
        changes: dict[str, int] = {}
        for setting in settings:
            name, equals, value = setting.partition("=")
            name = name.strip().replace("-", "_")
            if not equals or name not in names:
                raise LimitsError(
                    f"limit {setting!r}: expected NAME=VALUE with NAME one of {', '.join(names)}"
                )
            try:
                changes[name] = int(value.strip())
            except ValueError:
                raise LimitsError(f"limit {setting!r}: {value.strip()!r} is not a whole number") from None
        return dataclasses.replace(self, **changes)

    def reason(self, name: str) -> Reason:
        """The skip reason of limit `name`."""
        return REASONS[name]

    def describe(self, name: str, seen: int | None = None) -> str:
        """A one-line account of limit `name` being reached, for people."""
        bound = getattr(self, name)
        got = "" if seen is None else f"{seen} seen, "
        return f"{REASONS[name]}: {got}limit {name} = {bound}"


DEFAULT_LIMITS = Limits()


class LimitExceeded(Exception):
    """Raised inside a read when a bound is reached; the corpus layer turns it into a reason
    (a `Reason` for a corpus file; the library source's reader passes labels of its own).

    Deliberately not an OSError or ValueError: archive readers catch those as corruption, and
    a bound is not a fault of the archive.
    """

    def __init__(self, reason: str, detail: str) -> None:
        super().__init__(reason, detail)
        self.reason = reason
        self.detail = detail

    def __str__(self) -> str:
        return self.detail


def _over_ratio(produced: int, compressed: int, ratio: int) -> bool:
    return produced > RATIO_FLOOR and produced > ratio * max(compressed, 1)


def read_bounded(
    handle: IO[bytes],
    limit: int,
    reason: str,
    *,
    compressed: int | None = None,
    ratio: int = 0,
) -> bytes:
    """All of `handle`, read in chunks; LimitExceeded(`reason`) once more than `limit` bytes come.

    With `compressed` (the most compressed bytes the data can come from, such as a zip member's
    compressed size, which zipfile never reads past) and `ratio`, LimitExceeded("compression
    ratio") once the output passes RATIO_FLOOR and `ratio` times `compressed`.
    """
    chunks: list[bytes] = []
    total = 0
    while chunk := handle.read(min(_CHUNK, limit + 1 - total)):
        total += len(chunk)
        if total > limit:
            raise LimitExceeded(reason, f"{reason}: more than {limit} bytes")
        if compressed is not None and ratio and _over_ratio(total, compressed, ratio):
            raise LimitExceeded(
                REASONS["ratio"],
                f"{REASONS['ratio']}: {total} bytes out of at most {compressed} compressed, over {ratio} to 1",
            )
        chunks.append(chunk)
        if total == limit:
            # One byte more tells a file of exactly `limit` bytes from a longer one.
            if handle.read(1):
                raise LimitExceeded(reason, f"{reason}: more than {limit} bytes")
            break
    return b"".join(chunks)


class CountingReader(io.RawIOBase):
    """A raw stream that counts the bytes read from `inner` (compressed bytes, for RatioGuard)."""

    def __init__(self, inner: IO[bytes]) -> None:
        self.inner = inner
        self.count = 0

    def readable(self) -> bool:
        return True

    def readinto(self, buffer: bytearray | memoryview) -> int:  # type: ignore[override]
        data = self.inner.read(len(buffer))
        size = len(data)
        buffer[:size] = data
        self.count += size
        return size


class RatioGuard(CountingReader):
    """A raw stream over decompressed `inner` that raises LimitExceeded("compression ratio") once
    the bytes out (`count`) pass RATIO_FLOOR and `ratio` times `compressed()` (the compressed
    bytes so far, or a bound on them)."""

    def __init__(self, inner: IO[bytes], compressed: Callable[[], int], ratio: int) -> None:
        super().__init__(inner)
        self.compressed = compressed
        self.ratio = ratio

    def readinto(self, buffer: bytearray | memoryview) -> int:  # type: ignore[override]
        size = super().readinto(buffer)
        if _over_ratio(self.count, self.compressed(), self.ratio):
            raise LimitExceeded(
                REASONS["ratio"],
                f"{REASONS['ratio']}: {self.count} bytes out of {self.compressed()} compressed, "
                f"over {self.ratio} to 1",
            )
        return size
