"""The single-process audit at its floor (issue 11: a 1,000,000-deck CSV of 52 cards
audited in <= 5 s CPU and <= 300 MB).

The anchor, measured in the same run: reading the same file with pyarrow's CSV reader and
decoding its order column to int8 labels with a lookup table (no validation, no
statistics), the floor the issue names. Each figure is measured in a fresh interpreter
(CPU seconds of that process, all threads; peak resident memory, VmHWM).
"""

from __future__ import annotations

import numpy as np
import pytest

from shufflecheck.records.logs import write_log

from ._memory import measure

DECKS = 1_000_000
N = 52

_ANCHOR = """
import numpy as np, pyarrow as pa, pyarrow.csv as pacsv
from shufflecheck.records.cards import STANDARD_52
table = np.full(1 << 16, -1, dtype=np.int8)
for code, label in STANDARD_52.spellings().items():
    data = code.encode()
    if len(data) == 2:
        table[data[0] | data[1] << 8] = label
"""
_ANCHOR_BODY = """
t = pacsv.read_csv({path!r}, read_options=pacsv.ReadOptions(use_threads=False),
                   convert_options=pacsv.ConvertOptions(column_types={{"order": pa.string()}}))
order = t.column("order").combine_chunks()
offsets = np.frombuffer(order.buffers()[1], dtype=np.int32)[: len(order) + 1]
buf = np.frombuffer(order.buffers()[2], dtype=np.uint8)
width = 3 * 52 - 1  # every order of this file has one width: decoded as one byte matrix
assert (np.diff(offsets) == width).all()
rows = buf[offsets[0] : offsets[-1]].reshape(-1, width)
decks = table[rows[:, 0::3].astype(np.uint16) | rows[:, 1::3].astype(np.uint16) << 8]
assert decks.shape == ({decks}, 52) and (decks >= 0).all()
"""


@pytest.fixture(scope="module")
def million(tmp_path_factory):
    """1,000,000 uniformly random decks with the usual kept columns (invented card room)."""
    path = tmp_path_factory.mktemp("floor") / "million.csv"
    rng = np.random.default_rng(1601)
    decks = rng.permuted(np.tile(np.arange(N, dtype=np.int16), (DECKS, 1)), axis=1)
    start = np.datetime64("2026-11-02T18:00:00")
    write_log(
        path,
        decks,
        columns={
            "deck": np.arange(1, DECKS + 1),
            "table": np.array(["Table 1", "Table 2", "Table 7"])[np.arange(DECKS) % 3],
            "recorded_at": (start + np.arange(DECKS) * np.timedelta64(2, "s")).astype(str),
        },
    )
    return path


def test_audit_against_the_pyarrow_floor(benchmark, figures, million):
    pytest.importorskip("pyarrow")

    def run():
        anchor = measure(_ANCHOR, _ANCHOR_BODY.format(path=str(million), decks=DECKS))
        audit = measure(
            "from shufflecheck.analyses.audit_log import audit_log",
            f"result = audit_log({str(million)!r})\nassert result.tested == {DECKS - 1}",
        )
        return anchor, audit

    (_, _anchor_peak, anchor_cpu), (base, peak, cpu) = benchmark.pedantic(
        run, rounds=1, iterations=1
    )
    figures(
        f"anchor: pyarrow read + int8 decode of {DECKS:,} decks, CPU",
        anchor_cpu,
        None,
        note="same-run baseline; the issue measured about 1 to 1.6 s for it",
    )
    figures(f"audit of {DECKS:,} decks (CSV, reference previous), CPU", cpu, 5.0)
    figures("audit CPU / anchor CPU (same run)", cpu / anchor_cpu, None, "x", "the ratio")
    figures("audit peak resident memory (whole process)", peak, 300, "MB")
    figures("audit peak memory above the imports", peak - base, 300, "MB")
