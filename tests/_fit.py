"""Goodness of fit of sampled frequencies against an exact law (shared by the sampler tests)."""

from __future__ import annotations

from collections import Counter
from collections.abc import Mapping

import numpy as np
from scipy import stats


def chisquare_p(observed: Counter, expected: Mapping, total: int) -> float:
    """Chi-square goodness of fit (scipy.stats.chisquare), pooling cells with E < 5.

    ``expected`` maps each outcome to its exact probability. Also fails outright if any
    sampled outcome has exact probability 0 (a sampler producing the impossible).
    """
    impossible = [value for value in observed if not expected.get(value, 0)]
    assert not impossible, f"sampled outcomes of probability 0: {impossible[:3]}"
    obs, exp = [], []
    pool_o = pool_e = 0.0
    for value, prob in expected.items():
        e = float(prob) * total
        if e < 5:
            pool_o += observed.get(value, 0)
            pool_e += e
        else:
            obs.append(observed.get(value, 0))
            exp.append(e)
    if pool_e > 0:
        obs.append(pool_o)
        exp.append(pool_e)
    if len(obs) < 2:  # a single cell (a deterministic law): nothing to test beyond support
        return 1.0
    exp_arr = np.array(exp)
    exp_arr *= sum(obs) / exp_arr.sum()
    return float(stats.chisquare(obs, exp_arr).pvalue)
