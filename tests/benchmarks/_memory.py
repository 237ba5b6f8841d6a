"""Peak resident memory of a snippet, measured in a fresh interpreter.

Reads ``VmHWM`` from ``/proc/self/status`` (Linux): unlike ``ru_maxrss`` it belongs to the
new address space, so it does not inherit the high-water mark of the forking test runner.
"""

from __future__ import annotations

import subprocess
import sys
import textwrap

_TEMPLATE = """
import time as _time
def _hwm():
    for line in open("/proc/self/status"):
        if line.startswith("VmHWM:"):
            return int(line.split()[1])
{setup}
before = _hwm()
_cpu = _time.process_time()
{body}
_cpu = _time.process_time() - _cpu
after = _hwm()
print(before, after, _cpu)
"""


def peak_rss_mb(setup: str, body: str) -> tuple[float, float]:
    """(peak RSS in MB after the setup, peak RSS in MB after the body)."""
    before, after, _ = measure(setup, body)
    return before, after


def measure(setup: str, body: str) -> tuple[float, float, float]:
    """(peak RSS in MB after the setup, peak RSS in MB after the body, CPU seconds of the
    body: user + system time of the fresh interpreter, all its threads)."""
    code = _TEMPLATE.format(setup=textwrap.dedent(setup), body=textwrap.dedent(body))
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    before, after, cpu = out.stdout.split()[-3:]
    return int(before) / 1024, int(after) / 1024, float(cpu)
