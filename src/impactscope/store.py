"""The results store: one SQLite file that `scan` writes and every later command reads.

The file is in WAL mode. A project's rows (its files, findings, manifests) and its cache key are
written in the same transaction, and a transaction holds whole projects only, so a crash or kill
loses only work that was not committed yet; the key row is the mark that a project is complete.
A rescan onto the same file under the same settings (change list, tool version, prefilter)
reuses every project whose key is unchanged; `meta.complete` is "1" only after a scan finished.
"""

from __future__ import annotations

import json
import os
import sqlite3
from dataclasses import dataclass
from pathlib import Path
from typing import Iterator

from impactscope import __version__
from impactscope.changes import ChangeList, parse_change_list
from impactscope.errors import InputError
from impactscope.findings import Confidence, Finding, Reading
from impactscope.outcomes import SCAN_FAILURES, FileOutcome, FileStatus, ProjectResult
from impactscope.reasons import Reason

# The layout of the tables below. A file of another layout is refused by `open` and started
# afresh by `resume`. 2: findings.reading (before it, a "legacy: " prefix on the pattern).
FORMAT = "2"

# What every results file this version writes holds in `meta`, and `report` reads.
_REQUIRED_META = frozenset({"library", "tool_version", "changes_toml", "format"})

SCHEMA = """
CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS projects (
    name TEXT PRIMARY KEY, origin TEXT NOT NULL, uses_library INTEGER NOT NULL);
CREATE TABLE IF NOT EXISTS files (
    project TEXT NOT NULL, path TEXT NOT NULL, status TEXT NOT NULL, reason TEXT, detail TEXT,
    digest TEXT, kind TEXT, PRIMARY KEY (project, path));
CREATE TABLE IF NOT EXISTS findings (
    project TEXT NOT NULL, file TEXT NOT NULL, cell INTEGER, line INTEGER NOT NULL,
    col INTEGER NOT NULL, change TEXT NOT NULL, confidence INTEGER NOT NULL, pattern TEXT NOT NULL,
    reading TEXT NOT NULL);
CREATE INDEX IF NOT EXISTS findings_project ON findings (project);
CREATE TABLE IF NOT EXISTS manifests (
    project TEXT NOT NULL, path TEXT NOT NULL, content BLOB NOT NULL, PRIMARY KEY (project, path));
CREATE TABLE IF NOT EXISTS scan_keys (
    project TEXT PRIMARY KEY, key TEXT NOT NULL, files INTEGER NOT NULL, findings INTEGER NOT NULL);
"""


class StoreError(InputError):
    """A results file that cannot be read; the message names it and says what to do."""


@dataclass(frozen=True)
class CachedProject:
    """What a finished project left in the store: its cache key and its counts."""

    key: str
    files: int
    findings: int


@dataclass(frozen=True)
class ProjectRow:
    name: str
    origin: str
    uses_library: bool


class ResultStore:
    def __init__(self, path: Path, connection: sqlite3.Connection) -> None:
        self.path = path
        self._db = connection
        # The stored change list parsed once per text (readers ask for it several times).
        self._changes: tuple[tuple[str, str], ChangeList] | None = None

    # -------------------------------------------------------------- opening
    @classmethod
    def create(
        cls, path: str | os.PathLike[str], changes: ChangeList, changes_text: str, *, settings: str = ""
    ) -> "ResultStore":
        """A new, empty results file at `path`, replacing an earlier results file there.

        Anything else at `path` (a file that is not an impactscope results file) is refused, so
        a mistyped `--out` cannot destroy it."""
        p = Path(path)
        cls._refuse_foreign(p)
        if p.exists():
            p.unlink()
        for suffix in ("-wal", "-shm"):
            Path(str(p) + suffix).unlink(missing_ok=True)
        db = cls._connect(p)
        db.executescript(SCHEMA)
        store = cls(p, db)
        store._set_meta(
            library=changes.library,
            release=str(changes.release) if changes.release else "",
            changes_toml=changes_text,
            changes_path=str(changes.source or ""),
            changes_digest=changes.digest,
            tool_version=__version__,
            format=FORMAT,
            scan_settings=settings,
            complete="0",
        )
        return store

    @classmethod
    def resume(
        cls, path: str | os.PathLike[str], changes: ChangeList, changes_text: str, *, settings: str
    ) -> tuple["ResultStore", bool]:
        """Reopen `path` for writing if it was made under the same `settings` (the scan settings'
        fingerprint, which covers change list and tool version), else start it afresh.
        The flag says whether the existing file was kept."""
        p = Path(path)
        cls._refuse_foreign(p)
        if p.is_file() and p.stat().st_size > 0:
            try:
                db = cls._connect(p)
                meta = dict(db.execute("SELECT key, value FROM meta"))
            except sqlite3.DatabaseError:
                meta, db = {}, None
            if db is not None and meta.get("scan_settings") == settings and settings and (
                meta.get("changes_digest") == changes.digest and meta.get("tool_version") == __version__
                and meta.get("format") == FORMAT
            ):
                db.executescript(SCHEMA)
                store = cls(p, db)
                store._set_meta(complete="0", changes_toml=changes_text, changes_path=str(changes.source or ""))
                return store, True
            if db is not None:
                db.close()
        return cls.create(p, changes, changes_text, settings=settings), False

    @staticmethod
    def _refuse_foreign(path: Path) -> None:
        if not path.exists():
            return
        if not path.is_file():
            raise StoreError(f"{path}: is not a file; pass a file path to --out")
        if path.stat().st_size == 0:
            return
        try:
            with open(path, "rb") as handle:
                header = handle.read(16)
            ours = header == b"SQLite format 3\x00"
            if ours:
                db = sqlite3.connect(f"file:{path}?mode=ro", uri=True)
                try:
                    ours = db.execute("SELECT 1 FROM meta WHERE key = 'tool_version'").fetchone() is not None
                finally:
                    db.close()
        except (OSError, sqlite3.DatabaseError):
            ours = False
        if not ours:
            raise StoreError(
                f"{path}: exists and is not an impactscope results file; "
                "pass another --output or remove the file"
            )

    @staticmethod
    def _connect(path: Path) -> sqlite3.Connection:
        db = sqlite3.connect(path)
        db.execute("PRAGMA journal_mode=WAL")
        # In WAL mode NORMAL survives a killed process; only an OS crash can drop the last commits,
        # and those projects are simply scanned again.
        db.execute("PRAGMA synchronous=NORMAL")
        return db

    @classmethod
    def open(cls, path: str | os.PathLike[str]) -> "ResultStore":
        p = Path(path)
        if not p.is_file():
            raise StoreError(f"{p}: no such results file; run `impactscope scan CHANGES ROOT --output {p}` first")
        try:
            db = sqlite3.connect(f"file:{p}?mode=ro", uri=True)
            meta = dict(db.execute("SELECT key, value FROM meta"))
            db.execute("SELECT 1 FROM findings LIMIT 1").fetchone()
        except sqlite3.DatabaseError as exc:
            raise StoreError(f"{p}: not an impactscope results file ({exc}); pass the file `scan --output` wrote") from None
        missing = sorted(_REQUIRED_META - meta.keys())
        if missing:
            db.close()
            # Another program's SQLite file, or one from a version before these keys.
            raise StoreError(
                f"{p}: not an impactscope results file, or one from an older version (it lacks "
                f"{', '.join(missing)}); scan again with `impactscope scan CHANGES ROOT --output {p} --fresh`"
            )
        found = meta["format"]
        if found != FORMAT:
            db.close()
            raise StoreError(
                f"{p}: a results file of layout {found}, and this version reads layout {FORMAT}; "
                f"scan again with `impactscope scan CHANGES ROOT --output {p} --fresh`"
            )
        return cls(p, db)

    def close(self) -> None:
        self._db.close()

    # -------------------------------------------------------------- writing
    def _set_meta(self, **values: str) -> None:
        with self._db:
            self._db.executemany("INSERT OR REPLACE INTO meta VALUES (?, ?)", values.items())

    def set_meta(self, **values: str) -> None:
        self._set_meta(**values)

    def add_project(self, result: ProjectResult, key: str | None = None, *, commit: bool = True) -> None:
        """Write one project's rows, replacing any it had, with its cache key (None: no reuse).

        With `commit=False` the rows wait in the open transaction for `commit()`; a transaction
        only ever holds whole projects.
        """
        db = self._db
        try:
            self._write_project(result, key)
        except sqlite3.OperationalError as exc:
            db.rollback()
            raise self._unwritable(exc) from None
        except BaseException:
            db.rollback()
            raise
        if commit:
            self.commit()

    def commit(self) -> None:
        try:
            self._db.commit()
        except sqlite3.OperationalError as exc:
            self._db.rollback()
            raise self._unwritable(exc) from None

    def _unwritable(self, exc: sqlite3.OperationalError) -> StoreError:
        """A full disk, a file made read-only, an I/O error: the user's to fix, and what was
        committed before stays (each transaction holds whole projects)."""
        return StoreError(
            f"{self.path}: cannot write the results file ({exc}); free some disk space or pass --output "
            "on another disk; the projects finished so far are kept and the same command resumes"
        )

    def cached(self) -> dict[str, CachedProject]:
        """The projects a scan under this file's settings finished, by name."""
        rows = self._db.execute("SELECT project, key, files, findings FROM scan_keys")
        return {p: CachedProject(k, f, n) for p, k, f, n in rows}

    def prune(self, keep: set[str]) -> int:
        """Delete the projects not in `keep` (gone from the corpus since the last scan)."""
        gone = [name for (name,) in self._db.execute("SELECT name FROM projects") if name not in keep]
        for name in gone:
            self._delete_project(name)
            self._db.execute("DELETE FROM projects WHERE name = ?", (name,))
        self._db.commit()
        return len(gone)

    def _delete_project(self, name: str) -> None:
        for table in ("files", "findings", "manifests", "scan_keys"):
            self._db.execute(f"DELETE FROM {table} WHERE project = ?", (name,))

    def _write_project(self, result: ProjectResult, key: str | None) -> None:
        self._db.execute(
            "INSERT OR REPLACE INTO projects VALUES (?, ?, ?)",
            (result.name, result.origin, int(result.uses_library)),
        )
        self._delete_project(result.name)
        self._db.executemany(
            "INSERT INTO files VALUES (?, ?, ?, ?, ?, ?, ?)",
            [(result.name, f.path, f.status.value, f.reason, f.detail, f.digest, f.kind) for f in result.files],
        )
        self._db.executemany(
            "INSERT INTO findings VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
            [
                (f.project, f.file, f.cell, f.line, f.column, f.change, int(f.confidence), f.pattern, f.reading.value)
                for f in result.findings
            ],
        )
        self._db.executemany(
            "INSERT OR REPLACE INTO manifests VALUES (?, ?, ?)",
            [(result.name, path, data) for path, data in result.manifests.items()],
        )
        if key is not None:
            self._db.execute(
                "INSERT INTO scan_keys VALUES (?, ?, ?, ?)",
                (result.name, key, len(result.files), len(result.findings)),
            )

    # -------------------------------------------------------------- reading
    def meta(self) -> dict[str, str]:
        return dict(self._db.execute("SELECT key, value FROM meta"))

    def change_list(self) -> ChangeList:
        meta = self.meta()
        stored = (meta["changes_toml"], meta.get("changes_path") or "changes.toml")
        if self._changes is None or self._changes[0] != stored:
            self._changes = stored, parse_change_list(stored[0].encode(), Path(stored[1]))
        return self._changes[1]

    def projects(self) -> list[ProjectRow]:
        rows = self._db.execute("SELECT name, origin, uses_library FROM projects ORDER BY name")
        return [ProjectRow(n, o, bool(u)) for n, o, u in rows]

    def files(self) -> Iterator[tuple[str, FileOutcome]]:
        rows = self._db.execute(
            "SELECT project, path, status, reason, detail, digest, kind FROM files ORDER BY project, path"
        )
        for project, path, status, reason, detail, digest, kind in rows:
            yield project, FileOutcome(path, FileStatus(status), reason, detail or "", digest, kind)

    def findings(self) -> list[Finding]:
        rows = self._db.execute(
            "SELECT project, file, cell, line, col, change, confidence, pattern, reading FROM findings"
        )
        return sorted(
            Finding(p, f, c, ln, col, ch, Confidence(conf), pat, Reading(how))
            for p, f, c, ln, col, ch, conf, pat, how in rows
        )

    def fault_counts(self) -> dict[Reason, int]:
        """Files by reason of failure (outcomes.SCAN_FAILURES): an unexpected exception on the
        file, or its project's worker process dying."""
        failures = sorted(SCAN_FAILURES)
        rows = self._db.execute(
            f"SELECT reason, COUNT(*) FROM files WHERE status = ? AND reason IN ({', '.join('?' * len(failures))})"
            " GROUP BY reason",
            (FileStatus.UNPARSED.value, *failures),
        )
        return {Reason(reason): count for reason, count in rows}

    def manifests(self, project: str) -> dict[str, bytes]:
        rows = self._db.execute("SELECT path, content FROM manifests WHERE project = ?", (project,))
        return {path: bytes(content) for path, content in rows}

    def to_json_meta(self) -> str:
        return json.dumps(self.meta(), sort_keys=True)
