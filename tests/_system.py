"""Real file-system conditions for tests: an unprivileged run, a full disk, a CLI process.

Permission tests need a process that the kernel refuses: when the tests run as root (who
may write anywhere), the command is run under ``setpriv`` without the capabilities that
override file permissions; without it the test is skipped. A full disk is a tiny tmpfs
mounted for the test (root only; skipped where mounting is not permitted).
"""

from __future__ import annotations

import contextlib
import os
import shutil
import subprocess
import sys
from collections.abc import Iterator
from pathlib import Path

import pytest

#: the command that runs the CLI in a fresh process
CLI = [sys.executable, "-m", "shufflecheck"]

#: a fixed, small environment for subprocess runs (one thread per process)
ENV = {**os.environ, "OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1"}


def unprivileged() -> list[str]:
    """A command prefix under which file permissions apply, or skip the test."""
    if os.geteuid() != 0:
        return []
    setpriv = shutil.which("setpriv")
    if setpriv is None:
        pytest.skip("running as root and setpriv (util-linux) is not installed")
    drop = "-dac_override,-dac_read_search,-fowner"
    prefix = [setpriv, f"--inh-caps={drop}", f"--bounding-set={drop}"]
    probe = subprocess.run([*prefix, "true"], capture_output=True, check=False)
    if probe.returncode != 0:
        pytest.skip(f"cannot drop privileges with setpriv: {probe.stderr.decode().strip()}")
    return prefix


def run_cli(*args: object, prefix: list[str] | None = None, cwd: Path | None = None, **kw):
    """Run ``shufflecheck ARGS`` in a new process; the CompletedProcess (text output)."""
    return subprocess.run(
        [*(prefix or []), *CLI, *map(str, args)],
        capture_output=True,
        text=True,
        env=kw.pop("env", ENV),
        cwd=cwd,
        timeout=kw.pop("timeout", 300),
        check=False,
        **kw,
    )


@contextlib.contextmanager
def small_disk(where: Path, size: str = "64k") -> Iterator[Path]:
    """A tmpfs of ``size`` mounted at ``where`` for the duration (root only), or skip."""
    if os.geteuid() != 0 or shutil.which("mount") is None:
        pytest.skip("a full disk needs root to mount a small tmpfs")
    where.mkdir(parents=True, exist_ok=True)
    done = subprocess.run(
        ["mount", "-t", "tmpfs", "-o", f"size={size}", "tmpfs", str(where)],
        capture_output=True,
        check=False,
    )
    if done.returncode != 0:
        pytest.skip(f"mounting a tmpfs is not permitted here: {done.stderr.decode().strip()}")
    try:
        yield where
    finally:
        subprocess.run(["umount", "-l", str(where)], capture_output=True, check=False)


def fill(folder: Path) -> None:
    """Fill the file system holding ``folder`` until a write fails."""
    with contextlib.suppress(OSError), open(folder / "filler", "wb") as handle:
        while True:
            handle.write(b"\0" * 4096)
            handle.flush()
