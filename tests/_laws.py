"""Dense laws on all n! arrangements (n <= 8), composed step by step from the physical
mechanics of each step (an independent check on the exact laws and on every bound).

A law is a float64 vector indexed by the lexicographic rank of an arrangement (labels top
to bottom, 0-based). A step is given by its mechanics: ``{source: probability}``, meaning
the new deck is ``new[i] = old[source[i]]``. When every probability is a dyadic or small
rational, sums of products stay exact in double precision as long as they are integers
below 2^53 after scaling; the tests that need exactness say so.
"""

from __future__ import annotations

import itertools
import math
from functools import cache

import numpy as np


@cache
def arrangements(n: int) -> np.ndarray:
    """All n! arrangements in lexicographic order, shape (n!, n)."""
    return np.array(list(itertools.permutations(range(n))), dtype=np.int64)


def rank(perms: np.ndarray) -> np.ndarray:
    """Lexicographic ranks of arrangements (rows), by their Lehmer codes."""
    perms = np.atleast_2d(perms)
    n = perms.shape[1]
    out = np.zeros(perms.shape[0], dtype=np.int64)
    for i in range(n):
        smaller_later = (perms[:, i + 1 :] < perms[:, i : i + 1]).sum(axis=1)
        out += smaller_later * math.factorial(n - 1 - i)
    return out


@cache
def _moved(n: int, source: tuple[int, ...]) -> np.ndarray:
    """Rank of ``deck[source]`` for every deck (rank order)."""
    return rank(arrangements(n)[:, list(source)])


def identity(n: int) -> np.ndarray:
    law = np.zeros(math.factorial(n))
    law[0] = 1.0
    return law


def apply(law: np.ndarray, mechanics: dict, n: int) -> np.ndarray:
    """The law after one more independent step with these mechanics."""
    out = np.zeros_like(law)
    for source, p in mechanics.items():
        out += np.bincount(_moved(n, tuple(source)), weights=law * float(p), minlength=law.size)
    return out


def of_step(mechanics: dict, n: int) -> np.ndarray:
    """The law of one step from the reference order."""
    return apply(identity(n), mechanics, n)


def convolve_matrix(law: np.ndarray, n: int) -> np.ndarray:
    """``M[x, z] = law(x^-1 z)``: ``f @ M`` is the law of a deck of law ``f`` followed by an
    independent step of law ``law`` (deck ``x`` becomes ``x[y]`` for a step ``y``)."""
    perms = arrangements(n)
    size = perms.shape[0]
    matrix = np.zeros((size, size))
    support = np.nonzero(law)[0]
    for y in support:
        # x -> x[y]: the rank of x composed with y, for every x
        matrix[np.arange(size), rank(perms[:, perms[y]])] += law[y]
    return matrix


def figures(law: np.ndarray) -> dict[str, float]:
    """TV, separation, KL (bits), largest likelihood ratio n! max P and chi-square."""
    size = law.size
    u = 1.0 / size
    positive = law[law > 0]
    return {
        "total_variation": 0.5 * float(np.abs(law - u).sum()),
        "separation": float(1 - size * law.min()),
        "kl_bits": float((positive * np.log2(positive * size)).sum()),
        "likelihood_ratio": float(size * law.max()),
        "chi_square": float(size * ((law - u) ** 2).sum()),
    }
