"""The bench log: an embedded SQLite database of specimens, fixtures, readings and results.

Every extraction and report can be logged with its timestamp (UTC), who measured, the
capbench version, the fixture (as its ``capbench-fixture/1`` text), the readings and
the results; :class:`BenchLog` lists, shows and exports entries (CSV, spreadsheet-safe).

Where the database lives: the ``path`` argument, else the environment variable
``CAPBENCH_LOG``, else ``benchlog.sqlite`` in the user's data directory
(:func:`platformdirs.user_data_dir`).

Safety of the data
    * Every entry is written in one transaction (``BEGIN IMMEDIATE`` ... ``COMMIT``): an
      interrupted or killed run leaves no half-written entry (SQLite's atomic commit).
    * Write-ahead logging (WAL) and a busy timeout: two processes logging at once wait
      for each other and lose nothing.
    * The schema has a version (``PRAGMA user_version``) and the log migrates itself,
      in a transaction, from any earlier version when it is opened; the ``migrations``
      table records when each step ran. A log from a newer capbench is refused rather
      than damaged.

References
----------
SQLite documentation: "Atomic Commit In SQLite", "Write-Ahead Logging", "PRAGMA
user_version" (sqlite.org).
"""

from __future__ import annotations

import datetime
import json
import math
import os
import sqlite3
from collections.abc import Callable, Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .errors import InputError, StoreError

#: the schema version this capbench writes
SCHEMA_VERSION = 3
#: seconds a writer waits for another process's transaction before giving up
BUSY_TIMEOUT = 30.0
ENV_VAR = "CAPBENCH_LOG"
FILE_NAME = "benchlog.sqlite"
#: entry kinds
KINDS = ("extract", "report", "solve")


def default_path() -> Path:
    """``$CAPBENCH_LOG`` if set, else ``benchlog.sqlite`` in the user's data directory."""
    env = os.environ.get(ENV_VAR, "").strip()
    if env:
        return Path(env).expanduser()
    from platformdirs import user_data_dir

    return Path(user_data_dir("capbench", appauthor=False)) / FILE_NAME


# --------------------------------------------------------------------------- schema


_V1 = """
CREATE TABLE specimens (
    id TEXT PRIMARY KEY,
    description TEXT NOT NULL DEFAULT '',
    first_seen TEXT NOT NULL
);
CREATE TABLE fixtures (
    id INTEGER PRIMARY KEY,
    name TEXT NOT NULL,
    kind TEXT NOT NULL,
    toml TEXT NOT NULL UNIQUE
);
CREATE TABLE entries (
    id INTEGER PRIMARY KEY,
    created TEXT NOT NULL,
    kind TEXT NOT NULL,
    specimen_id TEXT REFERENCES specimens(id),
    fixture_id INTEGER REFERENCES fixtures(id),
    method TEXT NOT NULL DEFAULT '',
    capbench_version TEXT NOT NULL,
    source TEXT NOT NULL DEFAULT '',
    summary TEXT NOT NULL DEFAULT '',
    payload TEXT NOT NULL DEFAULT '{}'
);
CREATE TABLE readings (
    entry_id INTEGER NOT NULL REFERENCES entries(id) ON DELETE CASCADE,
    row INTEGER NOT NULL,
    frequency REAL NOT NULL,
    capacitance REAL NOT NULL,
    dissipation REAL,
    empty_capacitance REAL,
    empty_dissipation REAL,
    PRIMARY KEY (entry_id, row)
);
CREATE INDEX entries_specimen ON entries(specimen_id);
"""

# version 2: who measured, and the results as rows (they were only in the JSON payload)
_V2 = """
ALTER TABLE entries ADD COLUMN operator TEXT NOT NULL DEFAULT '';
CREATE TABLE results (
    entry_id INTEGER NOT NULL REFERENCES entries(id) ON DELETE CASCADE,
    row INTEGER NOT NULL,
    frequency REAL,
    eps_r REAL NOT NULL,
    u_eps_r REAL NOT NULL,
    expanded_eps_r REAL NOT NULL,
    k_eps_r REAL NOT NULL,
    tan_delta REAL,
    u_tan_delta REAL,
    expanded_tan_delta REAL,
    k_tan_delta REAL,
    PRIMARY KEY (entry_id, row)
);
CREATE INDEX entries_created ON entries(created);
"""

# version 3: the readings of the micrometer and two-fluid methods (measurement files
# gained the spacing and fluid columns); older rows keep NULL there
_V3 = """
ALTER TABLE readings ADD COLUMN loaded_spacing REAL;
ALTER TABLE readings ADD COLUMN empty_spacing REAL;
ALTER TABLE readings ADD COLUMN fluid INTEGER;
"""

#: the columns of the readings table after ``entry_id`` and ``row``: Reading fields
_READING_COLUMNS = (
    "frequency",
    "capacitance",
    "dissipation",
    "empty_capacitance",
    "empty_dissipation",
    "loaded_spacing",
    "empty_spacing",
    "fluid",
)

_RESULT_KEYS = (
    "frequency_hz",
    "eps_r",
    "u_eps_r",
    "U_eps_r",
    "k_eps_r",
    "tan_delta",
    "u_tan_delta",
    "U_tan_delta",
    "k_tan_delta",
)


def _backfill_results(conn: sqlite3.Connection) -> None:
    """Version 2: copy the results of version-1 entries from their JSON payload."""
    for entry_id, payload in conn.execute("SELECT id, payload FROM entries").fetchall():
        try:
            points = json.loads(payload).get("results", {}).get("points", [])
        except (ValueError, AttributeError):
            continue
        for i, p in enumerate(points):
            if not isinstance(p, dict) or "eps_r" not in p:
                continue
            conn.execute(
                "INSERT OR IGNORE INTO results VALUES (?,?,?,?,?,?,?,?,?,?,?)",
                (entry_id, i, *(p.get(k) for k in _RESULT_KEYS)),
            )


#: version -> (SQL script, Python step run after it)
MIGRATIONS: dict[int, tuple[str, Callable[[sqlite3.Connection], None] | None]] = {
    1: (_V1, None),
    2: (_V2, _backfill_results),
    3: (_V3, None),
}


def _statements(script: str) -> list[str]:
    return [s.strip() for s in script.split(";") if s.strip()]


def migrate(conn: sqlite3.Connection, target: int = SCHEMA_VERSION) -> int:
    """Bring the database on ``conn`` to schema ``target`` in one transaction; returns
    the version found before. Refuses a database from a newer capbench."""
    conn.execute("BEGIN IMMEDIATE")
    try:
        conn.execute(
            "CREATE TABLE IF NOT EXISTS migrations (version INTEGER PRIMARY KEY, applied TEXT)"
        )
        found = conn.execute("PRAGMA user_version").fetchone()[0]
        if found > SCHEMA_VERSION:
            raise StoreError(
                f"the bench log has schema version {found}, newer than this capbench's "
                f"{SCHEMA_VERSION}; upgrade capbench (the log is left untouched)",
                value=found,
                valid=(0, SCHEMA_VERSION),
            )
        for version in range(found + 1, target + 1):
            script, step = MIGRATIONS[version]
            for statement in _statements(script):
                conn.execute(statement)
            if step is not None:
                step(conn)
            conn.execute("INSERT OR REPLACE INTO migrations VALUES (?, ?)", (version, _now()))
            conn.execute(f"PRAGMA user_version = {int(version)}")
        conn.execute("COMMIT")
    except BaseException:
        conn.execute("ROLLBACK")
        raise
    return found


def _now() -> str:
    return datetime.datetime.now(datetime.UTC).isoformat(timespec="microseconds")


# --------------------------------------------------------------------------- entries


@dataclass(frozen=True)
class Entry:
    """One logged run. ``readings`` and ``results``: lists of dicts (SI units)."""

    id: int
    created: str
    kind: str
    operator: str
    specimen_id: str | None
    fixture_name: str | None
    method: str
    capbench_version: str
    source: str
    summary: str
    readings: tuple[dict, ...] = ()
    results: tuple[dict, ...] = ()
    fixture_toml: str | None = None
    payload: dict | None = None

    def as_dict(self) -> dict:
        return {
            "id": self.id,
            "created": self.created,
            "kind": self.kind,
            "operator": self.operator,
            "specimen_id": self.specimen_id,
            "fixture": self.fixture_name,
            "method": self.method,
            "capbench_version": self.capbench_version,
            "source": self.source,
            "summary": self.summary,
            "readings": list(self.readings),
            "results": list(self.results),
        }


class BenchLog:
    """The bench log at ``path`` (default :func:`default_path`), created and migrated
    on first use.

    Parameters
    ----------
    path : path, optional
        The database file; default ``$CAPBENCH_LOG`` or the user's data directory.

    Raises
    ------
    StoreError
        When the file cannot be opened, is not a bench log, or is from a newer capbench.
    """

    def __init__(self, path: str | os.PathLike | None = None):
        self.path = Path(path).expanduser() if path is not None else default_path()
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
            self._conn = sqlite3.connect(
                self.path, timeout=BUSY_TIMEOUT, isolation_level=None, check_same_thread=False
            )
            self._conn.row_factory = sqlite3.Row
            mode = self._conn.execute("PRAGMA journal_mode=WAL").fetchone()[0]
            self._conn.execute("PRAGMA synchronous=FULL")
            self._conn.execute("PRAGMA foreign_keys=ON")
            self._conn.execute(f"PRAGMA busy_timeout={int(BUSY_TIMEOUT * 1000)}")
            self.journal_mode = str(mode).lower()
            migrate(self._conn)
        except sqlite3.DatabaseError as exc:
            raise StoreError(
                f"{self.path}: not a usable bench log ({exc}); give another file with "
                f"--log-file or ${ENV_VAR}",
                path=str(self.path),
            ) from None
        except OSError as exc:
            raise StoreError(f"{self.path}: cannot open the bench log ({exc})") from None

    # ------------------------------------------------------------------ plumbing

    def close(self) -> None:
        self._conn.close()

    def __enter__(self) -> BenchLog:
        return self

    def __exit__(self, *exc: Any) -> None:
        self.close()

    @property
    def schema_version(self) -> int:
        return int(self._conn.execute("PRAGMA user_version").fetchone()[0])

    @contextmanager
    def transaction(self) -> Iterator[sqlite3.Connection]:
        """One write transaction: all of it is committed, or none of it."""
        try:
            self._conn.execute("BEGIN IMMEDIATE")
        except sqlite3.OperationalError as exc:
            raise StoreError(
                f"{self.path}: the bench log stayed locked for {BUSY_TIMEOUT:g} s ({exc})"
            ) from None
        try:
            yield self._conn
            self._conn.execute("COMMIT")
        except BaseException:
            self._conn.execute("ROLLBACK")
            raise

    # ------------------------------------------------------------------ writing

    def add(
        self,
        *,
        kind: str,
        specimen_id: str | None = None,
        description: str = "",
        fixture: Any = None,
        method: str = "",
        operator: str | None = None,
        source: str = "",
        summary: str = "",
        readings: Sequence[Any] = (),
        results: Sequence[dict] = (),
        payload: dict | None = None,
    ) -> int:
        """Log one entry with its readings and results in one transaction; returns its id.

        ``fixture``: a Fixture (kept as its fixture-file text) or None; ``readings``:
        :class:`capbench.files.Reading` rows; ``results``: dicts with the keys of a
        report's result points (eps_r, u_eps_r, U_eps_r, k_eps_r, tan_delta, ...).
        ``operator``: who measured, from the measurement record; left empty when not
        given (the login of the machine that ran the command is not who measured: a
        shared bench computer logged every entry as "root").
        """
        if kind not in KINDS:
            raise StoreError(f"entry kind = {kind!r}; valid: {list(KINDS)}", value=kind)
        _check_results(results)
        from ._version import __version__

        who = operator or ""
        fixture_toml = fixture_name = None
        if fixture is not None:
            from .files import fixture_to_toml

            fixture_toml = fixture_to_toml(fixture)
            fixture_name = fixture.name
        body = json.dumps(payload or {}, allow_nan=False, default=str)
        with self.transaction() as c:
            return self._insert(
                c,
                kind=kind,
                specimen_id=specimen_id,
                description=description,
                fixture=(fixture_name, getattr(fixture, "kind", None), fixture_toml),
                method=method,
                operator=who,
                version=__version__,
                source=source,
                summary=summary,
                readings=readings,
                results=results,
                payload=body,
            )

    def _insert(self, c: sqlite3.Connection, **e: Any) -> int:
        created = _now()
        if e["specimen_id"]:
            c.execute(
                "INSERT OR IGNORE INTO specimens VALUES (?, ?, ?)",
                (e["specimen_id"], e["description"], created),
            )
        fixture_id = None
        name, fkind, toml = e["fixture"]
        if toml is not None:
            c.execute(
                "INSERT OR IGNORE INTO fixtures (name, kind, toml) VALUES (?, ?, ?)",
                (name, fkind, toml),
            )
            fixture_id = c.execute("SELECT id FROM fixtures WHERE toml = ?", (toml,)).fetchone()[0]
        cur = c.execute(
            "INSERT INTO entries (created, kind, specimen_id, fixture_id, method, "
            "capbench_version, source, summary, payload, operator) "
            "VALUES (?,?,?,?,?,?,?,?,?,?)",
            (
                created,
                e["kind"],
                e["specimen_id"] or None,
                fixture_id,
                e["method"],
                e["version"],
                e["source"],
                e["summary"],
                e["payload"],
                e["operator"],
            ),
        )
        entry_id = cur.lastrowid
        c.executemany(
            f"INSERT INTO readings (entry_id, row, {', '.join(_READING_COLUMNS)}) "
            f"VALUES (?, ?{', ?' * len(_READING_COLUMNS)})",
            [
                (entry_id, i, *(getattr(r, k) for k in _READING_COLUMNS))
                for i, r in enumerate(e["readings"])
            ],
        )
        c.executemany(
            "INSERT INTO results VALUES (?,?,?,?,?,?,?,?,?,?,?)",
            [
                (entry_id, i, *(_finite(p.get(k)) for k in _RESULT_KEYS))
                for i, p in enumerate(e["results"])
            ],
        )
        return int(entry_id)

    def log_extraction(
        self,
        measurement: Any,
        extraction: Any,
        *,
        operator: str | None = None,
        kind: str = "extract",
        coverage: float = 0.95,
        note: str = "",
    ) -> int:
        """Log a measurement file's extraction (readings, fixture, results)."""
        points = []
        for p in extraction.points:
            U, k = p.budget.expanded(p=coverage)
            item = {
                "frequency_hz": p.frequency,
                "eps_r": p.eps_r.n,
                "u_eps_r": p.eps_r.s,
                "U_eps_r": U,
                "k_eps_r": k,
            }
            if p.tan_delta is not None:
                Ul, kl = p.loss_budget.expanded(p=coverage)
                item.update(
                    tan_delta=p.tan_delta.n,
                    u_tan_delta=p.tan_delta.s,
                    U_tan_delta=Ul,
                    k_tan_delta=kl,
                )
            points.append(item)
        first = points[0]
        summary = f"eps' = {first['eps_r']:.6g} +- {first['U_eps_r']:.2g}" + (
            f" at {first['frequency_hz']:g} Hz" if first["frequency_hz"] else ""
        )
        if note:
            summary += f"; {note}"
        return self.add(
            kind=kind,
            specimen_id=measurement.specimen_id,
            description=measurement.description,
            fixture=measurement.fixture,
            method=extraction.method,
            operator=operator or measurement.operator or None,
            source=str(measurement.path),
            summary=summary,
            readings=measurement.readings,
            results=points,
            payload={
                "measurement": measurement.text,
                "results": {"points": points},
                "rel_error": extraction.rel_error,
                "solves": extraction.solves,
            },
        )

    # ------------------------------------------------------------------ reading

    def entries(self, specimen: str | None = None, limit: int = 100) -> list[Entry]:
        """The latest entries, newest first (without their readings)."""
        if not (isinstance(limit, int) and 1 <= limit <= 1_000_000):
            raise StoreError(f"limit = {limit!r}; valid: 1 to 1000000", value=limit)
        sql = (
            "SELECT e.*, f.name AS fixture_name FROM entries e "
            "LEFT JOIN fixtures f ON f.id = e.fixture_id "
        )
        args: tuple = ()
        if specimen:
            sql += "WHERE e.specimen_id = ? "
            args = (specimen,)
        sql += "ORDER BY e.id DESC LIMIT ?"
        rows = self._conn.execute(sql, (*args, limit)).fetchall()
        return [_entry(r) for r in rows]

    def entry(self, entry_id: int) -> Entry:
        """One entry with its readings, results and fixture text."""
        in_range = isinstance(entry_id, int) and -(2**63) <= entry_id < 2**63
        row = (
            self._conn.execute(
                "SELECT e.*, f.name AS fixture_name, f.toml AS fixture_toml FROM entries e "
                "LEFT JOIN fixtures f ON f.id = e.fixture_id WHERE e.id = ?",
                (entry_id,),
            ).fetchone()
            if in_range  # SQLite's integers are 64-bit: a longer one raised OverflowError
            else None
        )
        if row is None:
            last = self._conn.execute("SELECT max(id) FROM entries").fetchone()[0]
            raise StoreError(
                f"no bench-log entry {entry_id!r}; "
                + (f"valid ids: 1 to {last}" if last else "the log has no entries yet"),
                value=entry_id,
            )
        readings = tuple(
            {k: r[k] for k in r.keys() if k not in ("entry_id",)}
            for r in self._conn.execute(
                "SELECT * FROM readings WHERE entry_id = ? ORDER BY row", (entry_id,)
            )
        )
        results = tuple(
            {k: r[k] for k in r.keys() if k not in ("entry_id",)}
            for r in self._conn.execute(
                "SELECT * FROM results WHERE entry_id = ? ORDER BY row", (entry_id,)
            )
        )
        return _entry(
            row,
            readings=readings,
            results=results,
            fixture_toml=row["fixture_toml"],
            payload=json.loads(row["payload"]),
        )

    def count(self) -> int:
        return int(self._conn.execute("SELECT count(*) FROM entries").fetchone()[0])

    def check(self) -> str:
        """SQLite's integrity check ("ok" when the file is sound)."""
        return str(self._conn.execute("PRAGMA integrity_check").fetchone()[0])

    def export_csv(self, path: str | os.PathLike | None = None, specimen: str | None = None) -> str:
        """Every result row (one per entry and frequency) as CSV text, written to
        ``path`` when given. Text cells are made spreadsheet-safe
        (:func:`capbench.files.safe_cell`)."""
        from .files import _atomic_write, to_csv

        header = [
            "entry",
            "created",
            "kind",
            "operator",
            "specimen",
            "fixture",
            "method",
            "capbench",
            "frequency_hz",
            "eps_r",
            "u_eps_r",
            "U_eps_r",
            "k_eps_r",
            "tan_delta",
            "u_tan_delta",
            "U_tan_delta",
            "k_tan_delta",
        ]
        sql = (
            "SELECT e.id, e.created, e.kind, e.operator, e.specimen_id, f.name, e.method, "
            "e.capbench_version, r.frequency, r.eps_r, r.u_eps_r, r.expanded_eps_r, "
            "r.k_eps_r, r.tan_delta, r.u_tan_delta, r.expanded_tan_delta, r.k_tan_delta "
            "FROM entries e LEFT JOIN fixtures f ON f.id = e.fixture_id "
            "LEFT JOIN results r ON r.entry_id = e.id "
        )
        args: tuple = ()
        if specimen:
            sql += "WHERE e.specimen_id = ? "
            args = (specimen,)
        sql += "ORDER BY e.id, r.row"
        rows = [list(r) for r in self._conn.execute(sql, args)]
        text = to_csv(header, rows)
        if path is not None:
            _atomic_write(Path(path), text)
        return text


# result keys the log's schema requires in every row (NOT NULL columns)
_REQUIRED_RESULT_KEYS = ("eps_r", "u_eps_r", "U_eps_r", "k_eps_r")


def _check_results(results: Sequence[dict]) -> None:
    """Refuse a result row the schema cannot hold, before the transaction starts (it
    surfaced as sqlite3.IntegrityError from inside the insert)."""
    for i, row in enumerate(results):
        if not isinstance(row, Mapping):
            raise InputError(
                f"result row {i} = {row!r} must be a dict with keys {list(_RESULT_KEYS)}",
                value=repr(row),
            )
        for key in _REQUIRED_RESULT_KEYS:
            value = row.get(key)
            if isinstance(value, bool) or not isinstance(value, (int, float)):
                raise InputError(
                    f"result row {i}: {key} = {value!r}; valid: a finite number "
                    f"(required keys: {list(_REQUIRED_RESULT_KEYS)})",
                    name=key,
                    value=repr(value),
                )
            if not math.isfinite(value):
                raise InputError(
                    f"result row {i}: {key} = {value!r}; valid: a finite number",
                    name=key,
                    value=repr(value),
                )


def _finite(x: Any) -> Any:
    if isinstance(x, float) and not math.isfinite(x):
        return None
    return x


def _entry(row: sqlite3.Row, **extra: Any) -> Entry:
    return Entry(
        id=row["id"],
        created=row["created"],
        kind=row["kind"],
        operator=row["operator"],
        specimen_id=row["specimen_id"],
        fixture_name=row["fixture_name"],
        method=row["method"],
        capbench_version=row["capbench_version"],
        source=row["source"],
        summary=row["summary"],
        **extra,
    )


__all__ = [
    "ENV_VAR",
    "KINDS",
    "MIGRATIONS",
    "SCHEMA_VERSION",
    "BenchLog",
    "Entry",
    "default_path",
    "migrate",
]
