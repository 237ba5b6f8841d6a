"""Where the decks of an audit come from: one log, a folder of logs, a glob, or a Parquet
dataset partitioned by folders named ``key=value`` (``table=T7/date=2026-11-02/``).

Sources are listed in one fixed order, sorted by path, so every engine reads "the same
data" in the same order (a log's decks in file order; ``date=`` folders in ISO 8601 order
sort by time). In a partitioned dataset the values of the partition keys are not inside
the files: each source carries the ``key=value`` folders on its path as ``constants``,
added as columns to every row that has no column of that name (so ``--by table`` groups by
the partition key, whether the dataset, a glob or one file of it is audited).

References
----------
.. [1] Apache Parquet format specification, https://parquet.apache.org/docs/; the
       ``key=value`` folder layout of partitioned datasets follows the convention of Apache
       Hive and Apache Arrow datasets.
"""

from __future__ import annotations

import glob
import os
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from shufflecheck.common.errors import InputError

__all__ = ["LOG_SUFFIXES", "Source", "log_sources"]

#: Extensions of files a folder of logs may hold (a trailing ``.gz`` is allowed too).
LOG_SUFFIXES = (".csv", ".tsv", ".txt", ".jsonl", ".ndjson", ".parquet", ".pq")


@dataclass(frozen=True)
class Source:
    """One file of an audit, with the partition keys of its folders (``key=value``)."""

    path: Path
    constants: tuple[tuple[str, str], ...] = ()

    @property
    def size(self) -> int:
        """Bytes on disk (for progress)."""
        try:
            return self.path.stat().st_size
        except OSError:
            return 0


def _is_log(path: Path) -> bool:
    suffixes = [s.lower() for s in path.suffixes]
    if suffixes and suffixes[-1] == ".gz":
        suffixes = suffixes[:-1]
    return bool(suffixes) and suffixes[-1] in LOG_SUFFIXES and not path.name.startswith(".")


def _keys(path: Path) -> tuple[tuple[str, str], ...]:
    """``key=value`` folders on the way to ``path`` (a partitioned dataset's keys)."""
    parts = path.parts[:-1]
    out = []
    for part in parts:
        if "=" in part:
            key, _, value = part.partition("=")
            if key:
                out.append((key, value))
    return tuple(out)


def _folder(root: Path) -> list[Source]:
    files = sorted(p for p in root.rglob("*") if p.is_file() and _is_log(p))
    if not files:
        raise InputError(
            f"{root}: a folder without logs (files ending in {', '.join(LOG_SUFFIXES)})"
        )
    sources = [Source(p, _keys(p)) for p in files]
    kinds = {len(s.constants) for s in sources}
    if len(kinds) > 1:
        raise InputError(
            f"{root}: some logs sit in key=value folders and some do not; a partitioned "
            "dataset needs every file at the same depth of partitions"
        )
    return sources


def log_sources(spec: str | os.PathLike[str] | Sequence[str | os.PathLike[str]]) -> list[Source]:
    """The files of an audit, in reading order.

    Parameters
    ----------
    spec : path, glob pattern, or a sequence of them
        A log file; a folder (every log below it, sorted by path; ``key=value`` folders
        become columns); or a pattern with ``*``, ``?`` or ``[`` (sorted matches).
    """
    if not isinstance(spec, (str, os.PathLike)):
        out: list[Source] = []
        for item in spec:
            out += log_sources(item)
        if not out:
            raise InputError("no logs given")
        return out
    text = os.fspath(spec)
    path = Path(text)
    if path.is_dir():
        return _folder(path)
    if path.exists():
        return [Source(path, _keys(path))]
    if any(ch in text for ch in "*?["):
        matches = sorted(Path(m) for m in glob.glob(text, recursive=True))
        files = [m for m in matches if m.is_file()]
        if not files:
            raise InputError(f"no file matches {text!r}")
        return [Source(m, _keys(m)) for m in files]
    raise InputError(f"cannot read {text}: no such file")
