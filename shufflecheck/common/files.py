"""Atomic output and input fingerprints.

Every file the tool writes goes through :func:`atomic_write`: the content is written to a
temporary file in the destination folder and then renamed over the target, so a reader
never sees half a file and an interrupted run leaves the old file (or none) in place.
Inputs are only ever opened for reading.
"""

from __future__ import annotations

import contextlib
import hashlib
import os
import tempfile
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import IO

from shufflecheck.common.errors import InputError

__all__ = ["atomic_open", "atomic_save", "atomic_write", "default_mode", "sha256_file"]


def default_mode(directory: bool = False) -> int:
    """Permissions a new file (or folder) gets from the process umask, as ``open`` would give.

    Temporary files from :mod:`tempfile` are private (0600/0700); outputs renamed from them
    get these ordinary permissions instead.
    """
    mask = os.umask(0)
    os.umask(mask)
    return (0o777 if directory else 0o666) & ~mask


@contextlib.contextmanager
def atomic_open(
    path: str | os.PathLike[str], mode: str = "w", *, force: bool = True
) -> Iterator[IO]:
    """Open a temporary file beside ``path``; on success rename it to ``path``.

    ``mode`` is ``"w"`` (text, UTF-8, ``\\n`` line ends) or ``"wb"``. With ``force=False``
    an existing ``path`` is an :class:`InputError` instead of being replaced.
    """
    target = Path(path)
    if not force and target.exists():
        raise InputError(f"{target} exists; pass force to replace it", argument="force")
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.exists():
        raise InputError(f"cannot write {target}: folder {folder} does not exist")
    fd, tmp_name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    try:
        os.chmod(tmp_name, default_mode())
        if "b" in mode:
            handle: IO = os.fdopen(fd, mode)
        else:
            handle = os.fdopen(fd, mode, encoding="utf-8", newline="")
        with handle:
            yield handle
        os.replace(tmp_name, target)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp_name)
        raise


def atomic_write(path: str | os.PathLike[str], content: str | bytes, *, force: bool = True) -> Path:
    """Write ``content`` (text or bytes) to ``path`` atomically; return the path."""
    mode = "wb" if isinstance(content, bytes) else "w"
    with atomic_open(path, mode, force=force) as handle:
        handle.write(content)
    return Path(path)


def atomic_save(path: str | os.PathLike[str], writer: Callable[[str], None]) -> Path:
    """Let ``writer(temp_path)`` produce a file (e.g. ``figure.savefig``), then rename it."""
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.exists():
        raise InputError(f"cannot write {target}: folder {folder} does not exist")
    fd, tmp_name = tempfile.mkstemp(prefix=f".{target.stem}.", suffix=target.suffix, dir=folder)
    os.close(fd)
    try:
        os.chmod(tmp_name, default_mode())
        writer(tmp_name)
        os.replace(tmp_name, target)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp_name)
        raise
    return target


def sha256_file(path: str | os.PathLike[str]) -> str:
    """Hex SHA-256 of a file's bytes (read in 1 MiB chunks)."""
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for chunk in iter(lambda: handle.read(1 << 20), b""):
            digest.update(chunk)
    return digest.hexdigest()
