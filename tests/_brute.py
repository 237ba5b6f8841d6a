"""Brute-force laws over all n! arrangements, built by enumerating the physical mechanics of
each shuffle (an independent check on the exact formulas and the samplers)."""

from __future__ import annotations

import itertools
import math
from collections import Counter, defaultdict
from fractions import Fraction


def compose(law: dict[tuple, int], outcomes: list[tuple[tuple[int, ...], int]]) -> dict[tuple, int]:
    """One more step: ``new[i] = deck[source[i]]`` for every outcome ``(source, weight)``.

    Laws are integer weights over a common (implicit) denominator.
    """
    out: dict[tuple, int] = defaultdict(int)
    for deck, w in law.items():
        for source, q in outcomes:
            out[tuple(deck[s] for s in source)] += w * q
    return dict(out)


def law_after(
    outcomes: list[tuple[tuple[int, ...], int]], n: int, steps: int
) -> dict[tuple, Fraction]:
    total_per_step = sum(q for _, q in outcomes)
    law = {tuple(range(n)): 1}
    for _ in range(steps):
        law = compose(law, outcomes)
    denominator = total_per_step**steps
    return {deck: Fraction(w, denominator) for deck, w in law.items()}


def riffle_outcomes(n: int, hands: int = 2) -> list[tuple[tuple[int, ...], int]]:
    """The a-shuffle as physically described: cut into ``hands`` packets (multinomial sizes),
    then cards drop one at a time from the bottoms of the packets, each packet with
    probability proportional to its current size. Weights are integers over ``hands^n``
    (each cut has weight multinomial; each drop order then has probability
    ``prod(sizes)! / n!`` ... computed exactly with Fractions and scaled)."""
    outcomes: dict[tuple[int, ...], Fraction] = defaultdict(Fraction)
    for sizes in itertools.product(range(n + 1), repeat=hands):
        if sum(sizes) != n:
            continue
        p_cut = Fraction(math.factorial(n), math.prod(math.factorial(s) for s in sizes)) / hands**n
        bounds = []
        start = 0
        for s in sizes:
            bounds.append(list(range(start, start + s)))
            start += s

        def drop(packets, bottom_up, prob):
            remaining = sum(len(p) for p in packets)
            if remaining == 0:
                source = tuple(reversed(bottom_up))  # built from the bottom
                outcomes[source] += prob
                return
            for j, packet in enumerate(packets):
                if packet:
                    nxt = [list(p) for p in packets]
                    card = nxt[j].pop()  # bottom card of packet j
                    drop(nxt, [*bottom_up, card], prob * Fraction(len(packet), remaining))

        drop(bounds, [], p_cut)
    scale = hands**n * math.factorial(n)
    return [(src, int(p * scale)) for src, p in outcomes.items()]


def transposition_outcomes(n: int) -> list[tuple[tuple[int, ...], int]]:
    """Left and right hands each pick one of n cards (n^2 equally likely pairs); swap."""
    out = []
    for a in range(n):
        for b in range(n):
            src = list(range(n))
            src[a], src[b] = src[b], src[a]
            out.append((tuple(src), 1))
    return out


def top_to_random_outcomes(n: int) -> list[tuple[tuple[int, ...], int]]:
    """The top card is inserted into one of the n positions (0 = back on top)."""
    out = []
    for j in range(n):
        rest = list(range(1, n))
        rest.insert(j, 0)
        out.append((tuple(rest), 1))
    return out


def random_to_top_outcomes(n: int) -> list[tuple[tuple[int, ...], int]]:
    """One of the n cards is taken out and put on top."""
    out = []
    for p in range(n):
        rest = [i for i in range(n) if i != p]
        out.append((tuple([p, *rest]), 1))
    return out


def distances(law: dict[tuple, Fraction], n: int) -> tuple[Fraction, Fraction, float]:
    """Exact TV and separation, and KL in bits, directly over all n! arrangements."""
    fact = math.factorial(n)
    u = Fraction(1, fact)
    probs = [law.get(p, Fraction(0)) for p in itertools.permutations(range(n))]
    tv = sum(abs(p - u) for p in probs) / 2
    sep = max(1 - fact * p for p in probs)
    kl = sum(float(p) * math.log2(float(p * fact)) for p in probs if p)
    return tv, sep, kl


def cycle_lengths(p) -> tuple[int, ...]:
    """Cycle lengths of the permutation ``i -> p[i]``, longest first (its cycle type)."""
    seen, lengths = set(), []
    for start in range(len(p)):
        if start in seen:
            continue
        length, j = 0, start
        while j not in seen:
            seen.add(j)
            j = p[j]
            length += 1
        lengths.append(length)
    return tuple(sorted(lengths, reverse=True))


def cycle_count(p) -> int:
    """Number of cycles of the permutation ``i -> p[i]``."""
    return len(cycle_lengths(p))


def words_by_label_sequences(start: tuple[int, ...], a: int) -> Counter:
    """How many label sequences of an a-shuffle give each word, from a deck whose reference
    position ``i`` holds class ``start[i]``: every position of the new deck gets one of
    ``a`` labels, the positions sorted stably by label take the start's cards in order
    (the inverse description of Bayer & Diaconis 1992). ``a^n`` sequences, for small decks."""
    n = len(start)
    tally: Counter = Counter()
    for labels in itertools.product(range(a), repeat=n):
        order = sorted(range(n), key=lambda p: (labels[p], p))
        word = [0] * n
        for rank, position in enumerate(order):
            word[position] = start[rank]
        tally[tuple(word)] += 1
    return tally
