"""The Python API: one function per job, returning the frozen result objects the command
line prints.

* :func:`audit`: are these recorded decks detectably non-random, which test says so, how
  strongly, since when (a numpy array, a pandas DataFrame, a log, a folder of logs) --
  :class:`~shufflecheck.analyses.audit_log.LogAudit`;
* :func:`mix`: exact distance to random after ``k`` steps of a model --
  :class:`~shufflecheck.core.distances.MixingCurve`;
* :func:`assess`: a house procedure repeated ``r = 1..R`` times, exact value or bounds and
  the guessing edge -- :class:`~shufflecheck.analyses.assess.Assessment`;
* :func:`power`: decks each test needs before an audit flags a procedure --
  :class:`~shufflecheck.stats.power.PowerPlan`;
* :func:`policy`: the fewest repetitions that meet a policy's target --
  :class:`~shufflecheck.analyses.policy.PolicyResult`.

Every result has ``.to_dict()`` (plain types: the ``--json`` form of the command) and
``.to_frame()`` (its main table as a pandas DataFrame). Every number in them says how it
was obtained (exact, bound, estimate, conjectured). Bad input raises
:class:`~shufflecheck.common.errors.InputError` (a ``ValueError``) with a one-line message
naming the argument.

Heavy modules are imported inside the functions, so ``import shufflecheck`` stays quick.
Results are statistical evidence, not a certification; shuffling devices and dealing
rules are for the local gaming regulator and accredited test laboratories to approve.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # pragma: no cover
    from shufflecheck.analyses.assess import Assessment
    from shufflecheck.analyses.audit_log import LogAudit
    from shufflecheck.analyses.policy import PolicyResult
    from shufflecheck.core.distances import MixingCurve
    from shufflecheck.stats.power import PowerPlan

__all__ = ["assess", "audit", "mix", "policy", "power"]


def audit(
    decks: Any,
    *,
    reference: Any = "previous",
    by: Any = None,
    alpha: float = 0.01,
    time: Any = None,
    deck: Any = None,
    labels: str | None = None,
    rng: Any = 0,
    **reading: Any,
) -> LogAudit:
    """Test recorded deck orders for bias: exact nulls, Holm control, plain-unit effects.

    Parameters
    ----------
    decks : numpy array, pandas DataFrame, or path
        * an integer array of shape ``(decks, positions)``: ``decks[d, i]`` is the label of
          the card at position ``i`` (0 = top) of deck ``d``, labels ``0..n-1`` in the deck
          definition's order (``labels="int1"`` for ``1..n``); rows in the order dealt;
        * a DataFrame with an order column (texts of codes, or lists) or position columns,
          read like a log file (other columns are kept, so ``by`` and ``time`` name them);
        * a log file, a folder of logs, a partitioned Parquet dataset or a glob
          (:func:`shufflecheck.analyses.audit_log.audit_log`, whose keyword arguments
          ``reading`` passes on: ``order_column``, ``separator``, ``engine``, ...).
    reference : str or array
        What each deck is compared with: ``"previous"`` (default), ``"first"``, ``"deck"``,
        ``"pairs"``, ``"column:NAME"``, an order written out; with an array input also an
        array of shape ``(positions,)`` (one order for all) or ``(decks, positions)`` (each
        deck's own starting order).
    by : str, sequence or None
        Group results (a column name; with an array input, one value per deck).
    alpha : float
        Family-wise error level (Holm), default 0.01.
    time : str, sequence or None
        Time of each deck (a column name; with an array input, one value per deck); decks
        must be in time order (per group).
    deck : str, path, DeckDefinition or ShoeDefinition, optional
        Deck definition (default: the built-in 52-card deck for 52 positions, otherwise a
        deck of that many cards known by integer labels). A shoe of repeated cards
        (``"shoe(packs=6)"``) is tested with the shoe battery; an array then holds kind
        labels (``0..K-1``, copies alike) and ``feature=`` / ``segment=`` pass on
        (:func:`~shufflecheck.analyses.audit_log.audit_log`).
    labels : {"codes", "int", "int0", "int1"}, optional
        Default ``int0`` for arrays, ``codes`` otherwise.
    rng : Generator, int or None
        Randomness of Monte Carlo nulls (default 0: reproducible).

    Returns
    -------
    LogAudit
        ``.result`` (the battery, per group too), ``.to_frame()``, ``.groups_frame()``,
        ``.to_dict()``.

    Examples
    --------
    >>> import numpy as np, shufflecheck
    >>> rng = np.random.default_rng(7)
    >>> decks = rng.permuted(np.tile(np.arange(52), (500, 1)), axis=1)
    >>> result = shufflecheck.audit(decks, reference="deck")
    >>> result.tested, result.result.flagged
    (500, False)
    """
    import numpy as np
    import pandas as pd

    from shufflecheck.analyses.audit_log import audit_frame, audit_log
    from shufflecheck.common.errors import InputError

    if isinstance(decks, (str, os.PathLike)) or (
        isinstance(decks, Sequence) and decks and isinstance(decks[0], (str, os.PathLike))
    ):
        return audit_log(
            decks,
            reference=reference,
            by=by,
            alpha=alpha,
            time=time,
            deck=deck,
            labels=labels or "codes",
            rng=rng,
            **reading,
        )
    if isinstance(decks, pd.DataFrame):
        return audit_frame(
            decks,
            reference=reference,
            by=by,
            alpha=alpha,
            time=time,
            deck=deck,
            labels=labels or "codes",
            rng=rng,
            **reading,
        )
    array = np.asarray(decks)
    if array.ndim != 2 or not (array.size == 0 or np.issubdtype(array.dtype, np.integer)):
        raise InputError(
            "decks must be a 2-D integer array (decks, positions), a pandas DataFrame or a "
            f"path; got {type(decks).__name__} of shape {getattr(array, 'shape', '?')}",
            argument="decks",
        )
    count, n = array.shape
    shoe = _shoe_of(deck)
    if shoe is not None:  # words of kind labels: written out as codes, copies alike
        if array.size and (array.min() < 0 or array.max() >= shoe.kind_count):
            raise InputError(
                f"decks: kind labels of {shoe.name} run from 0 to {shoe.kind_count - 1}",
                argument="decks",
            )
        frame = pd.DataFrame({"order": [shoe.format_order(row) for row in array]})
    else:
        frame = pd.DataFrame(array, columns=[f"p{k}" for k in range(1, n + 1)])
    group = None
    if by is not None:
        frame["group"] = _per_deck(by, count, "by")
        group = "group"
    stamp = None
    if time is not None:
        frame["time"] = [str(t) for t in _per_deck(time, count, "time")]
        stamp = "time"
    labels = labels or ("int0" if shoe is None else "codes")
    spec = reference
    if not isinstance(reference, str):
        ref = np.asarray(reference)
        if ref.ndim == 1 and shoe is not None:
            spec = shoe.format_order(ref)
        elif ref.ndim == 1:
            spec = " ".join(str(int(x)) for x in ref)
        elif ref.ndim == 2 and ref.shape == array.shape:
            frame["starting order"] = list(ref)
            spec = "column:starting order"
        else:
            raise InputError(
                f"reference: expected shape ({n},) or {array.shape}, got {ref.shape}",
                argument="reference",
            )
    cards = None if deck is not None else n
    return audit_frame(
        frame,
        reference=spec,
        by=group,
        alpha=alpha,
        time=stamp,
        deck=deck,
        cards=cards,
        labels=labels,
        rng=rng,
        name="decks",
        **reading,
    )


def _shoe_of(deck: Any) -> Any:
    """The shoe ``deck`` names, or None for a deck of distinct cards."""
    if deck is None:
        return None
    from shufflecheck.records.shoes import load_shoe

    return load_shoe(deck)


def _per_deck(values: Any, count: int, name: str) -> list[Any]:
    from shufflecheck.common.errors import InputError

    if isinstance(values, str):
        raise InputError(
            f"{name}: with an array of decks give one value per deck, not a column name",
            argument=name,
        )
    out = list(values)
    if len(out) != count:
        raise InputError(
            f"{name}: expected {count} values (one per deck), got {len(out)}", argument=name
        )
    return out


def mix(
    model: str,
    cards: int = 52,
    *,
    steps: int | None = None,
    **options: Any,
) -> MixingCurve:
    """Exact distances to a uniformly random deck after ``k = 1..steps`` steps of a model.

    Parameters
    ----------
    model : str
        ``riffle``, ``transposition``, ``top-to-random``, ``random-to-top``, ``shelf`` (any
        model with an exact curve in :mod:`shufflecheck.models.registry`).
    cards : int
        Deck size.
    steps : int, optional
        Largest number of steps (default: past the model's cutoff).
    **options
        Model options (``hands``, ``shelves``, ``hold``, ``method``).

    Examples
    --------
    >>> import shufflecheck
    >>> curve = shufflecheck.mix("riffle", 52, steps=10)
    >>> round(curve.rows[6].total_variation, 3)  # 7 riffles (Bayer & Diaconis 1992: 0.334)
    0.334
    """
    from shufflecheck.models import default_max_steps, distance_curve

    if steps is None:
        steps = default_max_steps(model, cards)
    return distance_curve(model, cards, steps, **options)


def assess(
    procedure: str,
    cards: int = 52,
    *,
    repeats: int = 10,
    decks: int = 100_000,
    seed: int | None = 1,
    confidence: float = 0.99,
    deck: Any = None,
    feature: str | None = None,
) -> Assessment:
    """A house procedure (``"riffle x3, strip, riffle, cut"`` or a TOML file) repeated
    ``r = 1..repeats`` times: exact distances or rigorous bounds, Monte Carlo lower bounds
    and the guessing-game edge (``decks`` simulated decks, ``seed`` for reproducibility).

    With a shoe (``deck="shoe(packs=6)"``) the distances are on ``feature``, what the game
    sees (``rank`` by default; ``blackjack``, ``baccarat``, ``cards``, ``colour``, ``suit``;
    ``distinct`` for every card told apart), each labelled (docs/shoes.md).

    Examples
    --------
    >>> import shufflecheck
    >>> result = shufflecheck.assess("riffle", 52, repeats=8, decks=2000)
    >>> result.rows[6].exact.total_variation.__round__(3)  # exact: 7 ideal riffles
    0.334
    """
    from shufflecheck.analyses.assess import assess as run
    from shufflecheck.models.procedures import procedure_from_argument

    proc = procedure_from_argument(procedure)
    shoe = _shoe_for(deck, feature, cards)
    if shoe is not None and (feature or "rank") != "distinct":
        from shufflecheck.analyses.feature_assess import assess_feature

        return assess_feature(
            proc,
            shoe,
            feature or "rank",
            repeats=repeats,
            decks=decks,
            rng=seed,
            confidence=confidence,
        )
    return run(
        proc,
        cards if shoe is None else shoe.size,
        repeats=repeats,
        decks=decks,
        rng=seed,
        confidence=confidence,
    )


def power(
    procedure: str,
    cards: int = 52,
    *,
    repeats: int = 1,
    alpha: float = 0.01,
    power: float = 0.9,
    simulate: int = 4000,
    seed: int = 1,
    deck: Any = None,
    feature: str | None = None,
    confidence: float = 0.95,
) -> PowerPlan:
    """Recorded decks each test of the audit battery needs to flag ``procedure`` (repeated
    ``repeats`` times per deck) with the given power at family-wise ``alpha``; with a shoe
    (``deck="shoe(packs=6)"``, ``feature`` as in :func:`assess`), recorded shoes for the
    shoe battery.

    Every count is an estimate from ``simulate`` simulated decks; ``confidence``
    (``0.5 <= confidence < 1``, as in :func:`assess`) is the level of its interval
    (:meth:`PowerRow.decks_interval`): the Monte Carlo interval of the estimated shift of
    the test's mean carried over to the count (see :mod:`shufflecheck.stats.power`).

    Examples
    --------
    >>> import shufflecheck
    >>> plan = shufflecheck.power("riffle", 52, repeats=4, simulate=2000)
    >>> plan.best().test
    'rising-sequences'
    """
    from shufflecheck.analyses.plan import plan_power
    from shufflecheck.models.procedures import procedure_from_argument

    proc = procedure_from_argument(procedure)
    shoe = _shoe_for(deck, feature, cards)
    if shoe is not None:
        from shufflecheck.analyses.plan import plan_shoe_power

        plans = plan_shoe_power(
            proc,
            shoe,
            [repeats],
            feature=feature or "rank",
            alpha=alpha,
            power=power,
            simulate=simulate,
            seed=seed,
            confidence=confidence,
        )
        return plans[0][1]
    plans = plan_power(
        proc,
        cards,
        [repeats],
        alpha=alpha,
        power=power,
        simulate=simulate,
        seed=seed,
        confidence=confidence,
    )
    return plans[0][1]


def _shoe_for(deck: Any, feature: str | None, cards: int) -> Any:
    """The shoe of an assessment or plan (None without one); a feature needs a shoe."""
    from shufflecheck.common.errors import InputError

    shoe = _shoe_of(deck)
    if shoe is None and (feature is not None or deck is not None):
        raise InputError(
            "deck and feature are for shoes of repeated cards, e.g. deck='shoe(packs=6)'",
            argument=("deck", "feature"),
        )
    if shoe is not None and cards not in (52, shoe.size):
        raise InputError(f"the shoe has {shoe.size} cards, not {cards}", argument="cards")
    return shoe


def policy(path: str | os.PathLike[str]) -> PolicyResult:
    """Evaluate a policy file: the fewest repetitions of each house procedure that meet its
    target, how that is known, the house count's standing, and audits of attached logs."""
    from shufflecheck.analyses.policy import evaluate_policy, load_policy

    return evaluate_policy(load_policy(os.fspath(path)))
