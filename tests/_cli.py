"""Running the command-line app in tests (typer's CliRunner), shared by the CLI test files."""

from __future__ import annotations

import json

from typer.testing import CliRunner

from shufflecheck.cli import app

runner = CliRunner()


def run(*args: object):
    """Invoke ``shufflecheck ARGS...`` (arguments turned into text)."""
    return runner.invoke(app, [str(a) for a in args])


def command_json(command: str, *args: object) -> dict:
    """``shufflecheck COMMAND ARGS... --json``, which must succeed; its parsed output."""
    result = run(command, *args, "--json")
    assert result.exit_code == 0, result.output
    return json.loads(result.stdout)


def one_line_error(result) -> str:
    """The single ``error: ...`` line of a refused command (exit code 2)."""
    assert result.exit_code == 2, result.output
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert lines[0].startswith("error: "), result.stderr
    return lines[0]
