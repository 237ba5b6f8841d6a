"""Write a report folder atomically: ``report.md``, ``report.html``, ``report.json``, figures.

Everything is rendered in memory first, then written into a temporary sibling folder
(``.<name>.<pid>-<random>.incomplete`` beside the target) and renamed into place in one
step, so a reader never sees a half-written report and a failure leaves no partial folder
behind. A temporary folder left by a run that was killed is removed by the next write into
the same parent folder (see :func:`shufflecheck.common.files.clean_temporaries`). File
system failures (permission denied, no space left, read-only file system) become one
:class:`InputError` line naming the folder and the cause.

An existing report folder is replaced only with ``force=True``: the old folder is first
renamed aside, the new one renamed in, and only then is the old one deleted; if the second
rename fails the old folder is put back. Between those two renames (a few microseconds)
the path is briefly absent, but it never holds a mix of old and new files. Without
``force`` the final rename cannot replace a report another run put there meanwhile (a
rename onto a folder that is not empty fails), so two runs cannot both win.

Replacing is refused unless the existing folder holds nothing but what a report writes
(``report.md``, ``report.html``, ``report.json`` naming the report format, and
``figures/*.png``): a mistyped ``--report`` pointing at a folder of input logs can never
delete them.

A writer that owns its folder (``owner="demo"``: the demo's default folder, which its
README command writes on every run) leaves a marker file :data:`OWNER_FILE` holding its
name in the folder; a folder with that marker and nothing but report files is replaced
without ``force`` by the same owner. Any other existing folder still needs ``force``.
"""

from __future__ import annotations

import contextlib
import json
import os
import shutil
from dataclasses import dataclass
from pathlib import Path

from shufflecheck.common.errors import InputError
from shufflecheck.common.files import (
    OWNER_FILE,
    clean_temporaries,
    default_mode,
    temporary_path,
    write_failure,
)
from shufflecheck.report.document import FORMAT_NAME, Report, render_json
from shufflecheck.report.render.html import render_html
from shufflecheck.report.render.markdown import render_markdown

__all__ = [
    "OWNER_FILE",
    "REPORT_FILES",
    "WrittenReport",
    "check_report_target",
    "render_files",
    "write_report",
]

#: The files at the top of a report folder (figures go in ``figures/``).
REPORT_FILES = ("report.md", "report.html", "report.json", OWNER_FILE)


@dataclass(frozen=True)
class WrittenReport:
    """Where a report was written and the files it holds (relative, ``/``-separated)."""

    folder: Path
    files: tuple[str, ...]


def render_files(report: Report) -> dict[str, bytes]:
    """Every file of the report folder, by relative path, as bytes (UTF-8 for text).

    Rendering is pure: the same report gives the same bytes. Text that cannot be encoded
    (an undecodable file name, kept by Python as lone surrogates) is written as ``\\udcXX``.
    """
    files = {
        "report.md": render_markdown(report).encode("utf-8", "backslashreplace"),
        "report.html": render_html(report).encode("utf-8", "backslashreplace"),
        "report.json": render_json(report).encode("utf-8", "backslashreplace"),
    }
    for _, _, figure in report.numbered_figures():
        files[figure.file] = figure.png
    return files


def owned_by(folder: str | os.PathLike[str], owner: str) -> bool:
    """Whether ``folder`` holds the marker file of ``owner`` (see the module notes)."""
    marker = Path(folder) / OWNER_FILE
    if marker.is_symlink() or not marker.is_file():
        return False
    try:
        return marker.read_text(encoding="utf-8").strip() == owner
    except (OSError, UnicodeDecodeError):
        return False


def check_report_target(
    folder: str | os.PathLike[str], *, force: bool = False, owner: str | None = None
) -> Path:
    """Check that a report can be written at ``folder`` (before any work); return it.

    Refused: a name that is not a new folder; a missing parent; an existing file; an
    existing folder without ``force`` (unless ``owner`` wrote it: its marker file names
    ``owner``); when replacing, a folder that holds anything a report does not write (see
    the module notes).
    """
    target = Path(folder)
    if target.name in ("", ".", ".."):
        raise InputError(f"report folder {str(folder)!r} must name a new folder")
    parent = target.parent if str(target.parent) else Path(".")
    if not parent.is_dir():
        raise InputError(f"cannot write report to {target}: folder {parent} does not exist")
    if target.exists() or target.is_symlink():
        if not target.is_dir() or target.is_symlink():
            raise InputError(f"cannot write report to {target}: it exists and is not a folder")
        if not force and not (owner is not None and owned_by(target, owner)):
            whose = f" and was not written by the {owner}" if owner is not None else ""
            raise InputError(
                f"report folder {target} exists{whose}; pass force to replace it",
                argument="force",
            )
        _check_replaceable(target)

    return target


def write_report(
    report: Report,
    folder: str | os.PathLike[str],
    *,
    force: bool = False,
    owner: str | None = None,
) -> WrittenReport:
    """Write ``report`` as a folder at ``folder``, atomically.

    Parameters
    ----------
    report : Report
    folder : path
        The report folder to create. Its parent must exist.
    force : bool
        Replace an existing report folder (atomically, see the module notes). Without it an
        existing ``folder`` is an error, unless ``owner`` wrote it.
    owner : str, optional
        The writer that owns the folder (e.g. ``"demo"``): its name is written to the
        marker file :data:`OWNER_FILE`, and a folder holding that marker is replaced
        without ``force``.

    Returns
    -------
    WrittenReport

    Raises
    ------
    InputError
        The parent folder does not exist; ``folder`` exists and ``force`` is not given;
        ``folder`` is a file; or ``folder`` holds files a report does not write.
    """
    target = check_report_target(folder, force=force, owner=owner)
    parent = target.parent
    files = render_files(report)  # render everything before touching the disk
    if owner is not None:
        files[OWNER_FILE] = f"{owner}\n".encode()
    clean_temporaries(parent)
    staging = temporary_path(target)
    try:
        os.mkdir(staging, 0o700)
    except OSError as exc:
        raise write_failure(target, exc) from None
    try:
        os.chmod(staging, default_mode(directory=True))
        for relative, content in files.items():
            path = staging / relative
            path.parent.mkdir(exist_ok=True)
            _write_file(path, content)
        _fsync_dir(staging)
        if target.exists():
            _swap_in(staging, target)
        else:
            try:
                os.rename(staging, target)
            except OSError as exc:
                if not target.exists():
                    raise
                raise InputError(
                    f"report folder {target} appeared while the report was written; "
                    "nothing was changed"
                ) from exc
    except OSError as exc:
        shutil.rmtree(staging, ignore_errors=True)
        raise write_failure(target, exc) from None
    except BaseException:
        shutil.rmtree(staging, ignore_errors=True)
        raise
    _fsync_dir(parent)
    return WrittenReport(folder=target, files=tuple(files))


def _write_file(path: Path, content: bytes) -> None:
    with open(path, "xb") as handle:
        handle.write(content)
        handle.flush()
        os.fsync(handle.fileno())


def _fsync_dir(path: Path) -> None:
    """Flush a folder's entries to disk where the platform allows it."""
    with contextlib.suppress(OSError):
        fd = os.open(path, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)


def _swap_in(staging: Path, target: Path) -> None:
    """Rename ``target`` aside, ``staging`` into its place, then delete the old folder."""
    trash = temporary_path(target, suffix=".replaced")
    os.mkdir(trash, 0o700)
    old = trash / target.name
    os.rename(target, old)
    try:
        os.rename(staging, target)
    except BaseException:
        os.rename(old, target)  # put the old report back
        shutil.rmtree(trash, ignore_errors=True)
        raise
    shutil.rmtree(trash, ignore_errors=True)


def _check_replaceable(target: Path) -> None:
    """Refuse to replace a folder that holds anything a report does not write."""
    foreign = []
    for entry in sorted(target.iterdir()):
        if entry.name in REPORT_FILES and entry.is_file() and not entry.is_symlink():
            continue
        if entry.name == "figures" and entry.is_dir() and not entry.is_symlink():
            foreign += [
                f"figures/{f.name}"
                for f in sorted(entry.iterdir())
                if f.suffix != ".png" or not f.is_file() or f.is_symlink()
            ]
            continue
        foreign.append(entry.name)
    if foreign:
        raise InputError(
            f"refusing to replace {target}: it holds files a report does not write "
            f"({', '.join(foreign[:3])}{', ...' if len(foreign) > 3 else ''})"
        )
    if not any(target.iterdir()):
        return  # an empty folder holds nothing to lose
    marker = target / "report.json"
    try:
        with open(marker, encoding="utf-8") as handle:
            fmt = json.load(handle).get("format")
    except (OSError, ValueError, AttributeError):
        fmt = None
    if fmt != FORMAT_NAME:
        raise InputError(
            f"refusing to replace {target}: it is not a report folder "
            f"(no report.json of format {FORMAT_NAME!r})"
        )
