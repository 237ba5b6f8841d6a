"""Audits of many logs at once (a fleet of tables) on a Dask cluster.

Each file of the audit is read as its own part on a worker (:func:`log_parts.scan_sources`)
and the parts are merged on the client in file order (:func:`log_parts.merge_parts`).
Summaries merge exactly, and the first deck of each group in a part is compared with the
last deck of that group in the part before, so the result equals, to the last digit, the
audit of the same files read one after another in one process. Memory per worker is that
of reading one file in chunks, whatever the number of files.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any

from shufflecheck.analyses.log_parts import AuditOptions, Part, merge_parts, scan_sources
from shufflecheck.common.errors import InputError
from shufflecheck.engines.dask import Cluster, available, run_in_order
from shufflecheck.records.logs.sources import Source

__all__ = ["audit_parts", "dask_installed"]


def dask_installed() -> bool:
    """Whether the Dask engine can run here (dask and distributed importable)."""
    return available()


def _scan_one(task: tuple[Source, int, AuditOptions]) -> Part:
    source, index, options = task
    return scan_sources([source], options, first_index=index, several=True)


def audit_parts(
    sources: Sequence[Source],
    options: AuditOptions,
    *,
    scheduler: str | None = None,
    workers: int | None = None,
    processes: bool = True,
    progress: Callable[[int], None] | None = None,
    report: dict[str, Any] | None = None,
) -> tuple[Part, str]:
    """The merged :class:`Part` of all sources, computed one file per task; and a
    description of the cluster that ran them (``report``: see
    :func:`shufflecheck.engines.dask.run_in_order`)."""
    kind = options.parsed_reference.kind
    if kind in ("first", "pairs") and len(sources) > 1:
        raise InputError(
            f"reference {kind!r} relates decks across the whole log and cannot be merged from "
            "parts; audit these logs in one process (engine 'single')",
            argument="reference",
        )
    paths = [s.path for s in sources]
    seen: dict[str, Any] = {}

    def remember(cluster: Cluster) -> None:
        seen["cluster"] = cluster

    tasks = [(source, index, options) for index, source in enumerate(sources)]
    merged: Part | None = None
    done = 0
    for source, part in zip(
        sources,
        run_in_order(
            _scan_one,
            tasks,
            scheduler=scheduler,
            workers=workers,
            processes=processes,
            on_cluster=remember,
            report=report,
        ),
        strict=True,
    ):
        merged = (
            part if merged is None else merge_parts(merged, part, options, paths, in_place=True)
        )
        done += source.size
        if progress is not None:
            progress(done)
    assert merged is not None
    return merged, seen["cluster"].describe()
