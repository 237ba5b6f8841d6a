"""Command-line interface: ``shufflecheck COMMAND ...`` (a thin typer layer over the library).

Each command is one short function in its own module; importing the modules registers the
commands on the shared :data:`app`, in the order ``--help`` lists them (the main jobs first).
"""

from __future__ import annotations

import ctypes
import gc
import importlib
import os
import sys

from shufflecheck.cli._app import app, quiet_stdout, use_plain_help

__all__ = ["app", "main"]

#: command modules, in the order of the help listing
COMMAND_MODULES = (
    "demo",
    "mix",
    "assess",
    "policy",
    "audit",
    "fit_riffle",
    "monitor",
    "track",
    "simulate",
    "characters",
)

for _module in COMMAND_MODULES:
    importlib.import_module(f"shufflecheck.cli.{_module}")
use_plain_help(app)


#: glibc ``mallopt`` parameters (malloc.h): M_TRIM_THRESHOLD, M_MMAP_THRESHOLD
_M_TRIM_THRESHOLD, _M_MMAP_THRESHOLD = -1, -3
#: blocks from this size up are mapped and unmapped one by one (glibc's own ceiling for its
#: sliding threshold); free memory above this at the top of the heap goes back to the system
MMAP_THRESHOLD_BYTES = 32 << 20
TRIM_THRESHOLD_BYTES = 64 << 20


def keep_freed_memory() -> bool:
    """Let glibc's allocator reuse freed blocks below 32 MB instead of handing them back.

    A command is a short process that allocates and frees many arrays of a few megabytes
    (decks in blocks, laws, figures); by default glibc maps most of them afresh, and every
    new page costs a fault in the kernel: about 240,000 faults and 1 s of system time for
    the demo, 80,000 and 0.5 s with these settings, for about 10 MB more peak memory
    (measured on the demo). Larger arrays are still mapped and returned at once. Called by
    :func:`main` only (never on import: a program using the library keeps its own
    settings). Returns False where there is no glibc (nothing changes).
    """
    try:
        libc = ctypes.CDLL(None)  # the running process's own symbols (glibc on Linux)
        mallopt = libc.mallopt
    except (OSError, AttributeError, TypeError):  # no such symbol, or no process handle
        return False
    mallopt.argtypes = [ctypes.c_int, ctypes.c_int]
    mallopt.restype = ctypes.c_int
    return bool(
        mallopt(_M_MMAP_THRESHOLD, MMAP_THRESHOLD_BYTES)
        and mallopt(_M_TRIM_THRESHOLD, TRIM_THRESHOLD_BYTES)
    )


#: objects allocated (net) between two collections of the youngest generation (Python's
#: default is 700)
GC_YOUNG_THRESHOLD = 5000


def collect_less() -> None:
    """Spare the cyclic garbage collector work a command does not need.

    The modules imported so far live as long as the process: :func:`gc.freeze` moves their
    objects out of the collector's reach, so full collections no longer walk them again
    and again; and the youngest generation is collected every 5,000 allocations instead
    of 700 (a command allocates many short-lived objects: artists of figures, rows of
    tables). Measured on the demo: about 0.45 s of collection (4 full collections) before,
    0.18 s (none full) after, the same peak memory. Called by :func:`main` only.
    """
    gc.freeze()
    _, middle, old = gc.get_threshold()
    gc.set_threshold(GC_YOUNG_THRESHOLD, middle, old)


#: environment variables by which a user sets the BLAS thread count (then respected)
BLAS_THREAD_VARIABLES = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")


def one_blas_thread() -> bool:
    """Run the BLAS library numpy uses on one thread, unless the user chose a count.

    The commands' linear algebra is many small products (laws, tilts, transforms), too
    small to share between threads; OpenBLAS's idle threads still spin after each call
    and take a core that other work on a shared machine could use (the demo: about 0.4 s
    of CPU, no change in wall time). A user who sets ``OMP_NUM_THREADS``,
    ``OPENBLAS_NUM_THREADS`` or ``MKL_NUM_THREADS`` keeps that setting. Returns True when
    the limit was applied. Called by :func:`main` only.
    """
    if any(os.environ.get(name) for name in BLAS_THREAD_VARIABLES):
        return False
    from threadpoolctl import threadpool_limits

    threadpool_limits(limits=1, user_api="blas")
    return True


def main() -> None:
    """Entry point of the ``shufflecheck`` console script.

    Output still buffered when the command ends is flushed here: if its reader has gone
    (``shufflecheck mix riffle | head -1``), that is a normal end (exit code 0, no message).
    """
    keep_freed_memory()
    collect_less()
    one_blas_thread()
    code: int | str | None = 0
    try:
        app()
    except SystemExit as exc:
        code = exc.code
    except BrokenPipeError:
        code = 0
    try:
        sys.stdout.flush()
    except BrokenPipeError:
        quiet_stdout()
    except (OSError, ValueError):
        pass
    sys.exit(code)
