"""Safe output and input fingerprints.

Every file the tool writes goes through :func:`atomic_open` (or :func:`atomic_write`):

* the content goes to a temporary file beside the target, named so that it is plainly a
  temporary (``.NAME.PID-XXXXXXXX.incomplete``), flushed to disk, and only then given the
  target's name, so a reader never sees half a file and a run that is interrupted leaves
  the old file (or none) in place;
* without ``force`` the target must not exist, and the final step is exclusive: the
  temporary file is hard-linked to the target name, which fails if the name appeared in the
  meantime, so two runs writing the same file cannot both succeed (on file systems without
  hard links it falls back to a rename after a check);
* a temporary left by a run that was killed (SIGKILL, power loss) is removed by the next
  write into the same folder once its process is gone (the process id is in its name);
* a failure of the file system (permission denied, no space left, a folder in the way,
  read-only file system) becomes one :class:`InputError` line naming the path and the
  cause: ``cannot write reports/x.png: permission denied``.

:func:`check_output` runs the same checks before any work starts (commands call it first),
including the refusal to write over one of the command's own inputs.

Inputs are only ever opened for reading.
"""

from __future__ import annotations

import contextlib
import errno
import hashlib
import os
import re
import secrets
import shutil
from collections.abc import Iterable, Iterator, Mapping
from pathlib import Path
from typing import IO

from shufflecheck.common.errors import InputError

__all__ = [
    "OWNER_FILE",
    "TEMPORARY_SUFFIXES",
    "atomic_open",
    "atomic_write",
    "check_output",
    "clean_temporaries",
    "default_mode",
    "names_file",
    "same_file",
    "sha256_file",
    "temporary_path",
    "write_failure",
]

#: The marker file of an output folder its writer owns and may replace without being told
#: to (it holds the owner's name, one line; see :mod:`shufflecheck.report.writer`)
OWNER_FILE = ".shufflecheck-owner"

#: suffixes of the temporaries this module (and the report writer) create
TEMPORARY_SUFFIXES = (".incomplete", ".replaced")
_TEMPORARY = re.compile(
    r"^\.(?P<name>.+)\.(?P<pid>\d+)-[0-9a-f]{8}\.(?P<kind>incomplete|replaced)$"
)

#: errno -> the cause as a user reads it
_CAUSES = {
    errno.EACCES: "permission denied",
    errno.EPERM: "permission denied",
    errno.ENOSPC: "no space left on the device",
    errno.EDQUOT: "disk quota exceeded",
    errno.EROFS: "read-only file system",
    errno.EISDIR: "it is a folder",
    errno.ENOTDIR: "a part of the path is not a folder",
    errno.ENOENT: "the folder does not exist",
    errno.ENAMETOOLONG: "the name is too long",
    errno.EFBIG: "the file is too large for the file system",
    errno.EIO: "input/output error",
}


def default_mode(directory: bool = False) -> int:
    """Permissions a new file (or folder) gets from the process umask, as ``open`` would give.

    Temporary files are created private (0600/0700); outputs renamed from them get these
    ordinary permissions instead.
    """
    mask = os.umask(0)
    os.umask(mask)
    return (0o777 if directory else 0o666) & ~mask


def write_failure(path: str | os.PathLike[str], exc: OSError) -> InputError:
    """One line for a file system error while writing ``path``: ``cannot write P: cause``."""
    cause = _CAUSES.get(exc.errno or -1)
    if cause is None:
        cause = (exc.strerror or type(exc).__name__).lower()
    return InputError(f"cannot write {os.fspath(path)}: {cause}")


def _folder(target: Path) -> Path:
    return target.parent if str(target.parent) else Path(".")


def temporary_path(target: str | os.PathLike[str], suffix: str = ".incomplete") -> Path:
    """A fresh temporary name beside ``target``: ``.NAME.PID-XXXXXXXX.incomplete``."""
    target = Path(target)
    token = secrets.token_hex(4)
    return _folder(target) / f".{target.name}.{os.getpid()}-{token}{suffix}"


def _alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OverflowError, OSError):
        return True  # another user's live process, or a pid we cannot judge: keep it
    return True


def clean_temporaries(folder: str | os.PathLike[str]) -> list[Path]:
    """Remove temporaries in ``folder`` left by runs that were killed; return them.

    Only entries named like this module's temporaries, owned by the current user, whose
    process no longer exists are removed; anything else is left alone. A report folder
    set aside while it was being replaced (``.replaced``) is kept while nothing stands at
    its name: a run killed between the two renames of a replacement leaves the old report
    there as the only copy.
    """
    removed: list[Path] = []
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return removed
    uid = os.getuid() if hasattr(os, "getuid") else None
    for entry in entries:
        match = _TEMPORARY.match(entry.name)
        if match is None:
            continue
        try:
            info = entry.stat(follow_symlinks=False)
        except OSError:
            continue
        if uid is not None and info.st_uid != uid:
            continue
        if _alive(int(match.group("pid"))):
            continue
        if match.group("kind") == "replaced" and not os.path.lexists(
            os.path.join(folder, match.group("name"))
        ):
            continue
        path = Path(entry.path)
        with contextlib.suppress(OSError):
            if entry.is_dir(follow_symlinks=False):
                shutil.rmtree(path)
            else:
                path.unlink()
            removed.append(path)
    return removed


def names_file(text: str | os.PathLike[str] | None) -> bool:
    """True when ``text`` names an existing regular file (False for any text that cannot
    be a path: too long, a NUL byte, ...)."""
    if text is None:
        return False
    try:
        return Path(text).is_file()
    except (OSError, ValueError):
        return False


def same_file(a: str | os.PathLike[str], b: str | os.PathLike[str]) -> bool:
    """True when two paths name the same file (hard links and symbolic links included)."""
    try:
        return os.path.samefile(a, b)
    except OSError:
        pass
    try:
        return Path(a).resolve() == Path(b).resolve()
    except (OSError, RuntimeError):
        return False


def _probe(folder: Path, target: Path) -> None:
    """Create and remove a temporary in ``folder``: a folder we cannot write is found now."""
    probe = temporary_path(target)
    try:
        fd = os.open(probe, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    except OSError as exc:
        raise write_failure(target, exc) from None
    os.close(fd)
    with contextlib.suppress(OSError):
        os.unlink(probe)


def check_output(
    path: str | os.PathLike[str],
    *,
    force: bool = False,
    inputs: Mapping[str | os.PathLike[str], str] | Iterable[str | os.PathLike[str] | None] = (),
    folder: bool = False,
    size: int | None = None,
) -> Path:
    """Check an output path before any work starts; return it as a Path.

    Refused, with one line naming the path: a path that is one of ``inputs`` (paths, or a
    mapping of path to what it is, e.g. ``"the log itself"``; always, even with
    ``force``); an existing path without ``force`` (argument ``force``); a folder where a
    file is to be written (or a file where a report folder is to be written, with
    ``folder=True``); a parent folder that does not exist or cannot be written; and, when
    ``size`` (bytes) is given, a disk with less free space than that.
    """
    target = Path(path)
    if target.name in ("", ".", ".."):
        raise InputError(f"cannot write {os.fspath(path)!r}: it must name a new file or folder")
    pairs = inputs.items() if isinstance(inputs, Mapping) else ((p, None) for p in inputs)
    for source, what in pairs:
        if source is not None and Path(source).exists() and same_file(target, source):
            raise InputError(
                f"cannot write {target}: it is {what or 'one of the files this command reads'}, "
                "an input of this command; choose another path"
            )
    parent = _folder(target)
    if target.exists() or target.is_symlink():
        if not folder and target.is_dir():
            raise InputError(f"cannot write {target}: it is a folder")
        if folder and (not target.is_dir() or target.is_symlink()):
            raise InputError(f"cannot write report to {target}: it exists and is not a folder")
        if not force:
            what = "report folder " if folder else ""
            raise InputError(f"{what}{target} exists; pass force to replace it", argument="force")
    if not parent.exists():
        raise InputError(f"cannot write {target}: folder {parent} does not exist")
    if not parent.is_dir():
        raise InputError(f"cannot write {target}: {parent} is not a folder")
    _probe(parent, target)
    if size is not None:
        with contextlib.suppress(OSError):
            free = shutil.disk_usage(parent).free
            if size > free:
                raise InputError(
                    f"cannot write {target}: it needs about {_bytes(size)} and the disk has "
                    f"{_bytes(free)} free"
                )
    return target


def _bytes(count: int) -> str:
    for unit, scale in (("TB", 10**12), ("GB", 10**9), ("MB", 10**6), ("kB", 10**3)):
        if count >= scale:
            return f"{count / scale:.3g} {unit}"
    return f"{count} bytes"


def _publish(temporary: Path, target: Path, force: bool) -> None:
    """Give the finished temporary the target's name (exclusively unless ``force``)."""
    if force:
        if target.is_dir() and not target.is_symlink():
            raise InputError(f"cannot write {target}: it is a folder")
        os.replace(temporary, target)
        return
    try:
        os.link(temporary, target)
    except FileExistsError:
        raise InputError(
            f"{target} exists (written by another run meanwhile?); pass force to replace it",
            argument="force",
        ) from None
    except OSError as exc:
        if exc.errno not in (errno.EPERM, errno.EOPNOTSUPP, errno.EXDEV, errno.EMLINK):
            raise
        # no hard links on this file system: check, then rename (not exclusive)
        if target.exists() or target.is_symlink():
            raise InputError(
                f"{target} exists; pass force to replace it", argument="force"
            ) from None
        os.rename(temporary, target)
        return
    os.unlink(temporary)


class _Output:
    """The open temporary, as the caller sees it: a failing write names the *target*."""

    def __init__(self, handle: IO, target: Path) -> None:
        self._handle = handle
        self._target = target

    def write(self, data):  # type: ignore[no-untyped-def]
        try:
            return self._handle.write(data)
        except OSError as exc:
            raise write_failure(self._target, exc) from None

    def writelines(self, lines) -> None:  # type: ignore[no-untyped-def]
        for line in lines:
            self.write(line)

    def __getattr__(self, name: str):  # type: ignore[no-untyped-def]
        return getattr(self._handle, name)


@contextlib.contextmanager
def atomic_open(
    path: str | os.PathLike[str], mode: str = "w", *, force: bool = True
) -> Iterator[IO]:
    """Open a temporary file beside ``path``; on success give it the name ``path``.

    ``mode`` is ``"w"`` (text, UTF-8, ``\\n`` line ends) or ``"wb"``. With ``force=False``
    an existing ``path`` is an :class:`InputError` instead of being replaced, checked again
    (exclusively) when the file is put in place. File system failures while writing become
    an :class:`InputError` naming the path and the cause; the temporary is always removed
    unless the file was put in place.
    """
    target = Path(path)
    if target.is_dir():
        raise InputError(f"cannot write {target}: it is a folder")
    if not force and (target.exists() or target.is_symlink()):
        raise InputError(f"{target} exists; pass force to replace it", argument="force")
    folder = _folder(target)
    if not folder.exists():
        raise InputError(f"cannot write {target}: folder {folder} does not exist")
    clean_temporaries(folder)
    temporary = temporary_path(target)
    try:
        fd = os.open(temporary, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    except OSError as exc:
        raise write_failure(target, exc) from None
    try:
        try:
            os.chmod(temporary, default_mode())
            handle: IO = (
                os.fdopen(fd, mode)
                if "b" in mode
                else os.fdopen(fd, mode, encoding="utf-8", newline="")
            )
        except BaseException:
            os.close(fd)
            raise
        with handle:
            yield _Output(handle, target)  # type: ignore[misc]
            try:
                handle.flush()
                os.fsync(handle.fileno())
            except OSError as exc:
                raise write_failure(target, exc) from None
        try:
            _publish(temporary, target, force)
        except OSError as exc:
            raise write_failure(target, exc) from None
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(temporary)
        raise


def atomic_write(path: str | os.PathLike[str], content: str | bytes, *, force: bool = True) -> Path:
    """Write ``content`` (text or bytes) to ``path`` atomically; return the path."""
    mode = "wb" if isinstance(content, bytes) else "w"
    with atomic_open(path, mode, force=force) as handle:
        handle.write(content)
    return Path(path)


def sha256_file(path: str | os.PathLike[str]) -> str:
    """Hex SHA-256 of a file's bytes (read in 1 MiB chunks)."""
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for chunk in iter(lambda: handle.read(1 << 20), b""):
            digest.update(chunk)
    return digest.hexdigest()
