"""Fleet ingestion on a real Dask cluster (issue 12): many logs of several tables ingested on
a ``distributed.LocalCluster`` give exactly the store that ingesting them one by one in one
process gives (decks, per-deck values, e-process and detector states, alarms, change-point
sets, row ranges, file SHA-256 rows), and re-ingesting them adds nothing.

The expected side is the project's own one-process ingest (``ingest_log``), which the other
monitoring tests check against exact laws and a real kill; here the check is that the
parallel path changes nothing. The cluster runs its 2 workers as threads of the test
process (``processes=False``: the same scheduler, workers and task protocol without two
more interpreters on the shared 2-core machine); the benchmark runs worker processes.
"""

from __future__ import annotations

import json
import sqlite3
from pathlib import Path

import pandas as pd
import pytest

from shufflecheck.analyses.monitor import fleet_status, ingest_log, ingest_logs
from shufflecheck.common.errors import InputError
from shufflecheck.common.files import sha256_file

from ._cli import command_json, one_line_error, run
from ._monitor_data import frame, table_decks, write_days, write_frame

distributed = pytest.importorskip("distributed")

CHUNK = 64  # small reader chunks, so one table's decks of a file come in several pieces
#: columns that hold the wall-clock time of an ingest (they differ between two runs)
CLOCK_COLUMNS = {"ingested_at", "created_at", "updated_at"}


def dump(store: Path) -> dict[str, list]:
    """Every row of every table of the store, clock columns blanked, rows sorted."""
    out = {}
    with sqlite3.connect(store) as db:
        names = [n for (n,) in db.execute("SELECT name FROM sqlite_master WHERE type='table'")]
        for name in names:
            cursor = db.execute(f"SELECT * FROM {name}")
            columns = [c[0] for c in cursor.description]
            rows = []
            for row in cursor.fetchall():
                if name == "meta" and row[0] == "created_at":
                    continue
                pairs = zip(columns, row, strict=True)
                rows.append(repr(tuple(None if c in CLOCK_COLUMNS else v for c, v in pairs)))
            out[name] = sorted(rows)
    return out


def status(store: Path) -> str:
    """The fleet status a user reads (JSON), without the clock and the store's path."""
    data = fleet_status(store).as_json()
    for key in ("generated_at", "store"):
        data.pop(key)
    for table in data["tables"]:
        table.pop("created_at")
        table.pop("last_ingest")
    return json.dumps(data, sort_keys=True)


def outcome(results) -> list[dict]:
    """What each file's ingest reported, without timings and clock."""
    out = []
    for r in results:
        data = r.as_json()
        data.pop("seconds")
        data.pop("store")
        if data["already_ingested"] is not None:
            data["already_ingested"].pop("at")
        out.append(data)
    return out


@pytest.fixture(scope="module")
def cluster():
    with distributed.LocalCluster(
        n_workers=2, threads_per_worker=1, processes=False, dashboard_address=":0"
    ) as local:
        yield local


@pytest.fixture(scope="module")
def logs(tmp_path_factory) -> list[Path]:
    """Logs of an invented card room, in the order they are ingested: day files of three
    tables (Table 2 a biased machine, Table 4 one that changes at deck 300), an export
    repeating the end of day 2 and the start of day 3, Table 6's own log in two files, and
    day 1 given again."""
    folder = tmp_path_factory.mktemp("fleet-logs")
    rows = pd.concat(
        [
            frame("Table 1", table_decks(None, 599, seed=11), every=240),
            frame("Table 2", table_decks("riffle x3", 599, seed=12), every=240, offset=60),
            frame(
                "Table 4",
                table_decks(None, 599, seed=14, change=(300, "riffle x4")),
                every=240,
                offset=120,
            ),
        ]
    )
    days = write_days(folder, rows)
    assert len(days) == 3
    times = pd.to_datetime(rows["recorded_at"])
    midnight = times.dt.floor("D").drop_duplicates().sort_values().iloc[2]
    near = rows[(times >= midnight - pd.Timedelta("3h")) & (times < midnight + pd.Timedelta("3h"))]
    overlap = write_frame(folder / "export-overlap.csv", near)
    six = frame("Table 6", table_decks(None, 299, seed=16), every=300, offset=30)
    six_first = write_frame(folder / "table6-a.csv", six.iloc[:170])
    six_rest = write_frame(folder / "table6-b.csv", six.iloc[170:])
    return [days[0], six_first, days[1], overlap, six_rest, days[2], days[0]]


def one_by_one(store: Path, logs: list[Path]) -> list:
    return [ingest_log(store, path, chunk_rows=CHUNK) for path in logs]


def on_cluster(store: Path, logs: list[Path], cluster):
    return ingest_logs(
        store, logs, engine="dask", scheduler=cluster.scheduler_address, chunk_rows=CHUNK
    )


class TestDaskEqualsOneByOne:
    def test_store_equals_the_one_by_one_ingest(self, tmp_path, logs, cluster):
        before = {p: sha256_file(p) for p in logs}
        one, many = tmp_path / "one.db", tmp_path / "many.db"
        expected = one_by_one(one, logs)
        result = on_cluster(many, logs, cluster)
        assert result.engine == f"dask, cluster at {cluster.scheduler_address}, 2 workers"
        assert dump(many) == dump(one)
        assert status(many) == status(one)
        assert outcome(result.files) == outcome(expected)
        # the data exercise what they should: alarms, a change-point set, known decks of an
        # overlapping export, a file given twice, a table first seen in a later file
        final = {t["table"]: t for t in json.loads(status(many))["tables"]}
        assert final["Table 2"]["evidence"]["alarm"] is not None
        assert final["Table 4"]["change"]["alarm"] is not None
        assert final["Table 4"]["change"]["set_now"]["low"] <= 300
        assert final["Table 1"]["evidence"]["alarm"] is None
        assert {t: final[t]["decks"] for t in final} == {
            "Table 1": 599,
            "Table 2": 599,
            "Table 4": 599,
            "Table 6": 299,
        }
        assert sum(t.decks_known for t in result.files[3].tables) > 0
        assert sum(t.decks_known for t in result.files[5].tables) > 0
        assert result.files[-1].already is not None
        with MonitorRows(many) as files:
            assert files == [(str(p), sha256_file(p)) for p in logs[:-1]]
        assert {p: sha256_file(p) for p in logs} == before  # logs are only read
        # re-ingesting everything on the cluster adds nothing
        snapshot = dump(many)
        again = on_cluster(many, logs, cluster)
        assert all(r.already is not None and r.decks_added == 0 for r in again.files)
        assert dump(many) == snapshot

    def test_a_bad_file_keeps_the_files_before_it(self, tmp_path, logs, cluster):
        # day 1 after day 2: older decks the store does not hold (refused, nothing of it added)
        bad = [logs[2], logs[1], logs[0]]
        many, one = tmp_path / "many.db", tmp_path / "one.db"
        with pytest.raises(InputError, match=r"day-01.csv row \d+: table 'Table \d' already holds"):
            on_cluster(many, bad, cluster)
        one_by_one(one, bad[:2])
        assert dump(many) == dump(one)
        # and ingesting goes on from there as it would one by one
        on_cluster(many, [logs[3], logs[5]], cluster)
        one_by_one(one, [logs[3], logs[5]])
        assert dump(many) == dump(one)

    def test_reading_errors_come_back_with_file_and_row(self, tmp_path, logs, cluster):
        broken = tmp_path / "broken.csv"
        text = logs[1].read_text().splitlines()
        text[7] = text[7].replace("AS", "XX", 1) if "AS" in text[7] else text[7] + " XX"
        broken.write_text("\n".join(text) + "\n")
        store = tmp_path / "s.db"
        with pytest.raises(InputError, match=r"broken.csv row 8") as caught:
            on_cluster(store, [logs[0], broken], cluster)
        with pytest.raises(InputError) as alone:
            ingest_log(tmp_path / "other.db", broken)
        assert str(caught.value) == str(alone.value)
        with sqlite3.connect(store) as db:
            assert db.execute("SELECT COUNT(*) FROM ingested_files").fetchone() == (1,)

    def test_cli_engine_options(self, tmp_path, logs, cluster):
        store = tmp_path / "cli.db"
        data = command_json(
            "monitor",
            "ingest",
            store,
            *logs[:3],
            "--engine",
            "dask",
            "--scheduler",
            cluster.scheduler_address,
        )
        assert [f["file"] for f in data] == [str(p) for p in logs[:3]]
        one = tmp_path / "one.db"
        for path in logs[:3]:
            ingest_log(one, path)
        assert dump(store) == dump(one)
        refused = run("monitor", "ingest", store, logs[0], "--engine", "dask", "--workers", "0")
        assert "--workers" in one_line_error(refused)


class MonitorRows:
    """The store's file rows (path, SHA-256) in ingest order."""

    def __init__(self, store: Path) -> None:
        self.db = sqlite3.connect(store)

    def __enter__(self) -> list[tuple[str, str]]:
        return self.db.execute("SELECT path, sha256 FROM ingested_files ORDER BY id").fetchall()

    def __exit__(self, *exc: object) -> None:
        self.db.close()


_KILLER = """
import os, signal, sys
from shufflecheck.stores import monitor_store
original = monitor_store.MonitorStore.add_block
def add_block(self, table_id, first_deck, file_id, **kwargs):
    original(self, table_id, first_deck, file_id, **kwargs)
    if file_id == 2:
        os.kill(os.getpid(), signal.SIGKILL)   # a real kill, inside the second file's commit
monitor_store.MonitorStore.add_block = add_block
from shufflecheck.analyses.monitor import ingest_logs
ingest_logs(sys.argv[1], sys.argv[2:], engine="dask", workers=1, processes=False, chunk_rows=64)
"""


@pytest.mark.slow  # a fresh interpreter with distributed and a cluster: about 10 s here
def test_kill_during_a_commit_keeps_the_files_before(tmp_path, logs):
    """The cluster's results reach the store only through this process's transactions: a
    kill inside the second file's commit leaves the first file's, and finishing the ingest
    gives the store of a clean one-by-one run."""
    import signal
    import subprocess
    import sys

    store = tmp_path / "s.db"
    batch = [logs[0], logs[2], logs[5]]
    proc = subprocess.run(
        [sys.executable, "-c", _KILLER, str(store), *map(str, batch)],
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert proc.returncode == -signal.SIGKILL, proc.stderr
    first = tmp_path / "first.db"
    one_by_one(first, batch[:1])
    assert dump(store) == dump(first)  # the hot journal is rolled back at this open
    ingest_logs(store, batch, engine="dask", workers=1, processes=False, chunk_rows=CHUNK)
    clean = tmp_path / "clean.db"
    one_by_one(clean, batch)
    assert dump(store) == dump(clean)


class _Inline:
    """A stand-in for a Dask session that runs each task at once, in this process; whether
    a finished task reports itself done is chosen, so both orders of checking and
    committing are taken deterministically."""

    class _Done:
        def __init__(self, value) -> None:
            self.value = value

    class cluster:  # the attribute the engine's Session has
        workers = 1

        @staticmethod
        def describe() -> str:
            return "inline"

    def __init__(self, report_done: bool) -> None:
        self.report_done = report_done

    def submit(self, function, *args):
        args = [a.value if isinstance(a, self._Done) else a for a in args]
        return self._Done(function(*args))

    def result(self, future):
        return future.value

    def done(self, future) -> bool:
        return self.report_done

    def worker_peak_mb(self) -> dict:
        return {}


@pytest.mark.parametrize("report_done", [True, False], ids=["commit-early", "commit-late"])
def test_checks_before_and_after_the_earlier_commits(tmp_path, logs, monkeypatch, report_done):
    """Each file's checks either find the earlier files of the run already in the store
    (commit-early) or only in the run's own memory (commit-late: every commit waits to the
    end); both give the one-by-one store."""
    import contextlib

    import shufflecheck.engines.dask as engine

    @contextlib.contextmanager
    def inline(*args, **kwargs):
        yield _Inline(report_done)

    monkeypatch.setattr(engine, "session", inline)
    many, one = tmp_path / "many.db", tmp_path / "one.db"
    result = ingest_logs(many, logs, engine="dask", chunk_rows=CHUNK)
    assert result.engine == "inline"
    expected = one_by_one(one, logs)
    assert dump(many) == dump(one)
    assert outcome(result.files) == outcome(expected)
