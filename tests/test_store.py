"""The bench log: round trip, two processes writing at once, a writer killed inside its
transaction, a migration from schema version 1, and spreadsheet-safe export."""

from __future__ import annotations

import csv
import io
import json
import os
import signal
import sqlite3
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

import capbench as cb
from capbench import store
from capbench.files import Reading

ROOT = Path(__file__).resolve().parents[1]

READINGS = (
    Reading(100.0, 20.61844e-12, 2.115e-4, line=4),
    Reading(1e3, 20.61381e-12, 2.526e-4, line=5),
)
RESULTS = (
    {"frequency_hz": 100.0, "eps_r": 2.3047, "u_eps_r": 0.0017, "U_eps_r": 0.0033, "k_eps_r": 1.96},
    {"frequency_hz": 1e3, "eps_r": 2.3041, "u_eps_r": 0.0017, "U_eps_r": 0.0033, "k_eps_r": 1.96},
)


def add_one(log: store.BenchLog, specimen: str = "QF-PE-03", operator: str = "R. Quill") -> int:
    return log.add(
        kind="extract",
        specimen_id=specimen,
        description="invented polyethylene sheet",
        fixture=cb.parallel_discs("25 mm", "2.5 mm", name="invented discs"),
        method="contacting",
        operator=operator,
        source="qf-pe-03.toml",
        summary="eps' = 2.3047 +- 0.0033",
        readings=READINGS,
        results=RESULTS,
        payload={"note": "test"},
    )


def test_round_trip(tmp_path):
    path = tmp_path / "log.sqlite"
    with store.BenchLog(path) as log:
        assert log.journal_mode == "wal" and log.schema_version == store.SCHEMA_VERSION
        i = add_one(log)
        j = add_one(log, specimen="QF-PTFE-11", operator="=cmd()")
    with store.BenchLog(path) as log:  # reopened: everything is on disk
        e = log.entry(i)
        assert (e.kind, e.specimen_id, e.operator, e.method) == (
            "extract",
            "QF-PE-03",
            "R. Quill",
            "contacting",
        )
        assert e.capbench_version == cb.__version__ and e.fixture_name == "invented discs"
        assert [r["capacitance"] for r in e.readings] == [r.capacitance for r in READINGS]
        assert [r["eps_r"] for r in e.results] == [r["eps_r"] for r in RESULTS]
        assert cb.files.fixture_from_toml(e.fixture_toml).name == "invented discs"
        assert e.payload == {"note": "test"}
        assert [x.id for x in log.entries()] == [j, i]
        assert [x.id for x in log.entries(specimen="QF-PTFE-11")] == [j]
        rows = list(csv.DictReader(io.StringIO(log.export_csv())))
        assert len(rows) == 4
        # the operator that looks like a formula is neutralised (OWASP CSV injection
        # guidance; common practice, no source)
        assert {r["operator"] for r in rows} == {"R. Quill", "'=cmd()"}
        with pytest.raises(cb.StoreError, match=r"no bench-log entry 99; valid ids: 1 to 2"):
            log.entry(99)


def test_default_path_follows_the_environment(tmp_path, monkeypatch):
    monkeypatch.setenv("CAPBENCH_LOG", str(tmp_path / "env.sqlite"))
    assert store.default_path() == tmp_path / "env.sqlite"
    monkeypatch.delenv("CAPBENCH_LOG")
    assert store.default_path().name == "benchlog.sqlite"
    assert "capbench" in str(store.default_path())


def test_not_a_log_is_refused(tmp_path):
    bad = tmp_path / "notes.sqlite"
    bad.write_text("these are not the droids\n" * 100)
    with pytest.raises(cb.StoreError, match="not a usable bench log"):
        store.BenchLog(bad)


def test_newer_schema_is_refused_untouched(tmp_path):
    path = tmp_path / "future.sqlite"
    with store.BenchLog(path):
        pass
    conn = sqlite3.connect(path)
    conn.execute("PRAGMA user_version = 99")
    conn.commit()
    conn.close()
    with pytest.raises(cb.StoreError, match="schema version 99, newer"):
        store.BenchLog(path)


_WRITER = textwrap.dedent(
    """
    import sys
    from capbench import store
    from capbench.files import Reading
    path, tag, n = sys.argv[1], sys.argv[2], int(sys.argv[3])
    with store.BenchLog(path) as log:
        for i in range(n):
            log.add(kind="extract", specimen_id=f"{tag}-{i}", operator=tag, method="contacting",
                    readings=[Reading(100.0 * (k + 1), 1e-11, None) for k in range(5)],
                    results=[{"eps_r": 2.0 + i, "u_eps_r": 0.01, "U_eps_r": 0.02,
                              "k_eps_r": 2.0}])
    """
)


def test_two_processes_writing_at_once_lose_nothing(tmp_path):
    path = tmp_path / "shared.sqlite"
    with store.BenchLog(path):
        pass  # created once, so both writers start on the same schema
    n = 60
    procs = [
        subprocess.Popen([sys.executable, "-c", _WRITER, str(path), tag, str(n)], cwd=ROOT)
        for tag in ("north", "south")
    ]
    assert [p.wait(timeout=300) for p in procs] == [0, 0]
    with store.BenchLog(path) as log:
        assert log.count() == 2 * n
        assert log.check() == "ok"
        for tag in ("north", "south"):
            ids = {e.specimen_id for e in log.entries(limit=1000) if e.operator == tag}
            assert ids == {f"{tag}-{i}" for i in range(n)}
        # every entry has all five of its readings
        counts = log._conn.execute("SELECT count(*) FROM readings GROUP BY entry_id").fetchall()
        assert [c[0] for c in counts] == [5] * (2 * n)


_KILLED = textwrap.dedent(
    """
    import sys, time
    from capbench import store
    from capbench.files import Reading
    log = store.BenchLog(sys.argv[1])
    c = log._conn
    c.execute("BEGIN IMMEDIATE")
    log._insert(c, kind="extract", specimen_id="HALF-WRITTEN", description="",
                fixture=(None, None, None), method="contacting", operator="ghost",
                version="x", source="", summary="", payload="{}",
                readings=[Reading(100.0, 1e-11, None)] * 3, results=[])
    print("inside", flush=True)
    time.sleep(600)
    """
)


@pytest.mark.skipif(not hasattr(signal, "SIGKILL"), reason="needs POSIX SIGKILL")
def test_writer_killed_mid_transaction_leaves_the_log_consistent(tmp_path):
    path = tmp_path / "killed.sqlite"
    with store.BenchLog(path) as log:
        before = add_one(log)
    proc = subprocess.Popen(
        [sys.executable, "-c", _KILLED, str(path)], cwd=ROOT, stdout=subprocess.PIPE, text=True
    )
    try:
        assert proc.stdout.readline().strip() == "inside"
        os.kill(proc.pid, signal.SIGKILL)
    finally:
        proc.wait(timeout=60)
    assert proc.returncode == -signal.SIGKILL
    with store.BenchLog(path) as log:
        assert log.check() == "ok"
        assert log.count() == 1 and log.entries()[0].id == before
        assert not log.entries(specimen="HALF-WRITTEN")
        orphans = log._conn.execute(
            "SELECT count(*) FROM readings WHERE entry_id NOT IN (SELECT id FROM entries)"
        ).fetchone()[0]
        assert orphans == 0
        # the lock died with the writer: the log takes new entries
        add_one(log)
        assert log.count() == 2


def test_migration_from_version_1(tmp_path):
    path = tmp_path / "v1.sqlite"
    conn = sqlite3.connect(path, isolation_level=None)
    assert store.migrate(conn, target=1) == 0
    assert conn.execute("PRAGMA user_version").fetchone()[0] == 1
    # an entry as capbench wrote it under schema 1: results only in the JSON payload
    conn.execute("INSERT INTO specimens VALUES ('QF-OLD-01', 'old sheet', '2024-01-01')")
    payload = {"results": {"points": [dict(RESULTS[0], tan_delta=2e-4, u_tan_delta=1e-5)]}}
    conn.execute(
        "INSERT INTO entries (created, kind, specimen_id, method, capbench_version, payload) "
        "VALUES ('2024-01-01T10:00:00+00:00', 'extract', 'QF-OLD-01', 'contacting', '0.0.9', ?)",
        (json.dumps(payload),),
    )
    conn.execute("INSERT INTO readings VALUES (1, 0, 100.0, 2e-11, 2e-4, NULL, NULL)")
    conn.close()
    with store.BenchLog(path) as log:
        assert log.schema_version == store.SCHEMA_VERSION == 3
        e = log.entry(1)
        assert e.operator == "" and e.capbench_version == "0.0.9"
        assert len(e.readings) == 1
        assert e.results[0]["eps_r"] == RESULTS[0]["eps_r"]
        assert e.results[0]["tan_delta"] == 2e-4
        applied = [r[0] for r in log._conn.execute("SELECT version FROM migrations")]
        assert applied == [1, 2, 3]
        add_one(log)  # and it writes in the new schema
        assert log.entry(2).operator == "R. Quill"


def test_migration_from_version_2_keeps_rows_and_adds_the_new_columns(tmp_path):
    path = tmp_path / "v2.sqlite"
    conn = sqlite3.connect(path, isolation_level=None)
    assert store.migrate(conn, target=2) == 0
    # an entry as capbench wrote it under schema 2: readings without spacings or fluid
    conn.execute("INSERT INTO specimens VALUES ('QF-OLD-02', 'old sheet', '2024-02-01')")
    conn.execute(
        "INSERT INTO entries (created, kind, specimen_id, method, capbench_version, operator) "
        "VALUES ('2024-02-01T10:00:00+00:00', 'extract', 'QF-OLD-02', 'air gap', '0.1.0', 'R. Q.')"
    )
    conn.execute("INSERT INTO readings VALUES (1, 0, 100.0, 2e-11, 2e-4, 1.2e-11, 1e-5)")
    conn.close()
    with store.BenchLog(path) as log:
        assert log.schema_version == 3
        old = log.entry(1).readings[0]
        assert (old["frequency"], old["capacitance"], old["empty_capacitance"]) == (
            100.0,
            2e-11,
            1.2e-11,
        )
        assert old["loaded_spacing"] is None and old["fluid"] is None
        # new rows keep every field of a reading
        rows = (
            Reading(
                1e3,
                16.1e-12,
                1.1e-4,
                16.1e-12,
                1e-5,
                line=4,
                loaded_spacing=1.6535e-3,
                empty_spacing=0.6681e-3,
            ),
            Reading(1e3, 11.7e-12, 7.8e-3, 7.34e-12, line=5, fluid=2),
        )
        i = log.add(kind="extract", specimen_id="QF-PS-07", method="micrometer", readings=rows)
    with store.BenchLog(path) as log:
        back = log.entry(i).readings
        for r, row in zip(rows, back, strict=True):
            for key in store._READING_COLUMNS:
                assert row[key] == getattr(r, key), key
        assert back[1]["fluid"] == 2 and back[0]["empty_spacing"] == 0.6681e-3


def test_bad_kind_and_limit(tmp_path):
    with store.BenchLog(tmp_path / "x.sqlite") as log:
        with pytest.raises(cb.StoreError, match="entry kind = 'guess'; valid"):
            log.add(kind="guess")
        with pytest.raises(cb.StoreError, match="limit = 0; valid: 1 to 1000000"):
            log.entries(limit=0)
