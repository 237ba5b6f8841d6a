"""Run the real ``shufflecheck`` console command with its stderr on a pseudo-terminal, as a
user at a terminal would (progress bars show only when stderr is a terminal)."""

from __future__ import annotations

import os
import pty
import select
import subprocess
import sys


def run_with_terminal_stderr(*args: str, timeout: float = 300.0) -> tuple[int, str, str]:
    """``python -m shufflecheck ARGS``: (exit code, stdout, what the terminal on stderr got).

    stdout is a pipe (so output lines are as when piped); stderr is the slave side of a
    pseudo-terminal 200 columns wide, read from its master side until the command ends."""
    import fcntl
    import struct
    import termios

    master, slave = pty.openpty()
    fcntl.ioctl(slave, termios.TIOCSWINSZ, struct.pack("HHHH", 50, 200, 0, 0))
    env = dict(os.environ, COLUMNS="200", OMP_NUM_THREADS="1", OPENBLAS_NUM_THREADS="1")
    process = subprocess.Popen(
        [sys.executable, "-m", "shufflecheck", *args],
        stdout=subprocess.PIPE,
        stderr=slave,
        stdin=subprocess.DEVNULL,
        env=env,
    )
    os.close(slave)
    chunks: list[bytes] = []
    out: list[bytes] = []
    try:
        while True:
            ready, _, _ = select.select([master, process.stdout], [], [], timeout)
            if not ready:
                process.kill()
                raise TimeoutError(f"shufflecheck {' '.join(args)} ran over {timeout} s")
            if process.stdout in ready:
                data = process.stdout.read1(65536)
                if data:
                    out.append(data)
            if master in ready:
                try:
                    data = os.read(master, 65536)
                except OSError:  # the command closed the terminal's last handle
                    data = b""
                if data:
                    chunks.append(data)
                elif process.poll() is not None:
                    break
            if process.poll() is not None and master not in ready and process.stdout not in ready:
                break
        rest = process.stdout.read()
        if rest:
            out.append(rest)
        code = process.wait(timeout)
    finally:
        os.close(master)
        process.stdout.close()
    return code, b"".join(out).decode("utf-8"), b"".join(chunks).decode("utf-8", "replace")
