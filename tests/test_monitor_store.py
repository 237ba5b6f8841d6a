"""The monitoring store and ingest: idempotent, crash-safe (real SIGKILL), inputs untouched,
clear errors, a versioned schema (analyses/monitor.py, stores/monitor_store.py)."""

from __future__ import annotations

import os
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from shufflecheck.analyses.monitor import deck_digests, fleet_status, ingest_log
from shufflecheck.common.errors import InputError
from shufflecheck.common.files import sha256_file
from shufflecheck.stats.monitoring import MonitorPlan
from shufflecheck.stores import SCHEMA_VERSION, MonitorStore

from ._monitor_data import frame, table_decks, write_frame

DEMO_7 = Path(__file__).resolve().parents[1] / "shufflecheck/demo_data/logs/table7.csv"


def dump(store: Path) -> list[tuple]:
    """Every row of every table of the store except timestamps of ingests (a snapshot)."""
    with sqlite3.connect(store) as db:
        out = []
        for (name,) in db.execute("SELECT name FROM sqlite_master WHERE type='table'"):
            rows = db.execute(f"SELECT * FROM {name}").fetchall()
            out.append((name, sorted(map(repr, rows))))
        return sorted(out)


def state_of(store: Path, *, rows: bool = True) -> list[tuple]:
    """What monitoring depends on: per table, the decks, their values and the state (and
    the row numbers, which depend on the files the decks came from)."""
    with MonitorStore(store, create=False) as db:
        out = []
        for row in db.tables():
            blocks = db.decks(row.id, len(row.columns["statistics"]), row.columns["dtype"])
            out.append(
                (
                    row.name,
                    row.decks,
                    row.last_time,
                    blocks.rows.tolist() if rows else None,
                    blocks.digests.tolist(),
                    blocks.stats.tolist(),
                    row.state["decks"],
                    round(row.state["max_family_log_e"], 9),
                    row.state["family_alarm"],
                    row.state["change_alarm"],
                )
            )
        return out


@pytest.fixture(scope="module")
def logs(tmp_path_factory) -> dict[str, Path]:
    """Two tables in one file, 300 decks each; the same as two halves and an overlap."""
    folder = tmp_path_factory.mktemp("logs")
    a = frame("Table 3", table_decks(None, 300, seed=3), every=60)
    b = frame("Table 5", table_decks("riffle x4", 300, seed=5), every=60, offset=30)
    both = pd.concat([a, b])
    times = pd.to_datetime(both["recorded_at"])
    cut = times.sort_values().iloc[len(both) // 2]
    return {
        "whole": write_frame(folder / "whole.csv", both),
        "first": write_frame(folder / "first.csv", both[times < cut]),
        "rest": write_frame(folder / "rest.csv", both[times >= cut]),
        # an export that repeats the last 100 rows of "first" before the new ones
        "overlap": write_frame(
            folder / "overlap.csv",
            both[times >= times[times < cut].sort_values().iloc[-100]],
        ),
    }


class TestIngest:
    def test_same_file_twice_adds_nothing(self, tmp_path, logs):
        store = tmp_path / "fleet.db"
        first = ingest_log(store, logs["whole"])
        assert {t.table: t.decks_tested for t in first.tables} == {
            "Table 3": 300,
            "Table 5": 300,
        }
        snapshot = dump(store)
        again = ingest_log(store, logs["whole"])
        assert again.already is not None and again.decks_added == 0
        assert dump(store) == snapshot

    def test_overlap_and_halves_equal_the_whole(self, tmp_path, logs):
        whole, split = tmp_path / "whole.db", tmp_path / "split.db"
        ingest_log(whole, logs["whole"])
        ingest_log(split, logs["first"])
        overlap = ingest_log(split, logs["overlap"])
        assert sum(t.decks_known for t in overlap.tables) == 100
        again = ingest_log(split, logs["rest"])  # every deck of it is already stored
        assert again.decks_added == 0
        assert sum(t.decks_known for t in again.tables) > 0
        assert state_of(split, rows=False) == state_of(whole, rows=False)
        with MonitorStore(split, create=False) as db:
            files = db.files()
        assert {f["path"] for f in files} == {str(logs[k]) for k in ("first", "overlap", "rest")}
        assert all(len(f["sha256"]) == 64 for f in files)
        assert all(f["first_row"] >= 2 and f["last_row"] >= f["first_row"] for f in files)

    def test_inputs_are_never_modified(self, tmp_path, logs):
        before = {k: (sha256_file(p), p.stat().st_mtime_ns) for k, p in logs.items()}
        store = tmp_path / "s.db"
        for key in ("first", "overlap", "rest", "whole"):
            ingest_log(store, logs[key])
        assert {k: (sha256_file(p), p.stat().st_mtime_ns) for k, p in logs.items()} == before

    def test_a_deck_out_of_time_order_is_refused_and_nothing_changes(self, tmp_path, logs):
        store = tmp_path / "s.db"
        ingest_log(store, logs["rest"])
        snapshot = dump(store)
        with pytest.raises(InputError, match="already holds decks up to"):
            ingest_log(store, logs["first"])  # older decks the store does not hold
        assert dump(store) == snapshot

    def test_time_going_back_inside_a_file(self, tmp_path):
        rows = frame("T", table_decks(None, 20, seed=1), every=60)
        path = tmp_path / "bad.csv"
        write_frame(path, rows)
        text = path.read_text().splitlines()
        text[5], text[6] = text[6], text[5]  # swap rows 6 and 7 (row 7 is then earlier)
        path.write_text("\n".join(text) + "\n")
        with pytest.raises(InputError, match=r"bad.csv row 7: the time of table 'T' goes back"):
            ingest_log(tmp_path / "s.db", path)

    def test_demo_table7(self, tmp_path):
        result = ingest_log(tmp_path / "s.db", DEMO_7)
        (t,) = result.tables
        assert (t.table, t.first_row, t.last_row, t.decks_tested) == ("Table 7", 2, 2402, 2400)

    def test_errors(self, tmp_path, logs):
        with pytest.raises(InputError, match="no such file"):
            ingest_log(tmp_path / "s.db", tmp_path / "missing.csv")
        with pytest.raises(InputError, match="time column 'when'"):
            ingest_log(tmp_path / "s.db", logs["whole"], time="when")
        with pytest.raises(InputError, match="not both"):
            ingest_log(tmp_path / "s.db", logs["whole"], table="x", by="table")
        ingest_log(tmp_path / "p.db", logs["first"], plan=MonitorPlan(alpha=0.05))
        with pytest.raises(InputError, match="levels cannot change"):
            ingest_log(tmp_path / "p.db", logs["rest"], plan=MonitorPlan(alpha=0.01))
        ingest_log(tmp_path / "p.db", logs["rest"])  # no plan: the table's own

    def test_digests_tell_orders_apart(self):
        rng = np.random.default_rng(0)
        decks = rng.permuted(np.tile(np.arange(52), (20_000, 1)), axis=1)
        digests = deck_digests(decks)
        assert np.unique(digests).size == 20_000
        assert deck_digests(decks[:5]).tolist() == digests[:5].tolist()


class TestStoreFile:
    def test_schema_is_versioned(self, tmp_path, logs):
        store = tmp_path / "s.db"
        ingest_log(store, logs["first"])
        with sqlite3.connect(store) as db:
            (version,) = db.execute("SELECT value FROM meta WHERE key='schema_version'").fetchone()
            assert version == str(SCHEMA_VERSION) == "1"
            db.execute("UPDATE meta SET value='99' WHERE key='schema_version'")
        with pytest.raises(InputError, match="schema version 99"):
            ingest_log(store, logs["rest"])

    def test_not_a_store(self, tmp_path, logs):
        bogus = tmp_path / "x.db"
        bogus.write_text("hello")
        with pytest.raises(InputError, match="not a monitoring store"):
            ingest_log(bogus, logs["first"])
        with pytest.raises(InputError, match="does not exist"):
            fleet_status(tmp_path / "none.db")


_KILLER = """
import os, signal, sys
from shufflecheck.stores import monitor_store
original = monitor_store.MonitorStore.add_block
calls = [0]
def add_block(self, *args, **kwargs):
    original(self, *args, **kwargs)
    calls[0] += 1
    if calls[0] == int(sys.argv[3]):
        os.kill(os.getpid(), signal.SIGKILL)   # a real kill, mid-transaction
monitor_store.MonitorStore.add_block = add_block
from shufflecheck.analyses.monitor import ingest_log
ingest_log(sys.argv[1], sys.argv[2], chunk_rows=int(sys.argv[4]))
"""


class TestCrash:
    @pytest.mark.parametrize("after_blocks", [1, 3])
    def test_kill_mid_ingest_leaves_the_store_as_before(self, tmp_path, logs, after_blocks):
        store = tmp_path / "s.db"
        ingest_log(store, logs["first"])
        before = dump(store)
        proc = subprocess.run(
            [sys.executable, "-c", _KILLER, str(store), str(logs["rest"]), str(after_blocks), "40"],
            capture_output=True,
            text=True,
            timeout=120,
        )
        assert proc.returncode == -signal.SIGKILL, proc.stderr
        # the killed process left a hot journal; opening the store rolls it back
        assert dump(store) == before
        # nothing lost or doubled: finishing the ingest gives the store of a clean run
        ingest_log(store, logs["rest"])
        clean = tmp_path / "clean.db"
        ingest_log(clean, logs["first"])
        ingest_log(clean, logs["rest"])
        assert state_of(store) == state_of(clean)

    def test_kill_from_outside_while_the_journal_is_open(self, tmp_path, logs):
        store = tmp_path / "s.db"
        ingest_log(store, logs["first"])
        before = dump(store)
        journal = Path(str(store) + "-journal")
        script = (
            "import sys\nfrom shufflecheck.analyses.monitor import ingest_log\n"
            "ingest_log(sys.argv[1], sys.argv[2], chunk_rows=5)\n"
        )
        proc = subprocess.Popen(
            [sys.executable, "-c", script, str(store), str(logs["whole"])],
            stderr=subprocess.PIPE,
        )
        deadline = time.monotonic() + 60
        while not journal.exists() and proc.poll() is None and time.monotonic() < deadline:
            time.sleep(0.001)
        if proc.poll() is not None:
            pytest.fail(f"the ingest finished before it could be killed: {proc.stderr.read()}")
        time.sleep(0.05)
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait(timeout=30)
        assert proc.returncode == -signal.SIGKILL
        assert dump(store) == before
        ingest_log(store, logs["whole"])
        clean = tmp_path / "clean.db"
        ingest_log(clean, logs["whole"])
        assert state_of(store) == state_of(clean)
