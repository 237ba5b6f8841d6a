"""Engines that run the work of an analysis elsewhere: a Dask cluster (:mod:`.dask`).

They sit beside :mod:`shufflecheck.records` and are reached only from
:mod:`shufflecheck.analyses`; they know nothing of decks or tests, only of running
independent tasks and handing their results back in order.
"""
