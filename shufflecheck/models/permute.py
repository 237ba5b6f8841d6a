"""Fast row-wise permutation primitives for batches of decks, built on sorting small keys.

NumPy's gather/scatter (fancy indexing, ``take_along_axis``) costs several nanoseconds per
element, while sorting rows of packed 16- or 32-bit keys runs in vectorized sorting kernels
several times faster. Every primitive here packs ``(sort field << bits) | payload`` into one
unsigned key per element, sorts each row and reads the payload back from the low bits.

Conventions (see DEVELOPERS.md): a batch is an integer array of shape ``(decks, n)``;
``row[i]`` is the label of the card at position ``i`` (0 = top).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

__all__ = [
    "BLOCK_DECKS",
    "CHUNK_DECKS",
    "apply_in_blocks",
    "apply_sources",
    "deck_dtype",
    "identity_decks",
    "invert",
    "key_dtype",
    "label_bits",
    "place_by_destination",
    "place_by_sort_key",
]

#: Decks processed at once by samplers that work in chunks (bounds memory).
CHUNK_DECKS = 1 << 16
#: Decks handled at once inside a step whose work is several passes over (decks, n)
#: temporaries: small enough for the temporaries to stay in cache.
BLOCK_DECKS = 1 << 14


def apply_in_blocks(
    function: Callable[..., np.ndarray], decks: np.ndarray, *args: object
) -> np.ndarray:
    """``function(block, *args)`` on blocks of :data:`BLOCK_DECKS` rows, into one new array."""
    if decks.shape[0] <= BLOCK_DECKS:
        return function(decks, *args)
    out = np.empty_like(decks)
    for start in range(0, decks.shape[0], BLOCK_DECKS):
        stop = start + BLOCK_DECKS
        out[start:stop] = function(decks[start:stop], *args)
    return out


def deck_dtype(cards: int) -> np.dtype:
    """The integer dtype of deck arrays: int16 up to 32767 cards, int32 beyond."""
    return np.dtype(np.int16) if cards <= 32767 else np.dtype(np.int32)


def label_bits(cards: int) -> int:
    """Bits needed to store a position or label ``0..cards-1``."""
    return max(1, (cards - 1).bit_length())


def key_dtype(total_bits: int) -> np.dtype:
    """Smallest unsigned dtype holding ``total_bits`` bits."""
    if total_bits <= 16:
        return np.dtype(np.uint16)
    if total_bits <= 32:
        return np.dtype(np.uint32)
    if total_bits <= 64:
        return np.dtype(np.uint64)
    raise ValueError(f"sort keys of {total_bits} bits do not fit in 64 bits")


def identity_decks(decks: int, cards: int) -> np.ndarray:
    """``decks`` unshuffled decks: every row is ``0, 1, ..., cards - 1``."""
    return np.broadcast_to(np.arange(cards, dtype=deck_dtype(cards)), (decks, cards)).copy()


def _sort_payload(
    field: np.ndarray, payload: np.ndarray | None, field_bits: int, bits: int
) -> np.ndarray:
    """Sort each row by ``field`` (ties broken by ``payload``) and return the payloads.

    ``payload=None`` means the positions ``0..n-1`` (broadcast, never materialised).
    """
    dtype = key_dtype(field_bits + bits)
    key = field.astype(dtype) << dtype.type(bits)
    if payload is None:
        key |= np.arange(field.shape[1], dtype=dtype)
    else:
        key |= payload.astype(dtype, copy=False)
    key.sort(axis=1)
    key &= dtype.type((1 << bits) - 1)
    return key


def place_by_destination(decks: np.ndarray, destination: np.ndarray) -> np.ndarray:
    """Scatter: ``new[d, destination[d, k]] = decks[d, k]`` (each row of ``destination`` a
    permutation of positions)."""
    cards = decks.shape[1]
    bits = label_bits(cards)
    out = _sort_payload(destination, decks, bits, bits)
    return out.astype(decks.dtype, copy=False)


def apply_sources(decks: np.ndarray, sources: np.ndarray) -> np.ndarray:
    """Gather: ``new[d, i] = decks[d, sources[d, i]]`` (each row of ``sources`` a permutation)."""
    bits = label_bits(decks.shape[1])
    destination = _sort_payload(sources, None, bits, bits)  # new position of old card k
    return place_by_destination(decks, destination)


def place_by_sort_key(decks: np.ndarray, field: np.ndarray, field_bits: int) -> np.ndarray:
    """New deck whose positions, sorted by ``(field, position)``, receive the old cards in
    order: the ``k``-th position in that order gets ``decks[d, k]``.

    This is the forward riffle: ``field`` holds the packet label of every *new* position, and
    the ``j``-th packet (a contiguous block of the old deck, in order) fills the positions
    labelled ``j`` from top to bottom.
    """
    bits = label_bits(decks.shape[1])
    destination = _sort_payload(field, None, field_bits, bits)
    return place_by_destination(decks, destination)


def invert(perms: np.ndarray) -> np.ndarray:
    """Row-wise inverse permutations: ``inv[d, perms[d, i]] = i``."""
    bits = label_bits(perms.shape[1])
    return _sort_payload(perms, None, bits, bits).astype(perms.dtype, copy=False)
