"""Process settings the console script makes before a command runs (shufflecheck.cli.main):
glibc's allocator keeps freed blocks below 32 MB, and the cyclic collector skips what the
imports made. Checked in fresh interpreters, so the test runner keeps its own settings."""

from __future__ import annotations

import json
import platform
import subprocess
import sys

import pytest

CHECK = """
import gc, sys
import shufflecheck.cli as cli
assert gc.get_freeze_count() == 0
print(cli.keep_freed_memory())
cli.collect_less()
print(gc.get_freeze_count() > 0, gc.get_threshold()[0])
"""


def _run(code: str) -> list[str]:
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    return out.stdout.split()


@pytest.mark.skipif(
    platform.system() != "Linux" or platform.libc_ver()[0] != "glibc", reason="glibc only"
)
def test_settings_take_effect_on_glibc():
    kept, frozen, threshold = _run(CHECK)
    assert kept == "True"  # mallopt accepted both settings
    assert frozen == "True"
    assert int(threshold) == 5000


def test_a_command_still_runs_and_exits_with_its_code():
    out = subprocess.run(
        [sys.executable, "-m", "shufflecheck", "mix", "riffle", "--cards", "52", "--json"],
        capture_output=True,
        text=True,
    )
    assert out.returncode == 0, out.stderr
    rows = {r["steps"]: r for r in json.loads(out.stdout)["rows"]}
    # Bayer & Diaconis (1992), Table 1: total variation 0.334 after 7 riffles of 52 cards
    assert rows[7]["total_variation"] == pytest.approx(0.334, abs=5e-4)
    assert rows[7]["kind"] == "exact"
    bad = subprocess.run(
        [sys.executable, "-m", "shufflecheck", "mix", "riffle", "--cards", "0"],
        capture_output=True,
        text=True,
    )
    assert bad.returncode == 2


BLAS = """
import shufflecheck.cli as cli
from threadpoolctl import threadpool_info
print(cli.one_blas_thread(), sorted({i["num_threads"] for i in threadpool_info()
                                      if i["user_api"] == "blas"}))
"""


def test_blas_on_one_thread_unless_the_user_chose():
    import os

    clean = {
        k: v
        for k, v in os.environ.items()
        if k not in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")
    }
    out = subprocess.run(
        [sys.executable, "-c", BLAS], capture_output=True, text=True, check=True, env=clean
    )
    applied, counts = out.stdout.split(maxsplit=1)
    assert applied == "True"
    assert counts.strip() in ("[1]", "[]")  # [] where numpy has no threaded BLAS
    chosen = subprocess.run(
        [sys.executable, "-c", BLAS],
        capture_output=True,
        text=True,
        check=True,
        env={**clean, "OPENBLAS_NUM_THREADS": "2"},
    )
    assert chosen.stdout.split()[0] == "False"
