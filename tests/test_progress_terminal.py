"""Progress on long work, in a real run with stderr on a terminal (issue 14): the command
runs as ``python -m shufflecheck`` with stderr on a pseudo-terminal (bars show only there)
and stdout on a pipe."""

from __future__ import annotations

import re

import pytest

from ._tty import run_with_terminal_stderr


def percents(stderr: str) -> list[int]:
    return [int(p) for p in re.findall(r"(\d+)%", stderr)]


def test_spectrum_60_shows_progress():
    # the bar appears only after 0.5 s of work: 60 cards (p(60) = 966,467 shapes) take about
    # 3 s here; 52 cards took about 1 s here but under 0.5 s on a faster CI machine
    code, out, err = run_with_terminal_stderr("spectrum", "transposition", "-n", "60")
    assert code == 0, err
    assert "transposition spectrum" in err
    shown = percents(err)
    assert shown and shown[-1] == 100 and shown == sorted(shown)
    assert "%" not in out  # the bar never reaches stdout


@pytest.mark.slow
def test_demo_shows_progress_to_the_end(tmp_path):
    # about 35 s: the demo's two bars (the assessment, then the report with one unit per
    # figure drawn and one for writing) both reach 100%
    code, out, err = run_with_terminal_stderr("demo", "--report", str(tmp_path / "demo"))
    assert code == 0, err
    assert "demo: assessing procedures" in err and "demo: drawing the report" in err
    report = err[err.index("demo: drawing the report") :]
    shown = percents(report)
    assert shown and shown[-1] == 100 and shown == sorted(shown)
    assert len(set(shown)) >= 3  # it moved on the way, not only 0% and 100%
    assert "Report:" in out


def test_feature_curve_of_a_shoe_shows_progress():
    # a six-pack colour shoe in blocks: about 1 s per row (the two-valued bounds)
    code, out, err = run_with_terminal_stderr(
        "mix",
        "riffle",
        "--deck",
        "shoe(packs=6)",
        "--feature",
        "colour",
        "--start",
        "blocks",
        "-k",
        "3",
    )
    assert code == 0, err
    assert "riffle on 'colour': k = 1..3" in err
    shown = percents(err)
    assert shown and shown[-1] == 100 and shown == sorted(shown)
    assert "(bounds)" in out and "%" not in out
