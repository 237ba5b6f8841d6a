"""Issue 16: no traceback for any input, bounded resources, kill-safe outputs.

Every class of bad input the issue lists ends in exit code 2 with one line ``error: ...``
(or completes correctly when it is merely large but within the documented range); an
unexpected exception ends in exit code 3 with ``error: internal error: ...`` and the path
of a traceback file; outputs never replace a file without ``--force``, never an input, and
never leave a partial file behind.
"""

from __future__ import annotations

import json
import re
import shutil
import signal
import subprocess
import time
from pathlib import Path

import pytest

from shufflecheck.common.errors import MAX_MESSAGE
from tests._cli import one_line_error, run
from tests._system import CLI, ENV, run_cli, small_disk, unprivileged

DEMO = Path(__file__).resolve().parents[1] / "data" / "demo"
TABLE1 = DEMO / "logs" / "table1.csv"


def error_line(*args: object) -> str:
    """The single stderr line of a refused command (exit code 2)."""
    return one_line_error(run(*args))


@pytest.fixture
def here(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    return tmp_path


class TestLimitsUpFront:
    """Astronomical numbers are refused before any work, saying what is allowed and why."""

    @pytest.mark.parametrize(
        ("args", "expected"),
        [
            (
                ("assess", "shelf(shelves=1000000000)", "-r", 1, "--simulate", 100),
                "shelves must be an integer from 1 to 524,288, got 1000000000 (shelf counts "
                "above 2^19 leave the exact law's range",
            ),
            (("mix", "shelf", "--shelves", 2**20), "--shelves must be an integer from 1 to"),
            (
                ("assess", "riffle x1000000000", "-r", 1),
                "riffle: the repeat count must be from 1 to 10,000, got 1000000000",
            ),
            (
                ("simulate", "riffle", "--out", "s.csv", "--decks", 3_000_000_000),
                "--decks must be an integer from 1 to 100,000,000, got 3000000000 (the whole "
                "log is built in memory",
            ),
            (
                ("power", "riffle", "--simulate", 10**12),
                "--simulate must be an integer from 100 to 10,000,000",
            ),
            (
                ("characters", 5, "--shape", "3^999999999999,1", "--class", 5),
                "shape '3^999999999999,1': its parts add up to more than 5",
            ),
            (("characters", 10**6), "n must be an integer from 0 to 10,000"),
            (("assess", "riffle", "-n", 5000, "--simulate", 100), "--cards must be an integer"),
            (("assess", "riffle", "-r", 0), "--repeat must be an integer from 1 to 100, got 0"),
            (("spectrum", "riffle", "-n", 5000), "--cards must be an integer from 2 to 2,000"),
            (("mix", "riffle", "--hands", 10**7), "--hands must be an integer from 2 to"),
            (
                ("audit", TABLE1, "--labels", "int", "--cards", 1500),
                "--cards must be an integer from 2 to 1,000, got 1500 (the exact law of the "
                "inversion count",
            ),
            (("power", "riffle", "-n", 1500), "--cards must be an integer from 2 to 1,000"),
        ],
    )
    def test_refused_with_the_range(self, here, args, expected):
        line = error_line(*args)
        assert expected in line
        assert list(here.iterdir()) == []  # nothing was written

    @pytest.mark.parametrize("repeat", [0, -1])
    def test_simulate_needs_at_least_one_run(self, here, repeat):
        line = error_line("simulate", "riffle", "--out", "x.csv", "-r", repeat, "--decks", 5)
        assert f"--repeat must be an integer from 1 to 100, got {repeat}" in line
        assert not (here / "x.csv").exists()  # never unshuffled decks labelled as shuffled

    def test_simulate_times_must_go_forward(self, here):
        line = error_line(
            "simulate",
            "riffle",
            "--out",
            "x.csv",
            "--every",
            -5,
            "--start-time",
            "2026-01-01T00:00",
        )
        assert "--every must be an integer from 1 to 31,622,400, got -5" in line
        assert not (here / "x.csv").exists()

    def test_simulate_times_within_the_calendar(self, here):
        line = error_line(
            "simulate",
            "riffle",
            "--out",
            "x.csv",
            "--decks",
            10,
            "--start-time",
            "9999-12-31T23:59",
            "--every",
            3_000_000,
        )
        assert "runs past the end of the calendar (year 9999)" in line

    @pytest.mark.parametrize(
        ("body", "key"),
        [
            ("cards = 1000000000000\nsteps = 'riffle'\n", "line 1: key 'cards'"),
            ("cards = 9223372036854775807\nsteps = 'riffle'\n", "line 1: key 'cards'"),
            ("a = " + "[" * 5000 + "]" * 5000 + "\n", "nested 5000 deep; at most 32"),
            ("a = " + "{x = " * 2000 + "1" + "}" * 2000 + "\n", "nested 2000 deep"),
        ],
    )
    def test_procedure_files(self, here, body, key):
        (here / "p.toml").write_text(body)
        assert key in error_line("assess", "p.toml", "-r", 1, "--simulate", 100)

    @pytest.mark.parametrize(
        ("line", "expected"),
        [
            ("cards = 1000000", "line 5: key 'procedure.cards': the number of cards must be"),
            ("cards = 1000000000000", "key 'procedure.cards'"),
            (
                "house = 150",
                "line 5: key 'procedure.house': the value must be an integer "
                "from 1 to 100, got 150",
            ),
        ],
    )
    def test_policy_files_name_file_line_and_key(self, here, line, expected):
        (here / "policy.toml").write_text(
            f'[policy]\ntarget = 0.1\n[[procedure]]\nsteps = "riffle"\n{line}\n'
        )
        message = error_line("policy", "policy.toml")
        assert message.startswith("error: policy.toml line 5: ")
        assert expected in message
        assert "--" not in message  # a file's key, never a command-line option

    def test_a_long_random_to_top_curve_completes(self, here):
        # issue 16 listed `mix random-to-top -n 2000 -k 20000` (7.4 min, 6.2 GB); it is in
        # the documented range and now runs on the double-precision chain (about 2 s)
        result = run("mix", "random-to-top", "-n", 2000, "-k", 20000, "--json")
        assert result.exit_code == 0, result.output
        rows = json.loads(result.output)["rows"]
        assert len(rows) == 20000 and rows[-1]["kind"] == "exact"
        assert 0 < rows[-1]["total_variation"] < rows[0]["total_variation"] <= 1

    def test_large_samplers_work(self, here):
        # 2,049 shelves at 1,000 cards and strips of 2,000 cards once broke the samplers'
        # 64-bit sort keys (issue 16)
        for k, args in enumerate((("shelf(shelves=2049)", "-n", 1000), ("strip", "-n", 2000))):
            out = here / f"{k}.csv"
            result = run("simulate", *args, "--decks", 3, "--out", out)
            assert result.exit_code == 0, result.output
            decks = [line.split(",")[1].split() for line in out.read_text().splitlines()[1:]]
            assert all(sorted(map(int, d)) == list(range(1, args[-1] + 1)) for d in decks)

    @pytest.mark.slow
    def test_large_assessments_complete(self, here):
        for args in (("shelf(shelves=2049)", "-n", 1000), ("strip", "-n", 2000)):
            result = run("assess", *args, "-r", 1, "--simulate", 4, "--json")
            assert result.exit_code == 0, result.output
            assert json.loads(result.stdout)["cards"] == args[-1]


CODES = " ".join(r + s for s in "SHDC" for r in "A23456789TJQK")


class TestReaders:
    """Malformed logs: one line naming the file and row, never a traceback (issue 16)."""

    @pytest.mark.parametrize(
        ("name", "data", "expected"),
        [
            ("cr.csv", b'deck,order\n1,"AS\r2S"\n', "cr.csv row 2: 2 cards"),
            ("quote-cr.csv", b'"\r', "quote-cr.csv row 1: the header is not valid CSV"),
            (
                "garbage.csv",
                b"deck,order\n\xed\xa7\x02s\rz\n\x00\xff\r\x12n'C",
                "garbage.csv row 2:",
            ),
            (
                "deep.jsonl",
                b'{"order":' + b"[" * 100_000 + b"]" * 100_000 + b"}\n",
                "deep.jsonl line 1: nested 100001 deep; at most 32 levels",
            ),
            (
                "two.jsonl",
                b'{"order": ["AS"], "order": ["2S"]}\n',
                "two.jsonl line 1: key 'order' appears twice in one object",
            ),
            (
                "long.jsonl",
                b'{"order": [' + b"9" * 5000 + b"]}\n",
                "long.jsonl line 1: a number too long to read",
            ),
        ],
    )
    def test_malformed_logs(self, here, name, data, expected):
        (here / name).write_bytes(data)
        assert expected in error_line("audit", name)

    def test_integer_labels_far_beyond_64_bits(self, here):
        labels = [-(2**70), *range(2, 53)]
        (here / "big.jsonl").write_text(json.dumps({"order": labels}) + "\n")
        line = error_line("audit", "big.jsonl", "--labels", "int")
        assert line == (
            "error: big.jsonl line 1: label -1180591620717411303424 at position 1 is out of "
            "range 1..52"
        )

    def test_a_text_column_is_not_a_time(self, here):
        (here / "t.csv").write_text(f"when,order\nT7,{CODES}\nT8,{CODES}\n")
        line = error_line("audit", "t.csv", "--time", "when")
        assert "when value 'T7' is not a time" in line and "--time-format" in line


class TestMemory:
    def test_estimate_refuses_before_the_work(self, here, monkeypatch):
        monkeypatch.setenv("SHUFFLECHECK_MAX_MEMORY", "200M")
        line = error_line("simulate", "riffle", "--out", "x.csv", "--decks", 50_000_000)
        assert "50,000,000 simulated decks of 52 cards need about 41.6 GB of memory" in line
        assert "use a smaller --decks (at most about" in line
        line = error_line("power", "riffle", "--simulate", 5_000_000)
        assert "5,000,000 simulated decks of 52 cards need about" in line
        line = error_line("assess", "riffle", "-n", 2000, "--simulate", 100_000, "-r", 1)
        assert "decks of 2000 cards assessed at once need about" in line
        assert list(here.iterdir()) == []

    def test_bad_variable(self, monkeypatch):
        monkeypatch.setenv("SHUFFLECHECK_MAX_MEMORY", "lots")
        assert "is not a size like 4G" in error_line("power", "riffle", "--simulate", 200)


class TestOutputs:
    """--plot, --csv, --quarantine, --out and --report: never replace without --force,
    never an input, one line for a folder, a read-only folder or a full disk."""

    def test_existing_files_are_kept_without_force(self, here):
        (here / "dash").mkdir()
        for name in (
            "plot.png",
            "table.csv",
            "bad.csv",
            "log.csv",
            "fit.toml",
            "dash/dashboard.html",
        ):
            (here / name).write_text("keep me")
        cases = [
            ("mix", "riffle", "--plot", "plot.png"),
            ("characters", 4, "--csv", "table.csv"),
            ("audit", TABLE1, "--quarantine", "bad.csv"),
            ("simulate", "riffle", "--out", "log.csv"),
            ("fit-riffle", TABLE1, "--out", "fit.toml"),
            ("fit-riffle", TABLE1, "--quarantine", "bad.csv"),
            ("monitor", "dashboard", "store.db", "--report", "dash"),
        ]
        for args in cases:
            assert "exists; pass --force to replace it" in error_line(*args)
        assert {p.read_text() for p in here.rglob("*") if p.is_file()} == {"keep me"}
        assert run("mix", "riffle", "--plot", "plot.png", "--force").exit_code == 0
        assert (here / "plot.png").read_bytes().startswith(b"\x89PNG")

    def test_an_input_is_never_an_output(self, here):
        (here / "p.toml").write_text('steps = "riffle"\n')
        shutil.copy(TABLE1, here / "log.csv")
        before = {p.name: p.read_bytes() for p in here.iterdir()}
        line = error_line("assess", "p.toml", "--plot", "p.toml", "--force", "-r", 1)
        assert "cannot write p.toml: it is the procedure file itself" in line
        line = error_line("audit", "log.csv", "--quarantine", "log.csv", "--force")
        assert "cannot write log.csv: it is the log itself" in line
        line = error_line("simulate", "p.toml", "--out", "p.toml", "--force")
        assert "it is the procedure file itself" in line
        assert {p.name: p.read_bytes() for p in here.iterdir()} == before

    @pytest.mark.parametrize(
        "args",
        [
            ("mix", "riffle", "--plot", "folder"),
            ("audit", TABLE1, "--quarantine", "folder"),
            ("characters", 4, "--csv", "folder"),
            ("simulate", "riffle", "--out", "folder", "--force"),
        ],
    )
    def test_a_folder_in_the_way(self, here, args):
        (here / "folder").mkdir()
        assert error_line(*args) == "error: cannot write folder: it is a folder"

    @pytest.mark.parametrize(
        "args",
        [
            ("simulate", "riffle", "--out", "locked/x.csv", "--decks", 10),
            ("mix", "riffle", "--report", "locked/report"),
            ("mix", "riffle", "--plot", "locked/x.png"),
            ("characters", 4, "--csv", "locked/x.csv"),
            ("demo", "--report", "locked/demo"),
        ],
    )
    def test_read_only_folder(self, here, args):
        prefix = unprivileged()
        (here / "locked").mkdir()
        (here / "locked").chmod(0o555)
        done = run_cli(*args, prefix=prefix, cwd=here)
        target = str(args[args.index("--out") + 1] if "--out" in args else args[-1])
        assert done.returncode == 2, done.stderr
        assert done.stderr == f"error: cannot write {target}: permission denied\n"
        assert list((here / "locked").iterdir()) == []

    @pytest.mark.parametrize(
        "args",
        [
            ("simulate", "riffle", "--out", "disk/x.csv", "--decks", 2000),
            ("mix", "riffle", "--report", "disk/report"),
        ],
    )
    def test_full_disk(self, here, args):
        # 64 kB hold neither the log (refused up front: its size is known) nor the report
        # (refused when the disk fills up mid-write)
        with small_disk(here / "disk", "64k") as disk:
            done = run_cli(*args, cwd=here)
            assert done.returncode == 2, done.stderr
            assert len(done.stderr.splitlines()) == 1
            line = done.stderr.strip()
            assert line.startswith(f"error: cannot write disk/{Path(args[3]).name}: ")
            assert line.endswith(("no space left on the device", "kB free"))
            assert list(disk.iterdir()) == []  # no partial output, no temporary

    def test_two_runs_cannot_both_win(self, here):
        # both start before either has written: one must be refused
        commands = [
            [*CLI, "simulate", "riffle", "--out", "same.csv", "--decks", 100_000, "--seed", s]
            for s in (1, 2)
        ]
        procs = [
            subprocess.Popen(
                list(map(str, c)),
                env=ENV,
                stdout=subprocess.PIPE,
                stderr=subprocess.PIPE,
                text=True,
            )
            for c in commands
        ]
        outcomes = [(p.wait(timeout=300), p.stderr.read()) for p in procs]
        codes = sorted(code for code, _ in outcomes)
        assert codes == [0, 2], outcomes
        refused = next(err for code, err in outcomes if code == 2)
        assert "same.csv exists" in refused and "pass --force" in refused
        assert sorted(p.name for p in here.iterdir()) == ["same.csv"]


class TestMessages:
    def test_a_row_of_millions_of_cards(self, here):
        codes = " ".join(r + s for s in "SHDC" for r in "A23456789TJQK")
        (here / "huge.csv").write_text("order\n" + " ".join([codes] * 20_000) + "\n")
        line = error_line("audit", "huge.csv")
        assert line.startswith("error: huge.csv row 2: 1040000 cards, deck 'standard-52' has 52")
        assert len(line) < 400

    def test_a_huge_token(self, here):
        line = error_line("characters", 5, "--shape", "x" * 200_000, "--class", 5)
        assert "more characters" in line and len(line) < 400

    def test_no_message_is_longer_than_the_cap(self):
        from shufflecheck.common.errors import InputError

        assert len(str(InputError("x" * 10**6))) <= MAX_MESSAGE + 40

    def test_warnings_never_come_before_the_error(self, here, monkeypatch):
        import warnings

        import shufflecheck.models

        def noisy(*args, **kwargs):
            warnings.warn("a library warning", UserWarning, stacklevel=1)
            from shufflecheck.common.errors import InputError

            raise InputError("the real problem")

        monkeypatch.setattr(shufflecheck.models, "distance_curve", noisy)
        assert error_line("mix", "riffle") == "error: the real problem"

    def test_warnings_follow_a_success(self, monkeypatch):
        import warnings

        import shufflecheck.models

        real = shufflecheck.models.distance_curve

        def noisy(*args, **kwargs):
            warnings.warn("a library warning", UserWarning, stacklevel=1)
            return real(*args, **kwargs)

        monkeypatch.setattr(shufflecheck.models, "distance_curve", noisy)
        result = run("mix", "riffle", "--json")
        assert result.exit_code == 0
        assert result.stderr == "warning: a library warning\n"
        json.loads(result.stdout)


class TestPolicyPaths:
    def _policy(self, folder: Path, path: str, extra: str = "") -> Path:
        policy = folder / "policy.toml"
        policy.write_text(
            "[policy]\ntarget = 0.1\nsimulate = 200\nmax_repeats = 1\n"
            f'[[procedure]]\nsteps = "riffle"\n[[procedure.log]]\npath = "{path}"\n{extra}'
        )
        return policy

    @pytest.mark.parametrize("path", ["../../../../etc/shadow", "/etc/passwd", "../x.csv"])
    def test_paths_outside_the_folder_are_refused(self, tmp_path, path):
        folder = tmp_path / "policies"
        folder.mkdir()
        (tmp_path / "x.csv").write_text("order\n")
        line = error_line("policy", self._policy(folder, path, 'format = "csv"\n'))
        assert "line 8: key 'procedure.log.path'" in line
        assert "outside the policy file's folder" in line and "--allow-outside" in line
        assert "root:" not in line  # the first line of the file is never quoted

    def test_a_symbolic_link_out_of_the_folder_is_refused(self, tmp_path):
        folder = tmp_path / "policies"
        folder.mkdir()
        (folder / "log.csv").symlink_to("/etc/passwd")
        assert "outside the policy" in error_line("policy", self._policy(folder, "log.csv"))

    def test_allowed_on_request_without_quoting_the_file(self, tmp_path):
        folder = tmp_path / "policies"
        folder.mkdir()
        secret = tmp_path / "secret.csv"
        secret.write_text("first-line-secret,other\n1,2\n")
        policy = self._policy(folder, "../secret.csv")
        line = error_line("policy", policy, "--allow-outside")
        assert "missing an 'order' column" in line
        assert "first-line-secret" not in line  # never echo what failed to parse
        assert "(log attached at" in line

    def test_inside_the_folder_works(self, tmp_path):
        folder = tmp_path / "policies"
        (folder / "logs").mkdir(parents=True)
        shutil.copy(TABLE1, folder / "logs" / "t1.csv")
        result = run("policy", self._policy(folder, "logs/t1.csv"), "--json")
        assert result.exit_code == 0, result.output


class TestLastLineOfDefence:
    def test_unexpected_exception(self, monkeypatch):
        import shufflecheck.models

        def broken(*args, **kwargs):
            raise RuntimeError("something\nthe developers did not expect")

        monkeypatch.setattr(shufflecheck.models, "distance_curve", broken)
        result = run("mix", "riffle")
        assert result.exit_code == 3
        lines = result.stderr.strip().splitlines()
        assert len(lines) == 1 and "Traceback" not in result.stderr
        match = re.fullmatch(
            r"error: internal error: RuntimeError: something the developers did not expect "
            r"\(traceback in (\S+); please report it\)",
            lines[0],
        )
        assert match is not None, lines[0]
        saved = Path(match.group(1))
        try:
            text = saved.read_text()
            assert "Traceback (most recent call last)" in text and "in broken" in text
            assert oct(saved.stat().st_mode & 0o777) == "0o600"
        finally:
            saved.unlink()

    def test_memory_error(self, monkeypatch):
        import shufflecheck.models

        def hungry(*args, **kwargs):
            raise MemoryError

        monkeypatch.setattr(shufflecheck.models, "distance_curve", hungry)
        result = run("mix", "riffle")
        assert result.exit_code == 3
        assert result.stderr.startswith("error: internal error: out of memory (MemoryError)")
        Path(re.search(r"traceback in (\S+);", result.stderr).group(1)).unlink()

    def test_bad_input_still_exits_two(self):
        assert run("mix", "riffle", "-n", 1).exit_code == 2


def _temporaries(folder: Path) -> list[Path]:
    return [p for p in folder.iterdir() if p.name.endswith((".incomplete", ".replaced"))]


class TestInterruptedWrites:
    """A run stopped mid-write leaves no partial target; a killed run's temporary is
    removed by the next run, and is plainly named a temporary until then."""

    def _simulate(self, folder: Path, signal_file: Path):
        """``simulate riffle --out log.csv`` whose log writer stops for good after its
        first block of decks and says so through ``signal_file`` (outside ``folder``), so
        a signal lands mid-write every time, however fast the machine."""
        code = (
            "import sys, time\n"
            "from pathlib import Path\n"
            "from shufflecheck.records.logs import writer\n"
            "def paused(real):\n"
            "    def write(self, *args, **kwargs):\n"
            "        out = real(self, *args, **kwargs)\n"
            "        self._handle.flush()\n"
            f"        Path({str(signal_file)!r}).write_text('1')\n"
            "        time.sleep(600)\n"
            "        return out\n"
            "    return write\n"
            "writer.LogWriter.write = paused(writer.LogWriter.write)\n"
            "writer.LogWriter.write_composed = paused(writer.LogWriter.write_composed)\n"
            "from shufflecheck.cli import app\n"
            "sys.argv = ['shufflecheck', 'simulate', 'riffle', '--out', 'log.csv',\n"
            "            '--decks', '300000']\n"
            "app()\n"
        )
        return self._start(code, folder)

    @staticmethod
    def _start(code: str, folder: Path):
        """``python -c code`` in ``folder``, as the command line runs."""
        return subprocess.Popen(
            [CLI[0], "-c", code],
            cwd=folder,
            env=ENV,
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            text=True,
        )

    @staticmethod
    def _wait_for(signal_file: Path, process) -> None:
        end = time.monotonic() + 120
        while not signal_file.exists() and process.poll() is None and time.monotonic() < end:
            time.sleep(0.01)
        if not signal_file.exists():
            pytest.fail(f"the run never paused mid-write: {process.stderr.read()}")

    def test_sigterm_cleans_up(self, tmp_path):
        run, signal_file = tmp_path / "run", tmp_path / "paused"
        run.mkdir()
        process = self._simulate(run, signal_file)
        self._wait_for(signal_file, process)
        assert len(_temporaries(run)) == 1  # the log being written
        process.send_signal(signal.SIGTERM)
        assert process.wait(timeout=60) == 128 + signal.SIGTERM
        assert process.stderr.read() == "error: stopped by SIGTERM; no partial output was left\n"
        assert list(run.iterdir()) == []

    def test_sigkill_of_simulate(self, tmp_path):
        run, signal_file = tmp_path / "run", tmp_path / "paused"
        run.mkdir()
        process = self._simulate(run, signal_file)
        self._wait_for(signal_file, process)
        (temporary,) = _temporaries(run)
        assert temporary.stat().st_size > 0  # the first block is in it
        process.kill()
        process.wait(timeout=60)
        assert not (run / "log.csv").exists()  # absent, never partial
        assert temporary.exists() and temporary.name.startswith(".log.csv.")
        assert temporary.name.endswith(".incomplete")  # plainly a temporary
        again = run_cli("simulate", "riffle", "--out", "log.csv", "--decks", 50, cwd=run)
        assert again.returncode == 0, again.stderr
        assert sorted(p.name for p in run.iterdir()) == ["log.csv"]  # cleaned up
        assert len((run / "log.csv").read_text().splitlines()) == 52

    def test_sigkill_of_a_report_run(self, tmp_path):
        # the report is rendered in memory and written in milliseconds: the patched writer
        # stops for good after its second file and says so through a file outside the run's
        # folder, so the kill lands between two files of the report folder every time
        run, signal_file = tmp_path / "run", tmp_path / "two-files-written"
        run.mkdir()
        code = (
            "import sys, time\n"
            "from pathlib import Path\n"
            "from shufflecheck.report import writer\n"
            "real = writer._write_file\n"
            "written = []\n"
            "def slow(path, content):\n"
            "    real(path, content)\n"
            "    written.append(path)\n"
            "    if len(written) == 2:\n"
            f"        Path({str(signal_file)!r}).write_text('2')\n"
            "        time.sleep(600)\n"
            "writer._write_file = slow\n"
            "from shufflecheck.cli import app\n"
            "sys.argv = ['shufflecheck', 'mix', 'riffle', '--report', 'report']\n"
            "app()\n"
        )
        process = self._start(code, run)
        self._wait_for(signal_file, process)
        staging = _temporaries(run)
        assert len(staging) == 1 and staging[0].is_dir()  # the folder being written
        process.kill()
        process.wait(timeout=60)
        assert not (run / "report").exists()  # absent, never partial
        again = run_cli("mix", "riffle", "--report", "report", cwd=run)
        assert again.returncode == 0, again.stderr
        assert sorted(p.name for p in run.iterdir()) == ["report"]  # the temporary is gone
        files = sorted(
            str(p.relative_to(run / "report")) for p in (run / "report").rglob("*") if p.is_file()
        )
        assert files == ["figures/distance.png", "report.html", "report.json", "report.md"]
