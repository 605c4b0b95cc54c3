"""What scanning any one project of a scan needs, in one record sent once to each worker."""

from __future__ import annotations

import functools
from dataclasses import dataclass

from impactscope.changes import ChangeList
from impactscope.resolve.query import Query
from impactscope.scan.cache import ScanSettings
from impactscope.scan.library import ScanLibrary


@dataclass(frozen=True)
class ScanJob:
    """The change list and library surface (`library`, which compiles the query), and the settings
    the results depend on (`settings`: prefilter, limits, digests, hence the cache fingerprint).

    The same for every project of a scan. Picklable: a worker that receives it compiles the query
    once, from the surface JSON, and keeps it for every project it is sent. The reading limits
    themselves travel with each project (`Project.limits`); `settings` keys them.
    """

    library: ScanLibrary
    settings: ScanSettings

    def __post_init__(self) -> None:
        if self.settings.changes_digest != self.library.changes.digest:
            raise AssertionError("a scan job's settings were made for another change list")

    @property
    def changes(self) -> ChangeList:
        return self.library.changes

    @property
    def query(self) -> Query:
        """Compiled on first use in each process, then kept (by the library record)."""
        return self.library.query

    @property
    def prefilter(self) -> bool:
        return self.settings.prefilter

    @functools.cached_property
    def fingerprint(self) -> str:
        """The settings' part of every project's cache key."""
        return self.settings.fingerprint


__all__ = ["ScanJob"]
