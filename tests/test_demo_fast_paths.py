"""The faster kernels behind the demo's shoe assessments (issue 15) against the
implementations they replaced, written out here: the results must be identical (the same
integers, the same random draws turned into the same decks, the same exact fractions)."""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from shufflecheck.core.counting import poly_multiply
from shufflecheck.models import grab, plug
from shufflecheck.records.shoes import load_shoe
from shufflecheck.stats import shoe_nulls
from shufflecheck.stats.shoe_statistics import (
    first_appearance_orders,
    first_appearance_ranks,
    greedy_scores,
)


def _greedy_scores_before(words, classes, class_counts):
    # the previous implementation: an argmax over the remaining counts at every position
    counts = np.asarray(class_counts, dtype=np.int32)
    cls = np.asarray(classes)[words].astype(np.intp)
    remaining = np.broadcast_to(counts, (cls.shape[0], counts.size)).copy()
    rows = np.arange(cls.shape[0])
    score = np.zeros(cls.shape[0], dtype=np.int64)
    for i in range(cls.shape[1]):
        guess = np.argmax(remaining, axis=1)
        card = cls[:, i]
        score += guess == card
        remaining[rows, card] -= 1
    return score


def _shoes(counts, shoes, seed):
    start = np.repeat(np.arange(len(counts)), counts)
    rng = np.random.default_rng(seed)
    return rng.permuted(np.broadcast_to(start, (shoes, start.size)), axis=1)


class TestGreedyScores:
    @settings(max_examples=40, deadline=None)
    @given(
        counts=st.lists(st.integers(1, 7), min_size=1, max_size=6),
        shoes=st.integers(1, 60),
        seed=st.integers(0, 2**32 - 1),
    )
    def test_same_scores_as_before(self, counts, shoes, seed):
        words = _shoes(counts, shoes, seed)
        classes = np.arange(len(counts))
        expected = _greedy_scores_before(words, classes, counts)
        assert np.array_equal(greedy_scores(words, classes, np.array(counts)), expected)

    def test_six_pack_blackjack_values(self):
        # the demo's shoe: 52 codes (kinds) read as ten blackjack values, tens four times
        # as frequent; ties between the other values are broken towards the lowest class
        shoe = load_shoe("shoe(packs=6)")
        kinds = shoe.physical_kinds()
        classes = np.array([min(k % 13, 9) for k in range(52)])
        counts = np.bincount(classes[kinds], minlength=10)
        rng = np.random.default_rng(5)
        words = kinds[rng.permuted(np.broadcast_to(np.arange(312), (300, 312)), axis=1)]
        expected = _greedy_scores_before(words, classes, counts)
        assert np.array_equal(greedy_scores(words, classes, counts), expected)

    def test_no_shoes(self):
        assert greedy_scores(np.zeros((0, 4), dtype=np.int16), np.arange(2), [2, 2]).size == 0


def test_first_appearances_from_one_broadcast_reference():
    # a broadcast reference row (as in a simulation) gives the orders of a materialised one
    shoe = load_shoe("shoe(packs=2)")
    kinds = shoe.physical_kinds()
    rng = np.random.default_rng(3)
    words = kinds[rng.permuted(np.broadcast_to(np.arange(kinds.size), (500, kinds.size)), axis=1)]
    shared = np.broadcast_to(kinds, words.shape)
    assert shared.strides[0] == 0
    got = first_appearance_orders(words, shared, 52)
    assert np.array_equal(got, first_appearance_orders(words, shared.copy(), 52))
    # and the shared ranks are the ranks of every row
    assert np.array_equal(
        first_appearance_ranks(shared.copy(), 52)[0], first_appearance_ranks(kinds[None, :], 52)[0]
    )


def _uniform_labels_before(rng, segment, starts, first, lengths):
    # the previous implementation: one strided column of every array per position
    decks, cards = segment.shape
    rows = np.arange(decks)[:, None]
    seg = segment.astype(np.intp)
    opens = np.zeros((decks, cards), dtype=bool)
    opens[:, 0] = True
    opens[:, 1:] = seg[:, 1:] != seg[:, :-1]
    first_at = first[rows, seg].astype(np.float64)
    size_at = lengths[rows, seg].astype(np.float64)
    chance = rng.random((decks, cards))
    labels = np.empty((decks, cards), dtype=bool)
    left = np.zeros(decks)
    places = np.ones(decks)
    for i in range(cards):
        new = opens[:, i]
        left = np.where(new, first_at[:, i], left)
        places = np.where(new, size_at[:, i], places)
        take = chance[:, i] * places < left
        labels[:, i] = take
        left -= take
        places -= 1.0
    return labels


@pytest.mark.parametrize(
    ("parameters", "cards"),
    [
        ({"stacks": 4, "pairs": "split"}, 312),
        ({"stacks": 2, "grab": 7, "spread": 2.0}, 52),
        ({"stacks": 4, "grab": 1, "spread": None}, 30),
        ({"stacks": 2, "grab": 26, "riffles": 2}, 104),
    ],
)
def test_grab_draws_the_same_decks(monkeypatch, parameters, cards):
    step = grab.Grab(**parameters)
    start = np.broadcast_to(np.arange(cards, dtype=np.int16), (700, cards)).copy()
    now = step.apply(start, np.random.default_rng(11))
    monkeypatch.setattr(grab, "_uniform_labels", _uniform_labels_before)
    before = step.apply(start, np.random.default_rng(11))
    assert np.array_equal(now, before)


@pytest.mark.parametrize("source", ["bottom", "top"])
@pytest.mark.parametrize(("packet", "cards", "spread"), [(60, 312, None), (5, 20, 2.0)])
def test_plug_sources_as_before(source, packet, cards, spread):
    step = plug.Plug(cards=packet, spread=spread, source=source)
    depth = np.random.default_rng(2).integers(0, cards - packet + 1, size=400)
    # the previous construction, in 64-bit positions
    i, d, rest = np.arange(cards)[None, :], depth[:, None], cards - packet
    if source == "bottom":
        inside, others = rest + (i - d), np.where(i < d, i, i - packet)
    else:
        inside, others = i - d, packet + np.where(i < d, i, i - packet)
    before = np.where((i >= d) & (i < d + packet), inside, others)
    assert np.array_equal(step._sources(cards, depth), before)


def _greedy_mean_before(parts):
    # the previous implementation: one fraction per (m, r)
    n = sum(parts)
    mean_max = [Fraction(0)] * (n + 1)
    for m in range(1, max(parts) + 1):
        poly = [1]
        for c in parts:
            poly = poly_multiply(poly, [math.comb(c, x) for x in range(min(c, m - 1) + 1)])
        for r in range(1, n + 1):
            below = poly[r] if r < len(poly) else 0
            mean_max[r] += 1 - Fraction(below, math.comb(n, r))
    return sum((mean_max[r] / r for r in range(1, n + 1)), Fraction(0))


@pytest.mark.parametrize(
    "counts", [[5] * 5, [1] * 7, [3, 1, 4, 1, 5], [2], [26, 26], [4] * 13, [24] * 9 + [96]]
)
def test_greedy_mean_same_fraction(counts):
    assert shoe_nulls.greedy_guessing_mean(counts) == _greedy_mean_before(sorted(counts))


# ---------------------------------------------------------------------------------------
# simulate: the card words looked up inside the composition, straight into the text


@pytest.mark.parametrize("count", [1, 2, 17, 256, 1237])
def test_composed_lookup_equals_labels_then_lookup(count):
    from shufflecheck.models.procedures import composed_lookup, running_composition

    rng = np.random.default_rng(count)
    relative = rng.permuted(np.broadcast_to(np.arange(52, dtype=np.int16), (count, 52)), axis=1)
    initial = rng.permutation(52).astype(np.int16)
    decks = running_composition(relative, initial=initial)
    table = (np.arange(52, dtype=np.uint16) * 7 + 3)[::-1].copy()
    # a strided target, as the text matrix gives
    text = np.zeros((count, 52 * 3), dtype=np.uint8)
    target = np.ndarray((count, 52), np.uint16, text, 0, (text.strides[0], 3))
    last = composed_lookup(relative, table, target, initial=initial)
    assert np.array_equal(target, table[decks])
    assert np.array_equal(last, decks[-1])
    assert (text[:, 2::3] == 0).all()  # nothing written between the cells


@pytest.mark.parametrize(
    "options",
    [
        {},
        {"reference": "first"},
        {"table": "Table 9", "start": "2026-11-02T18:00"},
        {"deck": "shoe(packs=2)", "procedure": "riffle x3, cut"},
        {"cards": 40, "procedure": "riffle x2, cut"},  # integer labels of two widths
        {"change": (70_000, "strip"), "repeats": 2},
    ],
)
@pytest.mark.parametrize("suffix", [".csv", ".tsv"])
def test_simulated_log_bytes_as_the_whole_writer(tmp_path, options, suffix):
    # the log simulate writes block by block (composed inside the writer) against the
    # previous path: every deck simulated first (simulate_play), then write_log
    from shufflecheck.analyses.simulate import _columns, simulate_log
    from shufflecheck.models.procedures import parse_procedure, simulate_play
    from shufflecheck.records.cards import integer_deck, load_deck
    from shufflecheck.records.logs import write_log
    from shufflecheck.records.shoes import load_shoe

    options = dict(options)
    procedure = parse_procedure(options.pop("procedure", "riffle x2"))
    change = options.pop("change", None)
    if change is not None:
        change = (change[0], parse_procedure(change[1]))
    decks = 140_000 if change is not None else 12_345
    table, start = options.pop("table", None), options.pop("start", None)
    spec = options.get("deck")
    simulate_log(
        tmp_path / f"new{suffix}",
        procedure,
        decks=decks,
        seed=4,
        change=change,
        table=table,
        start=start,
        **options,
    )
    shoe = load_shoe(spec) if spec else None
    n = options.get("cards") or (shoe.size if shoe else 52)
    orders = simulate_play(
        procedure,
        n,
        decks,
        rng=4,
        reference=options.get("reference", "previous"),
        repeats=options.get("repeats", 1),
        change=change,
    )
    first = None
    if start is not None:
        import datetime as dt

        first = dt.datetime.fromisoformat(start)
    deck = shoe if shoe else (load_deck() if n == 52 else integer_deck(n))
    write_log(
        tmp_path / f"old{suffix}",
        orders,
        deck,
        _columns(0, decks + 1, table, first, 120),
        labels="codes" if n == 52 or shoe else "int1",
    )
    new = (tmp_path / f"new{suffix}").read_bytes()
    assert new == (tmp_path / f"old{suffix}").read_bytes()
    assert new.count(b"\n") == decks + 2


def test_write_composed_without_fixed_words(tmp_path):
    # integer labels of two widths: the writer composes the decks, then writes them
    from shufflecheck.models.procedures import running_composition
    from shufflecheck.records.cards import integer_deck
    from shufflecheck.records.logs.writer import LogWriter

    rng = np.random.default_rng(8)
    relative = rng.permuted(np.broadcast_to(np.arange(30, dtype=np.int16), (500, 30)), axis=1)
    start = np.arange(30, dtype=np.int16)
    deck = integer_deck(30)
    with LogWriter(tmp_path / "a.csv", deck, ["deck"], labels="int1", check=False) as log:
        last = log.write_composed(relative, start, {"deck": range(500)})
    with LogWriter(tmp_path / "b.csv", deck, ["deck"], labels="int1", check=False) as log:
        decks = running_composition(relative, initial=start)
        log.write(decks, {"deck": range(500)})
    assert (tmp_path / "a.csv").read_bytes() == (tmp_path / "b.csv").read_bytes()
    assert np.array_equal(last, decks[-1])


def _zone_law_before(cards, marked, zones):
    # the previous implementation: the products rebuilt (truncated at x^marked) per law
    from collections import defaultdict

    rest = cards - sum(zones)
    outside = [math.comb(rest, t) for t in range(min(rest, marked) + 1)]
    widths = defaultdict(int)
    for width in zones:
        widths[width] += 1
    at_most = []
    for m in range(max(zones) + 1):
        poly = [1]
        for width, times in widths.items():
            base = [math.comb(width, t) for t in range(min(m, width) + 1)]
            while times:
                if times & 1:
                    poly = poly_multiply(poly, base)[: marked + 1]
                times >>= 1
                if times:
                    base = poly_multiply(base, base)[: marked + 1]
        at_most.append(
            sum(
                poly[i] * outside[marked - i] for i in range(len(poly)) if marked - i < len(outside)
            )
        )
    return [at_most[0]] + [at_most[m] - at_most[m - 1] for m in range(1, len(at_most))]


@pytest.mark.parametrize(
    ("cards", "zones"), [(312, (52,) * 6), (312, (40, 60, 100)), (40, (10,) * 4), (10, (3,))]
)
def test_zone_laws_share_their_products(cards, zones):
    for marked in sorted({0, 1, 2, cards // 7, cards // 3, cards - sum(zones), cards}):
        law = shoe_nulls.zone_maximum_law(cards, marked, zones)
        counts = [0] * law.offset + list(law.counts)
        before = _zone_law_before(cards, marked, zones)
        assert counts + [0] * (len(before) - len(counts)) == before, marked
