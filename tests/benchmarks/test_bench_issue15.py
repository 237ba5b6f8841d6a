"""Issue 15, "performance to the floor": every goal measured against its floor or anchor in
the same run, as CPU time (the machine is shared), three repeats each. Nothing here is
asserted against a time; the figures are printed at the end of the run."""

from __future__ import annotations

import math
import statistics
import time
from functools import cache

import numpy as np
import pytest

REPEATS = 3


def _cpu(function, *args, **kwargs) -> float:
    start = time.process_time()
    function(*args, **kwargs)
    return time.process_time() - start


def _record_ratio(figures, what, measured, anchor, target):
    figures(
        f"{what}: {measured:.3f} s vs anchor {anchor:.3f} s, ratio", measured / anchor, target, "x"
    )


# ---------------------------------------------------------------------------------------
# mix transposition --cards 52 --max-steps 250


def _anchor_chain(steps: int) -> None:
    # floor: one cold chain build and `steps` plain single-thread CSR products
    from threadpoolctl import threadpool_limits

    from shufflecheck.models import transposition

    transposition.lumped_chain.cache_clear()
    chain = transposition.lumped_chain(52)
    law = np.zeros(chain.matrix.shape[0])
    law[chain.identity] = 1.0
    with threadpool_limits(1, user_api="blas"):
        for _ in range(steps):
            law = chain.matrix @ law


def _library_chain(steps: int) -> None:
    from shufflecheck.core import partitions
    from shufflecheck.models import transposition

    transposition.lumped_chain.cache_clear()
    transposition._bound_terms.cache_clear()
    partitions._multiplicity_matrix.cache_clear()
    transposition.distance_curve(52, steps)  # what `mix transposition` computes


def test_transposition_chain_vs_floor(benchmark, figures):
    def run():
        _library_chain(2), _anchor_chain(2)  # imports and first-touch work, not timed
        return [(_cpu(_library_chain, 250), _cpu(_anchor_chain, 250)) for _ in range(REPEATS)]

    pairs = benchmark.pedantic(run, rounds=1, iterations=1)
    for measured, anchor in pairs:
        _record_ratio(
            figures, "transposition 52 cards k=1..250 (exact + bound)", measured, anchor, 1.3
        )


# ---------------------------------------------------------------------------------------
# spectrum transposition --cards 52


def test_transposition_spectrum(benchmark, figures):
    from shufflecheck.core import partitions
    from shufflecheck.models import transposition

    def cold():
        partitions.partitions.cache_clear()
        partitions._multiplicity_matrix.cache_clear()
        return transposition.spectrum(52)

    def run():
        return [_cpu(cold) for _ in range(REPEATS)]

    for seconds in benchmark.pedantic(run, rounds=1, iterations=1):
        figures("spectrum transposition, 52 cards, all 281,589 shapes, cold", seconds, 2.0)


# ---------------------------------------------------------------------------------------
# mix riffle --cards 1000 / 2000


def _crossing_point_anchor(n: int, steps: int) -> None:
    # TV and separation only, plain Eulerian recurrence, one crossing point per step
    row = [1]
    for m in range(2, n + 1):
        prev, row = row, [0] * m
        for d in range(m):
            row[d] = ((d + 1) * prev[d] if d < m - 1 else 0) + ((m - d) * prev[d - 1] if d else 0)
    fact = math.factorial(n)
    for k in range(1, steps + 1):
        a = 2**k
        den = a**n
        x = y = 0
        value = math.comb(a + n - 1, n)
        for r in range(1, n + 1):
            if value * fact <= den:
                break
            x += row[r - 1] * value
            y += row[r - 1]
            value = value * (a - r) // (a + n - r) if a - r > 0 else 0
        _ = (x * fact - y * den) / (den * fact), (den - math.comb(a, n) * fact) / den


def _library_riffle(n: int) -> None:
    from shufflecheck.core import counting
    from shufflecheck.models import default_max_steps, riffle

    counting.eulerian_row.cache_clear()
    riffle.distance_curve(n, default_max_steps("riffle", n))


@pytest.mark.parametrize(("n", "target"), [(1000, 1.5), (2000, 10.0)])
def test_riffle_large_decks(benchmark, figures, n, target):
    from shufflecheck.models import default_max_steps

    steps = default_max_steps("riffle", n)

    def run():
        return [
            (_cpu(_library_riffle, n), _cpu(_crossing_point_anchor, n, steps))
            for _ in range(REPEATS)
        ]

    for measured, anchor in benchmark.pedantic(run, rounds=1, iterations=1):
        figures(
            f"mix riffle --cards {n} (k = 1..{steps}, TV + separation + KL), cold", measured, target
        )
        figures(
            f"  ... against the crossing-point TV/separation anchor ({anchor:.2f} s), ratio",
            measured / anchor,
            1.2,
            "x",
        )


# ---------------------------------------------------------------------------------------
# one character value, n = 200


def naive_character(shape, cycle_type) -> int:
    """The anchor: a plain memoised Murnaghan-Nakayama rule on beta-sets, largest part first."""
    parts = tuple(sorted(cycle_type, reverse=True))
    start = frozenset(p + len(shape) - 1 - i for i, p in enumerate(shape))

    @cache
    def chi(beads, k):
        if k == len(parts):
            return 1
        r, total = parts[k], 0
        for b in beads:
            if b >= r and b - r not in beads:
                sign = -1 if sum(1 for c in beads if b - r < c < b) % 2 else 1
                total += sign * chi((beads - {b}) | {b - r}, k + 1)
        return total

    return chi(start, 0)


STAIRCASE = (29, *range(18, 0, -1))  # 200 cells
CASES_200 = [
    (STAIRCASE, (10,) * 20),
    (STAIRCASE, (50, 40, 30, 20, 20, 10, 10, 10, 5, 5)),
    (STAIRCASE, (7,) * 20 + (5,) * 10 + (4, 4, 2)),
    ((20,) * 10, (7,) * 20 + (5,) * 10 + (4, 4, 2)),
    ((100, 50, 30, 20), (7,) * 20 + (5,) * 10 + (4, 4, 2)),
    ((50, 40, 30, 25, 20, 15, 10, 5, 3, 2), (7,) * 20 + (5,) * 10 + (4, 4, 2)),
    ((47, 45, 33, 33, 28, 10, 4), (7,) * 20 + (5,) * 10 + (4, 4, 2)),
    ((40,) + (1,) * 160, (7,) * 20 + (5,) * 10 + (4, 4, 2)),
    ((101,) + (1,) * 99, (199, 1)),
    ((20,) * 10, (*range(19, 0, -1), 10)),
    ((100, 50, 30, 20), (4,) * 30 + (3,) * 20 + (10, 10)),
    ((50, 40, 30, 25, 20, 15, 10, 5, 3, 2), (50, 40, 30, 20, 20, 10, 10, 10, 5, 5)),
    ((39, 33, 29, 25, 22, 12, 9, 9, 7, 5, 3, 3, 2, 1, 1), (*range(19, 0, -1), 10)),
]


def _best_cpu(function, *args, budget: float = 0.2) -> float:
    """Mean CPU time per call, repeating short calls until about ``budget`` seconds."""
    calls, start = 0, time.process_time()
    while True:
        function(*args)
        calls += 1
        spent = time.process_time() - start
        if spent >= budget or calls >= 1000:
            return spent / calls


def test_single_values_n200(benchmark, figures):
    from shufflecheck.core import characters

    def run():
        out = []
        for _ in range(REPEATS):
            ratios = []
            for lam, mu in CASES_200:
                assert sum(lam) == sum(mu) == 200
                assert characters.character(lam, mu) == naive_character(lam, mu)
                ratios.append(
                    _best_cpu(characters.character, lam, mu) / _best_cpu(naive_character, lam, mu)
                )
            out.append(ratios)
        return out

    for ratios in benchmark.pedantic(run, rounds=1, iterations=1):
        figures(
            "one value at n = 200: worst library/naive ratio over 13 cases", max(ratios), 1.0, "x"
        )
        figures(
            "one value at n = 200: median library/naive ratio",
            statistics.median(ratios),
            1 / 3,
            "x",
        )


# ---------------------------------------------------------------------------------------
# whole table S_30, against the previous implementation kept here


def _table_before(n: int) -> np.ndarray:
    """The previous table builder: rim hooks found by a Python double loop per shape."""
    from scipy import sparse

    from shufflecheck.core.partitions import partitions

    def beta_mask(shape):
        mask = 0
        for i, part in enumerate(shape):
            mask |= 1 << (part + len(shape) - 1 - i)
        return mask

    def normalise(mask):
        return mask >> ((mask ^ (mask + 1)).bit_length() - 1)

    def beads(mask):
        out = []
        while mask:
            low = mask & -mask
            out.append(low.bit_length() - 1)
            mask ^= low
        return out

    shapes = partitions(n)
    needed = [set() for _ in range(n + 1)]
    needed[n] = set(shapes)
    for m in range(n, 0, -1):
        for mu in needed[m]:
            needed[m - mu[0]].add(mu[1:])
    index, columns, blocks = [], [], []
    for m in range(n + 1):
        parts_m = partitions(m)
        masks = [beta_mask(shape) for shape in parts_m]
        index.append({mask: i for i, mask in enumerate(masks)})
        wanted = [mu for mu in parts_m if mu in needed[m]]
        columns.append({mu: j for j, mu in enumerate(wanted)})
        if m == 0:
            blocks.append(np.ones((1, 1), dtype=np.int64))
            continue
        if not wanted:
            blocks.append(None)
            continue
        entries = {r: ([], [], []) for r in {mu[0] for mu in wanted}}
        for row, mask in enumerate(masks):
            bs = beads(mask)
            holes = [h for h in range(bs[-1]) if not (mask >> h) & 1]
            for bead_idx, b in enumerate(bs):
                for hole_idx, h in enumerate(holes):
                    if h > b:
                        break
                    r = b - h
                    if r not in entries:
                        continue
                    between = bead_idx - (h - hole_idx)
                    rows, cols, vals = entries[r]
                    rows.append(row)
                    cols.append(index[m - r][normalise(mask ^ (1 << b) ^ (1 << h))])
                    vals.append(-1 if between % 2 else 1)
        block = np.zeros((len(parts_m), len(wanted)), dtype=np.int64)
        for r, (rows, cols, vals) in entries.items():
            positions = [j for j, mu in enumerate(wanted) if mu[0] == r]
            tail_cols = [columns[m - r][wanted[j][1:]] for j in positions]
            source = blocks[m - r][:, tail_cols]
            matrix = sparse.csr_matrix(
                (np.asarray(vals, dtype=np.int64), (rows, cols)),
                shape=(len(parts_m), len(index[m - r])),
            )
            block[:, positions] = np.asarray(matrix @ source)
        blocks.append(block)
    return blocks[n]


def test_table_s30_vs_previous(benchmark, figures):
    from shufflecheck.core import characters, partitions

    def cold():
        partitions.partitions.cache_clear()
        return characters.character_table(30)

    def before():
        partitions.partitions.cache_clear()
        return _table_before(30)

    assert (cold().values == before()).all()

    def run():
        return [(_cpu(cold), _cpu(before)) for _ in range(REPEATS)]

    for measured, anchor in benchmark.pedantic(run, rounds=1, iterations=1):
        _record_ratio(
            figures, "character table of S_30 vs the previous builder", measured, anchor, 0.5
        )


# ---------------------------------------------------------------------------------------
# simulate "riffle x7" --decks 1000000


def test_simulate_million_vs_sampler(benchmark, figures, tmp_path):
    # what `shufflecheck simulate "riffle x7" --decks 1000000 --out sim.csv` runs: the
    # command is a thin layer over analyses.simulate.simulate_log (drawn, composed and
    # written block by block); the file is byte-identical to simulate_play + write_log
    # (tests/test_fast_paths.py), measured here too for comparison
    from shufflecheck.analyses.simulate import simulate_log
    from shufflecheck.models import riffle
    from shufflecheck.models.procedures import parse_procedure, simulate_play
    from shufflecheck.records.cards import load_deck
    from shufflecheck.records.logs import write_log

    procedure = parse_procedure("riffle x7")
    decks = 1_000_000

    def command():
        simulate_log(tmp_path / "sim.csv", procedure, decks=decks, seed=1)

    def two_steps():
        orders = simulate_play(procedure, 52, decks, rng=1)
        write_log(tmp_path / "two.csv", orders, load_deck(), {"deck": list(range(decks + 1))})

    def write_only(data: bytes):
        # the I/O floor: the file's bytes, already made, written and renamed into place
        from shufflecheck.common.files import atomic_open

        with atomic_open(tmp_path / "bytes.csv", "wb") as handle:
            for lo in range(0, len(data), 1 << 24):
                handle.write(data[lo : lo + (1 << 24)])

    def sampler():
        riffle.sample(decks, 52, 7, rng=1)

    def run():
        simulate_log(tmp_path / "warm.csv", procedure, decks=1000, seed=1)  # imports, not timed
        riffle.sample(1000, 52, 7, rng=1)
        out = []
        for k in range(REPEATS):
            # the command and its anchor back to back, in turns (which one runs first
            # alternates: the first large allocation of a pair pays the page faults), with
            # no earlier file's bytes held while they run
            (tmp_path / "sim.csv").unlink(missing_ok=True)
            if k % 2 == 0:
                anchor, measured = _cpu(sampler), _cpu(command)
            else:
                measured, anchor = _cpu(command), _cpu(sampler)
            whole = _cpu(two_steps)
            data = (tmp_path / "sim.csv").read_bytes()
            io_floor = _cpu(write_only, data)
            del data
            out.append((measured, anchor, whole, io_floor))
        return out

    results = benchmark.pedantic(run, rounds=1, iterations=1)
    assert (tmp_path / "sim.csv").read_bytes() == (tmp_path / "two.csv").read_bytes()
    ratios = sorted(measured / anchor for measured, anchor, _, _ in results)
    figures(
        "simulate riffle x7, 1,000,000 decks: median over the repeats of command / sampler",
        ratios[len(ratios) // 2],
        3.0,
        "x",
    )
    for measured, anchor, whole, io_floor in results:
        _record_ratio(
            figures,
            "simulate riffle x7, 1,000,000 decks to CSV (the command) vs the sampler",
            measured,
            anchor,
            3.0,
        )
        figures(
            f"  ... simulate_play + write_log of the whole array ({whole:.3f} s), ratio",
            whole / anchor,
            3.0,
            "x",
        )
        figures(
            f"  ... writing the file's 163 MB alone ({io_floor:.3f} s) vs the sampler, ratio",
            io_floor / anchor,
            3.0,
            "x",
        )
        figures(
            "  ... the command without that I/O floor vs the sampler, ratio",
            (measured - io_floor) / anchor,
            3.0,
            "x",
        )


# ---------------------------------------------------------------------------------------
# demo: CPU and wall time of the command, in a fresh interpreter (imports included)


def test_demo_command(benchmark, figures, tmp_path):
    import resource
    import subprocess
    import sys

    def once(k):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        start = time.perf_counter()
        subprocess.run(
            [sys.executable, "-m", "shufflecheck", "demo", "--report", str(tmp_path / f"d{k}")],
            check=True,
            capture_output=True,
        )
        wall = time.perf_counter() - start
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
        return cpu, wall

    for cpu, wall in benchmark.pedantic(
        lambda: [once(k) for k in range(REPEATS)], rounds=1, iterations=1
    ):
        figures("demo command, CPU (user + system, fresh interpreter)", cpu, 8.0)
        figures("  ... wall clock on the shared machine", wall, 8.0)


# ---------------------------------------------------------------------------------------
# mix top-to-random: long curves (the exact integers took about 80 s for 52 x 20,000)


@pytest.mark.parametrize(("n", "k", "target"), [(52, 20_000, 2.0), (2000, None, 5.0)])
def test_top_to_random_long_curves(benchmark, figures, n, k, target):
    from shufflecheck.models import default_max_steps, top_to_random

    steps = k or default_max_steps("top-to-random", n)

    def run():
        return [_cpu(top_to_random.distance_curve, n, steps) for _ in range(REPEATS)]

    for seconds in benchmark.pedantic(run, rounds=1, iterations=1):
        figures(
            f"mix top-to-random --cards {n} -k {steps:,} (double-precision chain)", seconds, target
        )


# ---------------------------------------------------------------------------------------
# spectrum transposition --cards 64: long enough for its progress bar


def test_transposition_spectrum_64(benchmark, figures):
    from shufflecheck.core import partitions
    from shufflecheck.models import transposition

    def cold():
        partitions.partitions.cache_clear()
        partitions._multiplicity_matrix.cache_clear()
        return transposition.spectrum(64)

    for seconds in benchmark.pedantic(
        lambda: [_cpu(cold) for _ in range(REPEATS)], rounds=1, iterations=1
    ):
        figures("spectrum transposition, 64 cards (1,741,630 shapes), cold", seconds, 10.0)
