"""Peak resident memory of a snippet, measured in a fresh interpreter.

Reads ``VmHWM`` from ``/proc/self/status`` (Linux): unlike ``ru_maxrss`` it belongs to the
new address space, so it does not inherit the high-water mark of the forking test runner.
"""

from __future__ import annotations

import subprocess
import sys
import textwrap

_TEMPLATE = """
def _hwm():
    for line in open("/proc/self/status"):
        if line.startswith("VmHWM:"):
            return int(line.split()[1])
{setup}
before = _hwm()
{body}
after = _hwm()
print(before, after)
"""


def peak_rss_mb(setup: str, body: str) -> tuple[float, float]:
    """(peak RSS in MB after the setup, peak RSS in MB after the body)."""
    code = _TEMPLATE.format(setup=textwrap.dedent(setup), body=textwrap.dedent(body))
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    before, after = (int(x) for x in out.stdout.split()[-2:])
    return before / 1024, after / 1024
