"""Audits of many logs: parts merge exactly, and a real Dask cluster gives the result of one
process to the last digit.

The cluster is a ``distributed.LocalCluster`` with 2 workers run as threads of the test
process (``processes=False``: the same scheduler, workers and task protocol, without
starting two more interpreters on the shared 2-core machine). The engine's default, worker
processes, is what ``shufflecheck audit`` starts; the benchmark runs it
(tests/benchmarks/test_bench_fleet.py).
"""

from __future__ import annotations

import json
import shutil

import numpy as np
import pytest

from shufflecheck.analyses.audit_log import audit_log
from shufflecheck.analyses.log_parts import AuditOptions, merge_parts, scan_sources
from shufflecheck.common.errors import InputError
from shufflecheck.models.riffle import sample as riffles
from shufflecheck.records.cards import STANDARD_52
from shufflecheck.records.logs import write_log
from shufflecheck.records.logs.sources import log_sources

from ._cli import command_json

distributed = pytest.importorskip("distributed")
pa = pytest.importorskip("pyarrow")
pq = pytest.importorskip("pyarrow.parquet")

N = 52


def uniform(count: int, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return rng.permuted(np.tile(np.arange(N, dtype=np.int16), (count, 1)), axis=1)


def chain(start: np.ndarray, count: int, seed: int, riffles_per_deck: int) -> np.ndarray:
    """Decks each made from the one before by ``riffles_per_deck`` ideal riffles (a biased
    machine for small counts), starting from ``start``."""
    rel = riffles(count, N, riffles_per_deck, rng=seed).astype(np.int16)
    out = np.empty((count, N), dtype=np.int16)
    deck = start
    for k in range(count):
        deck = deck[rel[k]]
        out[k] = deck
    return out


def comparable(audit) -> str:
    data = audit.as_json()
    data["log"].pop("engine")
    return json.dumps(data, sort_keys=True, default=str)


@pytest.fixture(scope="module")
def cluster():
    with distributed.LocalCluster(
        n_workers=2, threads_per_worker=1, processes=False, dashboard_address=":0"
    ) as local:
        yield local


@pytest.fixture(scope="module")
def dataset(tmp_path_factory):
    """A Parquet dataset partitioned by table and date (integer labels in p1..p52), times
    in a column; table T7's machine goes biased on the second day."""
    root = tmp_path_factory.mktemp("fleet") / "decks"
    start = np.datetime64("2026-11-01T18:00:00")
    for t, table in enumerate(["T1", "T2", "T7"]):
        last = np.arange(N, dtype=np.int16)
        for d, day in enumerate(["2026-11-01", "2026-11-02"]):
            m = 220 + 10 * t + 5 * d
            if table == "T7" and d == 1:
                decks = chain(last, m, seed=100 + t, riffles_per_deck=3)
            else:
                decks = uniform(m, seed=10 * t + d)
            last = decks[-1]
            stamps = start + np.timedelta64(d, "D") + np.arange(m) * np.timedelta64(30, "s")
            cols = {f"p{k + 1}": pa.array(decks[:, k].astype(np.int8)) for k in range(N)}
            cols["recorded_at"] = pa.array(stamps.astype(str))
            folder = root / f"table={table}" / f"date={day}"
            folder.mkdir(parents=True)
            pq.write_table(pa.table(cols), folder / "part-0.parquet")
    return root


class TestDaskEqualsOneProcess:
    def test_partitioned_dataset_by_table(self, dataset, cluster):
        options = dict(labels="int0", by="table", time="recorded_at")
        one = audit_log(dataset, **options)
        many = audit_log(dataset, scheduler=cluster.scheduler_address, **options)
        assert comparable(one) == comparable(many)
        assert many.engine == f"dask, cluster at {cluster.scheduler_address}, 2 workers"
        assert one.engine == "single process"
        # each table's second day starts with a deck compared with the first day's last
        assert (
            many.tested
            == one.tested
            == sum(220 + 10 * t + 5 * d for t in range(3) for d in range(2)) - 3
        )
        fleet = many.fleet()
        assert fleet["groups"] == 3 and fleet["flagged"] == 1
        assert fleet["strongest"][0]["group"] == "T7"
        # the biased stretch begins with the second day's first deck, row 1 of its file: the
        # deck that only a merge of the two days' parts can test
        assert fleet["strongest"][0]["since_when"] == (
            f"{dataset}/table=T7/date=2026-11-02/part-0.parquet row 1, 2026-11-02T18:00:00"
        )

    def test_cli_with_a_scheduler(self, dataset, cluster):
        data = command_json(
            "audit",
            dataset,
            "--labels",
            "int0",
            "--by",
            "table",
            "--scheduler",
            cluster.scheduler_address,
        )
        assert data["log"]["engine"].startswith("dask, cluster at")
        assert data["fleet"]["flagged"] == 1 and data["log"]["files"] == 6

    def test_folder_of_csv_logs_with_bad_rows(self, tmp_path, cluster):
        folder = tmp_path / "logs"
        folder.mkdir()
        decks = uniform(300, seed=5)
        for k, part in enumerate(np.array_split(decks, 3)):
            path = folder / f"day{k}.csv"
            write_log(
                path,
                part,
                columns={"table": ["A", "B"] * (len(part) // 2) + ["A"] * (len(part) % 2)},
            )
            lines = path.read_text().splitlines()
            lines[5] = lines[5].replace(lines[5].split(",")[-1][:2], "ZZ", 1)  # unknown code
            if k == 1:
                lines.insert(2, "A,too,many,fields")  # unreadable: its group is unknown
            path.write_text("\n".join(lines) + "\n")
        for by in (None, "table"):
            one = audit_log(folder, by=by, quarantine=tmp_path / f"aside-{by}")
            many = audit_log(
                folder,
                by=by,
                quarantine=tmp_path / f"aside2-{by}",
                scheduler=cluster.scheduler_address,
            )
            a, b = json.loads(comparable(one)), json.loads(comparable(many))
            a["log"].pop("quarantine"), b["log"].pop("quarantine")
            assert a == b
            assert one.set_aside == 4 and one.after_set_aside > 0

    def test_first_refused(self, dataset, cluster):
        with pytest.raises(
            InputError, match="reference 'first' relates decks across the whole log"
        ):
            audit_log(
                dataset, labels="int0", reference="first", scheduler=cluster.scheduler_address
            )


class TestMergeIsExact:
    """Without a cluster: one log split into files, audited part by part and merged, equals
    the audit of the whole log (a different code path: one stream over one file)."""

    @pytest.mark.parametrize("seed", [1, 2])
    def test_random_splits(self, tmp_path, seed):
        rng = np.random.default_rng(seed)
        decks = np.concatenate(
            [uniform(150, seed), chain(np.arange(N, dtype=np.int16), 120, seed, 4)]
        )
        tables = rng.choice(["A", "B", "C"], size=len(decks))
        whole = tmp_path / "whole.csv"
        write_log(whole, decks, columns={"table": tables})
        cuts = np.sort(rng.choice(np.arange(1, len(decks)), size=4, replace=False))
        folder = tmp_path / "parts"
        folder.mkdir()
        for k, (lo, hi) in enumerate(zip([0, *cuts], [*cuts, len(decks)], strict=True)):
            write_log(folder / f"part{k}.csv", decks[lo:hi], columns={"table": tables[lo:hi]})
        options = AuditOptions(deck=STANDARD_52, by="table")
        sources = log_sources(folder)
        paths = [s.path for s in sources]
        merged = None
        for index, source in enumerate(sources):
            part = scan_sources([source], options, first_index=index, several=True)
            merged = part if merged is None else merge_parts(merged, part, options, paths)
        one = scan_sources(log_sources(whole), options)
        assert merged.tested == one.tested and merged.reference_only == one.reference_only == 3
        a, b = merged.summary.as_arrays(), one.summary.as_arrays()
        assert a.keys() == b.keys()
        for key in a:
            assert np.array_equal(a[key], b[key]), key
        whole_audit = audit_log(whole, by="table")
        folder_audit = audit_log(folder, by="table")
        x, y = whole_audit.as_json(), folder_audit.as_json()
        for data in (x, y):  # where a deck is (file, row) differs; nothing else may
            data.pop("log"), data.pop("since_when_rows", None)
            for row in data["fleet"]["table"] + data["fleet"]["strongest"]:
                row.pop("since_when", None)
        assert x == y


def test_sources_in_order(tmp_path):
    for name in ["b/x.csv", "a/y.csv", "a/x.csv.gz", "a/notes.md"]:
        (tmp_path / name).parent.mkdir(parents=True, exist_ok=True)
        (tmp_path / name).write_text("")
    assert [s.path.relative_to(tmp_path).as_posix() for s in log_sources(tmp_path)] == [
        "a/x.csv.gz",
        "a/y.csv",
        "b/x.csv",
    ]
    (tmp_path / "ds" / "table=T7" / "date=2026-11-02").mkdir(parents=True)
    (tmp_path / "ds" / "table=T7" / "date=2026-11-02" / "part-0.parquet").write_text("")
    found = log_sources(str(tmp_path / "ds" / "table=T7" / "*" / "*.parquet"))
    assert found[0].constants == (("table", "T7"), ("date", "2026-11-02"))
    shutil.rmtree(tmp_path / "ds")
    with pytest.raises(InputError, match="no file matches"):
        log_sources(str(tmp_path / "*.jsonl"))
    shutil.rmtree(tmp_path / "a")
    shutil.rmtree(tmp_path / "b")
    with pytest.raises(InputError, match="a folder without logs"):
        log_sources(tmp_path)
