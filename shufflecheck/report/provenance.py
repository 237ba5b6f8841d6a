"""The reproducibility block and the standard cautions every report carries.

A report is a document someone signs, so it must say exactly how it was made: which version
of the tool, the full command, the seeds of every random draw, a SHA-256 fingerprint of every
input file, the time (UTC) and the versions of Python and the numerical libraries. With the
same inputs, command and seeds, another analyst can re-run the analysis and compare.

Inputs are only read (to fingerprint them); nothing here writes or moves a file.
"""

from __future__ import annotations

import datetime as _dt
import os
import platform
import shlex
import sys
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from importlib.metadata import PackageNotFoundError, version
from pathlib import Path

from shufflecheck.common.errors import InputError
from shufflecheck.common.files import sha256_file

__all__ = ["InputFile", "Provenance", "collect_provenance"]

# Libraries whose versions can change a number or a figure in a report.
_LIBRARIES = ("numpy", "scipy", "matplotlib")


@dataclass(frozen=True)
class InputFile:
    """One input file as it was read: the path given, its size and SHA-256 fingerprint."""

    path: str
    size_bytes: int
    sha256: str


@dataclass(frozen=True)
class Provenance:
    """How a report was produced (the reproducibility block).

    Attributes
    ----------
    tool_version : str
        ``shufflecheck.__version__`` at the time of the run.
    command : str
        The full command line, shell-quoted so it can be pasted back into a shell.
    seeds : tuple of (str, int or None)
        Each named seed of a random draw; ``None`` means the draw took fresh entropy from the
        operating system and cannot be repeated exactly.
    inputs : tuple of InputFile
        Every input file, in the order given.
    created_utc : str
        ISO 8601 time of the run in UTC, to the second, e.g. ``2031-04-02T18:05:00Z``.
    python_version : str
    library_versions : tuple of (str, str)
        ``("numpy", "2.1.0")`` and the other numerical libraries that shape the results.
    platform : str
        Operating system and machine, as ``platform.platform()`` reports them.
    """

    tool_version: str
    command: str
    seeds: tuple[tuple[str, int | None], ...]
    inputs: tuple[InputFile, ...]
    created_utc: str
    python_version: str
    library_versions: tuple[tuple[str, str], ...]
    platform: str

    def as_json(self) -> dict[str, object]:
        """The block as a JSON-ready dict (field names as keys)."""
        return {
            "tool_version": self.tool_version,
            "command": self.command,
            "seeds": [{"name": name, "seed": seed} for name, seed in self.seeds],
            "inputs": [
                {"path": f.path, "size_bytes": f.size_bytes, "sha256": f.sha256}
                for f in self.inputs
            ],
            "created_utc": self.created_utc,
            "python_version": self.python_version,
            "library_versions": dict(self.library_versions),
            "platform": self.platform,
        }


def collect_provenance(
    inputs: Iterable[str | os.PathLike[str]] = (),
    *,
    seeds: Mapping[str, int | None] | Sequence[int | None] | int | None = (),
    command: str | Sequence[str] | None = None,
    now: _dt.datetime | None = None,
) -> Provenance:
    """Gather the reproducibility block for a run.

    Parameters
    ----------
    inputs : iterable of paths
        Every file the analysis read. Each is fingerprinted with SHA-256 (read only).
    seeds : mapping, sequence, int or None
        The seeds of the random draws: a mapping ``{"simulation": 2031}``, a sequence (named
        ``seed``, ``seed 2``, ...) or one seed. ``None`` as a value records a draw from fresh
        entropy (not reproducible). A bare ``None`` or an empty sequence records no draws.
    command : str, sequence of str or None
        The full command line. A sequence is shell-quoted; ``None`` uses ``shufflecheck``
        followed by this process's arguments (``sys.argv[1:]``).
    now : datetime or None
        The time of the run (timezone-aware); ``None`` reads the clock. Pass a fixed time to
        make a rerun byte-identical.

    Returns
    -------
    Provenance

    Raises
    ------
    InputError
        An input file that cannot be read, a seed that is not a non-negative integer, or a
        naive ``now``.
    """
    from shufflecheck.common.version import __version__

    files = tuple(_fingerprint(path) for path in inputs)
    if command is None:
        command_text = shlex.join(["shufflecheck", *sys.argv[1:]])
    elif isinstance(command, str):
        command_text = command
    else:
        command_text = shlex.join([str(part) for part in command])
    if now is None:
        now = _dt.datetime.now(_dt.timezone.utc)
    elif now.tzinfo is None or now.utcoffset() is None:
        raise InputError("provenance time must be timezone-aware (e.g. datetime.timezone.utc)")
    stamp = now.astimezone(_dt.timezone.utc).replace(microsecond=0)
    return Provenance(
        tool_version=__version__,
        command=command_text,
        seeds=_named_seeds(seeds),
        inputs=files,
        created_utc=stamp.strftime("%Y-%m-%dT%H:%M:%SZ"),
        python_version=platform.python_version(),
        library_versions=tuple((name, _library_version(name)) for name in _LIBRARIES),
        platform=platform.platform(),
    )


def _fingerprint(path: str | os.PathLike[str]) -> InputFile:
    target = Path(path)
    if not target.is_file():
        raise InputError(f"cannot fingerprint input {target}: no such file")
    try:
        digest = sha256_file(target)
        size = target.stat().st_size
    except OSError as exc:
        raise InputError(f"cannot fingerprint input {target}: {exc.strerror}") from None
    return InputFile(path=str(path), size_bytes=size, sha256=digest)


def _named_seeds(
    seeds: Mapping[str, int | None] | Sequence[int | None] | int | None,
) -> tuple[tuple[str, int | None], ...]:
    if seeds is None:
        return ()
    if isinstance(seeds, Mapping):
        pairs = [(str(name), seed) for name, seed in seeds.items()]
    elif isinstance(seeds, (str, bytes)):
        raise InputError(f"seeds must be integers, got {seeds!r}")
    elif isinstance(seeds, Sequence):
        pairs = [("seed" if i == 0 else f"seed {i + 1}", s) for i, s in enumerate(seeds)]
    else:
        pairs = [("seed", seeds)]
    out = []
    for name, seed in pairs:
        if seed is not None:
            if hasattr(seed, "item") and not isinstance(seed, int):
                seed = seed.item()  # numpy integer
            if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
                raise InputError(f"seed {name!r} must be a non-negative integer, got {seed!r}")
        out.append((name, seed))
    return tuple(out)


def _library_version(name: str) -> str:
    try:
        return version(name)
    except PackageNotFoundError:
        return "not installed"
