"""Persistence of lakes, fitted results and scenarios in one SQLite file.

Where
    The database is ``turnback.sqlite3`` in a data folder chosen by, in
    order: the ``data_dir`` argument, the environment variable
    ``TURNBACK_DATA_DIR``, or ``turnback-data`` relative to the current
    working directory.  The folder is created when missing.

What
    Lakes by name; for each lake, fitted results and scenarios by name.  The
    content of each is a JSON object (a "blob"; scenarios in the form of
    :meth:`turnback.model.plan.Scenario.to_dict`).  Every save adds a new
    *revision* and never overwrites an old one, so two sessions saving the
    same name at once both keep their work; readers get the latest revision,
    and :meth:`Store.history` lists them all.

How
    Standard-library :mod:`sqlite3`; write-ahead logging (WAL), a busy
    timeout so concurrent writers wait instead of failing, foreign keys on,
    ``synchronous = FULL``; every write runs in one ``BEGIN IMMEDIATE``
    transaction that commits or rolls back as a whole, so a process killed
    mid-save leaves the last committed state intact.  The schema version is
    kept in ``PRAGMA user_version`` and upgraded by the numbered steps in
    :data:`MIGRATIONS`; a file from a newer version is refused, never
    modified.

A :class:`Store` may be shared by the threads of one process (calls are
serialised by a lock); other processes open their own.
"""

from __future__ import annotations

import json
import math
import os
import sqlite3
import threading
import time
from collections.abc import Iterator, Mapping
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any, Literal

from ..plan import Plan, Scenario, ScenarioLake

__all__ = [
    "DATA_DIR_ENV",
    "DB_NAME",
    "DEFAULT_DATA_DIR",
    "MIGRATIONS",
    "SCHEMA_VERSION",
    "Store",
    "StoreBusy",
    "StoredItem",
    "resolve_data_dir",
]

DATA_DIR_ENV = "TURNBACK_DATA_DIR"
DEFAULT_DATA_DIR = "turnback-data"
DB_NAME = "turnback.sqlite3"
MAX_BLOB_BYTES = 50_000_000

Kind = Literal["lake", "fit", "scenario"]
_KINDS: tuple[Kind, ...] = ("lake", "fit", "scenario")

#: Numbered schema steps; step ``i`` upgrades ``user_version`` from ``i`` to ``i + 1``.
MIGRATIONS: tuple[tuple[str, ...], ...] = (
    (
        """CREATE TABLE lake (
            id INTEGER PRIMARY KEY,
            name TEXT NOT NULL UNIQUE,
            created_at TEXT NOT NULL
        )""",
        """CREATE TABLE record (
            id INTEGER PRIMARY KEY,
            lake_id INTEGER NOT NULL REFERENCES lake(id) ON DELETE CASCADE,
            kind TEXT NOT NULL CHECK (kind IN ('lake', 'fit', 'scenario')),
            name TEXT NOT NULL,
            revision INTEGER NOT NULL CHECK (revision >= 1),
            data TEXT NOT NULL CHECK (json_valid(data)),
            saved_at TEXT NOT NULL,
            UNIQUE (lake_id, kind, name, revision)
        )""",
        "CREATE INDEX record_by_name ON record (lake_id, kind, name, revision)",
    ),
)
SCHEMA_VERSION = len(MIGRATIONS)


class StoreBusy(ValueError):
    """The database is busy or locked by another session for longer than the timeout; try again."""


def resolve_data_dir(data_dir: str | os.PathLike[str] | None = None) -> Path:
    """The data folder: ``data_dir``, else ``$TURNBACK_DATA_DIR``, else ``./turnback-data``."""
    if data_dir is not None and str(data_dir) != "":
        return Path(data_dir)
    env = os.environ.get(DATA_DIR_ENV, "").strip()
    return Path(env) if env else Path(DEFAULT_DATA_DIR)


@dataclass(frozen=True)
class StoredItem:
    """One saved revision.

    Attributes
    ----------
    kind : {"lake", "fit", "scenario"}
    lake : str
        The lake's name (for a lake, its own name).
    name : str
    revision : int
        1 for the first save, then 2, 3, …
    data : dict
        The JSON object as saved.
    saved_at : str
        ISO 8601 time of the save, UTC.
    """

    kind: Kind
    lake: str
    name: str
    revision: int
    data: dict[str, Any]
    saved_at: str


def _name(what: str, value: object) -> str:
    if not isinstance(value, str) or not value.strip():
        raise ValueError(f"{what} name must be non-empty text; got {value!r}")
    v = value.strip()
    if len(v) > 120:
        raise ValueError(f"{what} name must be at most 120 characters")
    return v


def _blob(data: object) -> str:
    if hasattr(data, "to_dict") and not isinstance(data, Mapping):
        data = data.to_dict()
    if not isinstance(data, Mapping):
        raise ValueError(f"data to save must be a JSON object (a dict); got {type(data).__name__}")
    try:
        text = json.dumps(data, allow_nan=False, separators=(",", ":"))
    except ValueError:
        raise ValueError("data to save must not contain NaN or infinity (JSON has no such numbers)") from None
    except TypeError as exc:
        raise ValueError(f"data to save must be JSON (numbers, text, lists, objects): {exc}") from None
    if len(text) > MAX_BLOB_BYTES:
        raise ValueError(f"data to save is larger than {MAX_BLOB_BYTES // 1_000_000} MB")
    return text


def _now() -> str:
    return datetime.now(UTC).isoformat(timespec="microseconds")


class Store:
    """Lakes, fitted results and scenarios in ``<data_dir>/turnback.sqlite3``.

    Parameters
    ----------
    data_dir : path, optional
        The data folder (see the module docstring for the default).
    timeout : float
        Seconds a writer waits for another writer before giving up [s].

    Raises
    ------
    ValueError
        When the folder cannot be created, the file is not a Turnback
        database, or it was written by a newer version.  The file is never
        changed in these cases.
    """

    def __init__(self, data_dir: str | os.PathLike[str] | None = None, *, timeout: float = 30.0) -> None:
        if not (isinstance(timeout, int | float) and math.isfinite(timeout) and timeout >= 0):
            raise ValueError("timeout must be a finite number of seconds >= 0")
        folder = resolve_data_dir(data_dir)
        try:
            folder.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise ValueError(f"cannot use data folder {str(folder)!r}: {exc.strerror or exc}") from None
        if not folder.is_dir():
            raise ValueError(f"data folder {str(folder)!r} is not a folder")
        self.path = folder / DB_NAME
        self._lock = threading.RLock()
        try:
            self._conn = sqlite3.connect(
                self.path, timeout=float(timeout), isolation_level=None, check_same_thread=False
            )
        except sqlite3.Error as exc:
            raise ValueError(f"cannot open {str(self.path)!r}: {exc}") from None
        try:
            self._conn.execute(f"PRAGMA busy_timeout = {int(timeout * 1000)}")
            self._conn.execute("PRAGMA foreign_keys = ON")
            mode = self._wal_mode(timeout)
            if str(mode).lower() != "wal":
                raise ValueError(f"{str(self.path)!r} could not be switched to WAL mode (got {mode})")
            self._conn.execute("PRAGMA synchronous = FULL")
            self._migrate()
        except sqlite3.OperationalError as exc:
            self._conn.close()
            if "locked" in str(exc) or "busy" in str(exc):
                raise StoreBusy(f"the database is busy or locked ({exc}); try again") from None
            raise ValueError(f"cannot use {str(self.path)!r} ({exc})") from None
        except sqlite3.DatabaseError as exc:
            self._conn.close()
            raise ValueError(
                f"{str(self.path)!r} is not a usable Turnback database ({exc}); move it aside or choose another "
                f"data folder (argument or {DATA_DIR_ENV})"
            ) from None
        except ValueError:
            self._conn.close()
            raise

    # plumbing ---------------------------------------------------------------
    @contextmanager
    def _write(self) -> Iterator[sqlite3.Connection]:
        """One ``BEGIN IMMEDIATE`` transaction: all of it commits, or none."""
        with self._lock:
            conn = self._conn
            try:
                conn.execute("BEGIN IMMEDIATE")
            except sqlite3.OperationalError as exc:
                raise StoreBusy(f"the database is busy or locked ({exc}); try again") from None
            try:
                yield conn
                conn.execute("COMMIT")
            except BaseException as exc:
                if conn.in_transaction:
                    conn.execute("ROLLBACK")
                if isinstance(exc, sqlite3.Error):
                    raise ValueError(f"could not save ({exc}); nothing was changed") from None
                raise

    def _wal_mode(self, timeout: float) -> str:
        """Switch to WAL, waiting out another connection that is doing the same on a new file.

        Switching the journal mode ignores the busy timeout, so two sessions
        opening a brand-new database at once can see "database is locked";
        that is retried until ``timeout`` [s].
        """
        deadline = time.monotonic() + timeout
        while True:
            try:
                return str(self._conn.execute("PRAGMA journal_mode = WAL").fetchone()[0])
            except sqlite3.OperationalError as exc:
                if "locked" not in str(exc) or time.monotonic() >= deadline:
                    raise
                time.sleep(0.02)

    def _migrate(self) -> None:
        with self._write() as conn:
            version = int(conn.execute("PRAGMA user_version").fetchone()[0])
            if version > len(MIGRATIONS):
                raise ValueError(
                    f"{str(self.path)!r} has schema version {version}, newer than this Turnback reads "
                    f"({len(MIGRATIONS)}); update Turnback or use another data folder"
                )
            for step in range(version, len(MIGRATIONS)):
                for statement in MIGRATIONS[step]:
                    conn.execute(statement)
                conn.execute(f"PRAGMA user_version = {step + 1}")

    @property
    def schema_version(self) -> int:
        with self._lock:
            return int(self._conn.execute("PRAGMA user_version").fetchone()[0])

    def integrity_check(self) -> str:
        """``PRAGMA integrity_check``: ``"ok"`` for an intact file."""
        with self._lock:
            return str(self._conn.execute("PRAGMA integrity_check").fetchone()[0])

    def close(self) -> None:
        with self._lock:
            self._conn.close()

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    # generic records ----------------------------------------------------------
    def _lake_id(self, conn: sqlite3.Connection, lake: str, create: bool) -> int | None:
        if create:
            conn.execute("INSERT OR IGNORE INTO lake (name, created_at) VALUES (?, ?)", (lake, _now()))
        row = conn.execute("SELECT id FROM lake WHERE name = ?", (lake,)).fetchone()
        return None if row is None else int(row[0])

    def _insert(self, conn: sqlite3.Connection, kind: Kind, lake: str, name: str, text: str) -> StoredItem:
        lake_id = self._lake_id(conn, lake, create=kind == "lake")
        if lake_id is None:
            raise ValueError(f"no lake named {lake!r}; save the lake first")
        rev = int(
            conn.execute(
                "SELECT COALESCE(MAX(revision), 0) + 1 FROM record WHERE lake_id = ? AND kind = ? AND name = ?",
                (lake_id, kind, name),
            ).fetchone()[0]
        )
        saved_at = _now()
        conn.execute(
            "INSERT INTO record (lake_id, kind, name, revision, data, saved_at) VALUES (?, ?, ?, ?, ?, ?)",
            (lake_id, kind, name, rev, text, saved_at),
        )
        return StoredItem(kind, lake, name, rev, json.loads(text), saved_at)

    def save(self, kind: Kind, lake: str, name: str, data: object) -> StoredItem:
        """Save a new revision of ``(kind, lake, name)`` with JSON object ``data``."""
        if kind not in _KINDS:
            raise ValueError(f"kind must be one of {', '.join(_KINDS)}; got {kind!r}")
        lake = _name("lake", lake)
        name = lake if kind == "lake" else _name(kind, name)
        text = _blob(data)
        with self._write() as conn:
            return self._insert(conn, kind, lake, name, text)

    def _rows(self, kind: Kind, lake: str, name: str | None, latest: bool) -> list[StoredItem]:
        sql = (
            "SELECT r.kind, l.name, r.name, r.revision, r.data, r.saved_at FROM record r "
            "JOIN lake l ON l.id = r.lake_id WHERE l.name = ? AND r.kind = ?"
        )
        args: list[Any] = [lake, kind]
        if name is not None:
            sql += " AND r.name = ?"
            args.append(name)
        if latest:
            sql += (
                " AND r.revision = (SELECT MAX(r2.revision) FROM record r2 WHERE r2.lake_id = r.lake_id "
                "AND r2.kind = r.kind AND r2.name = r.name)"
            )
        sql += " ORDER BY r.name, r.revision"
        with self._lock:
            rows = self._conn.execute(sql, args).fetchall()
        return [StoredItem(k, ln, n, int(rev), json.loads(d), at) for k, ln, n, rev, d, at in rows]

    def get(self, kind: Kind, lake: str, name: str | None = None) -> StoredItem | None:
        """The latest revision, or None when nothing is saved under that name."""
        rows = self._rows(kind, lake, lake if kind == "lake" else name, latest=True)
        return rows[-1] if rows else None

    def history(self, kind: Kind, lake: str, name: str | None = None) -> list[StoredItem]:
        """Every revision, oldest first."""
        return self._rows(kind, lake, lake if kind == "lake" else name, latest=False)

    def delete(self, kind: Kind, lake: str, name: str | None = None) -> int:
        """Delete every revision of one item (a lake takes its fits and scenarios with it); returns rows removed."""
        with self._write() as conn:
            if kind == "lake":
                n = conn.execute(
                    "SELECT COUNT(*) FROM record WHERE lake_id = (SELECT id FROM lake WHERE name = ?)", (lake,)
                ).fetchone()[0]
                conn.execute("DELETE FROM lake WHERE name = ?", (lake,))
                return int(n)
            cur = conn.execute(
                "DELETE FROM record WHERE kind = ? AND name = ? AND lake_id = (SELECT id FROM lake WHERE name = ?)",
                (kind, name, lake),
            )
            return int(cur.rowcount)

    # lakes ---------------------------------------------------------------------
    def save_lake(self, name: str, data: Mapping[str, Any] | ScenarioLake) -> StoredItem:
        """Save a lake (a JSON object, e.g. :meth:`ScenarioLake.to_dict`) under ``name``."""
        return self.save("lake", name, name, data)

    def get_lake(self, name: str) -> StoredItem | None:
        return self.get("lake", name)

    def lake_names(self) -> list[str]:
        with self._lock:
            return [str(r[0]) for r in self._conn.execute("SELECT name FROM lake ORDER BY name")]

    # fitted results --------------------------------------------------------------
    def save_fit(self, lake: str, name: str, data: Mapping[str, Any]) -> StoredItem:
        """Save a fitted result (JSON object) for an existing lake."""
        return self.save("fit", lake, name, data)

    def get_fit(self, lake: str, name: str) -> StoredItem | None:
        return self.get("fit", lake, name)

    def fits(self, lake: str) -> list[StoredItem]:
        """Latest revision of each fit of ``lake``, by name."""
        return self._rows("fit", lake, None, latest=True)

    # scenarios -------------------------------------------------------------------
    def save_scenario(self, lake: str, scenario: Scenario) -> StoredItem:
        """Save a scenario for an existing lake, under the scenario's name."""
        if not isinstance(scenario, Scenario):
            raise ValueError("scenario must be a Scenario")
        return self.save("scenario", lake, scenario.name, scenario.to_dict())

    def get_scenario(self, lake: str, name: str) -> Scenario | None:
        item = self.get("scenario", lake, name)
        return None if item is None else Scenario.from_dict(item.data)

    def scenarios(self, lake: str) -> list[Scenario]:
        """Latest revision of each scenario of ``lake``, by name."""
        return [Scenario.from_dict(i.data) for i in self._rows("scenario", lake, None, latest=True)]

    # plans ---------------------------------------------------------------------------
    def save_plan(self, plan: Plan) -> list[StoredItem]:
        """Save a plan's lake and all its scenarios in one transaction (all or nothing)."""
        lake = _name("lake", plan.lake.name)
        texts = [(s.name, _blob(s.to_dict())) for s in plan.scenarios]
        with self._write() as conn:
            out = [self._insert(conn, "lake", lake, lake, _blob(plan.lake.to_dict()))]
            for name, text in texts:
                out.append(self._insert(conn, "scenario", lake, name, text))
            return out

    def load_plan(self, lake: str) -> Plan:
        """The lake and its scenarios (latest revisions) as a :class:`Plan`.

        Raises
        ------
        ValueError
            When the lake is missing, is not saved in the scenario form, or has no scenarios.
        """
        item = self.get_lake(lake)
        if item is None:
            raise ValueError(f"no lake named {lake!r}")
        try:
            scenario_lake = ScenarioLake.from_dict(item.data)
        except ValueError as exc:
            raise ValueError(f"lake {lake!r} is not saved in the scenario form: {exc}") from None
        scenarios = self.scenarios(lake)
        if not scenarios:
            raise ValueError(f"lake {lake!r} has no saved scenarios")
        return Plan(scenario_lake, tuple(scenarios))
