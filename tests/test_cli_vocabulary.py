"""One vocabulary (issue 14, names): the option table in docs/, renamed options and keys,
--repeat read one way, --version, help without parser spellings, --plot and --report on
the commands that have a figure or a report, the demo's own folder, and closed pipes."""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

from shufflecheck.cli import app
from shufflecheck.cli._app import RENAMED, check_report_folder
from shufflecheck.cli.vocabulary import (
    CONCEPTS,
    OPTIONS,
    command_options,
    key_table,
    option_table,
    vocabulary_problems,
)
from shufflecheck.common.errors import InputError
from shufflecheck.common.files import OWNER_FILE
from shufflecheck.common.version import __version__
from shufflecheck.records.logs.reference import Reference

from ._cli import command_json, one_line_error, run

ROOT = Path(__file__).resolve().parents[1]
DOCS = ROOT / "docs" / "options.md"
PNG = b"\x89PNG\r\n\x1a\n"


def _all_commands():
    import typer

    def walk(command, path):
        yield path, command
        if hasattr(command, "list_commands"):
            for name in command.list_commands(None):
                yield from walk(command.get_command(None, name), [*path, name])

    return list(walk(typer.main.get_command(app), []))


class TestOptionTable:
    def test_docs_table_is_the_generated_one(self):
        text = DOCS.read_text(encoding="utf-8")
        assert option_table() in text
        assert key_table() in text

    def test_linked_from_the_readmes(self):
        assert "options.md" in (ROOT / "docs" / "README.md").read_text(encoding="utf-8")
        assert "docs/options.md" in (ROOT / "README.md").read_text(encoding="utf-8")

    def test_one_meaning_per_name_and_one_name_per_idea(self):
        assert vocabulary_problems() == []

    def test_the_check_finds_an_undeclared_option(self, monkeypatch):
        monkeypatch.delitem(OPTIONS, "--simulate")
        assert "option --simulate has no declared meaning in OPTIONS" in vocabulary_problems()

    def test_the_check_finds_one_idea_under_two_names(self, monkeypatch):
        # fit-riffle --samples counts simulated logs; declared as the idea of --simulate,
        # the check must name it
        monkeypatch.setitem(CONCEPTS, "--simulate", r"\bsimulated (decks|shoes|logs)\b")
        assert any(p.startswith("fit-riffle --samples means") for p in vocabulary_problems())

    def test_every_command_option_is_in_the_table(self):
        table = option_table()
        for item in command_options():
            assert f"| `{item['option']}`" in table


class TestRenamed:
    @pytest.mark.parametrize(
        ("command", "old", "new"),
        [(c, old, new) for c, names in RENAMED.items() for old, (new, _) in names.items()],
    )
    def test_old_name_names_the_new_one(self, command, old, new):
        line = one_line_error(run(*command.split(), old, "1"))
        assert line.startswith(f"error: {command} {old} is now {new} (")

    def test_message_as_the_issue_asks(self):
        line = one_line_error(run("assess", "riffle", "--decks", 5))
        assert line == "error: assess --decks is now --simulate (simulated decks)"

    @pytest.mark.parametrize(
        ("body", "line", "fragment"),
        [
            (
                '[policy]\ntarget = 0.1\ndecks = 200\n[[procedure]]\nsteps = "riffle"\n',
                3,
                "key 'policy.decks': 'decks' is now 'simulate' (simulated decks per procedure)",
            ),
            (
                '[policy]\ntarget = 0.1\n[[procedure]]\nsteps = "riffle"\ndecks = 6\n',
                5,
                "key 'procedure.decks': 'decks' is now 'packs' (packs in a shoe",
            ),
        ],
    )
    def test_old_policy_keys(self, tmp_path, body, line, fragment):
        path = tmp_path / "policy.toml"
        path.write_text(body)
        message = one_line_error(run("policy", path))
        assert f"{path} line {line}: {fragment}" in message

    def test_old_procedure_file_key(self, tmp_path):
        path = tmp_path / "shoe.toml"
        path.write_text('name = "shoe"\ndecks = 6\nsteps = "riffle"\n')
        message = one_line_error(run("assess", path, "-r", 1, "--simulate", 100))
        assert f"{path} line 2: key 'decks': 'decks' is now 'packs'" in message

    def test_new_keys_are_read(self, tmp_path):
        path = tmp_path / "policy.toml"
        path.write_text(
            "[policy]\ntarget = 0.5\nsimulate = 200\nmax_repeats = 1\n"
            '[[procedure]]\nsteps = "riffle"\npacks = 2\n'
        )
        data = command_json("policy", path)
        assert data["policy"]["simulated_decks"] == 200
        assert data["procedures"][0]["cards"] == 104


class TestRepeat:
    def test_assess_range(self):
        data = command_json("assess", "riffle", "-r", "4-6", "--simulate", 200)
        assert [row["repeats"] for row in data["rows"]] == [4, 5, 6]
        # exact values for ideal riffles: 2^r-shuffles (Bayer & Diaconis 1992, Table 1 TV
        # 1.000, 0.924, 0.614 for r = 4, 5, 6)
        tv = [round(row["exact"]["total_variation"], 3) for row in data["rows"]]
        assert tv == [1.0, 0.924, 0.614]

    def test_assess_exactly_r_and_the_default(self):
        assert [
            r["repeats"]
            for r in command_json("assess", "riffle", "-r", 3, "--simulate", 100)["rows"]
        ] == [3]
        assert [
            r["repeats"] for r in command_json("assess", "riffle", "--simulate", 100)["rows"]
        ] == list(range(1, 11))

    @pytest.mark.parametrize("command", ["assess", "power"])
    @pytest.mark.parametrize(
        ("value", "fragment"),
        [
            ("4-x", "--repeat must be a count like 5 or a range like 4-8, got '4-x'"),
            ("x", "--repeat must be a count like 5 or a range like 4-8, got 'x'"),
            ("6-4", "with low <= high, got '6-4'"),
            ("0", "--repeat must be an integer from 1 to"),
        ],
    )
    def test_one_parser_one_wording(self, command, value, fragment):
        line = one_line_error(run(command, "riffle", "-r", value))
        assert fragment in line
        assert "Invalid value" not in line and "validation" not in line.lower()

    def test_simulate_refuses_a_range(self, tmp_path):
        out = tmp_path / "log.csv"
        line = one_line_error(run("simulate", "riffle", "--out", out, "-r", "2-3"))
        assert "--repeat takes one count R here (each deck is shuffled exactly R times)" in line
        assert not out.exists()

    def test_simulate_exactly_r(self, tmp_path):
        out = tmp_path / "log.csv"
        data = command_json("simulate", "riffle", "--out", out, "-r", 3, "--decks", 5)
        assert data["repeats"] == 3


class TestHelp:
    def test_version(self):
        result = run("--version")
        assert result.exit_code == 0
        assert result.stdout.strip() == f"shufflecheck {__version__}"

    @pytest.mark.parametrize(
        "path", [p for p, _ in _all_commands()], ids=lambda p: " ".join(p) or "top"
    )
    def test_no_parser_spellings(self, path):
        result = run(*path, "--help")
        assert result.exit_code == 0, result.output
        text = result.stdout
        for spelling in ("int range", "x>=", "--no-", "<str>", "[default: no-", "{"):
            assert spelling not in text, (path, spelling)

    def test_seed(self):
        text = run("assess", "--help").stdout
        assert re.search(r"--seed <int>\s+Random seed, 0 or more", text)
        line = one_line_error(run("assess", "riffle", "--seed", -1))
        assert line == "error: --seed must be an integer, 0 or more, got -1"

    def test_audit_lists_every_reference_choice(self):
        lines = [line.strip() for line in run("audit", "--help").stdout.splitlines()]
        for keyword in Reference.KEYWORDS:
            assert any(line.startswith(f"{keyword}: ") for line in lines), keyword
        assert any(line.startswith("FILE: ") for line in lines)

    def test_the_reader_takes_every_listed_keyword(self):
        for keyword in Reference.KEYWORDS:
            found = Reference.parse(keyword.replace("NAME", "before"))
            assert found.kind in ("previous", "first", "order", "column", "pairs")
        with pytest.raises(InputError, match="is not previous, first, deck, column:NAME, pairs"):
            Reference.parse("nonsense")


class TestLabelsHint:
    def test_command_line_spelling(self, tmp_path):
        log = tmp_path / "ints.csv"
        log.write_text("order\n1 2 3 4\n2 1 3 4\n")
        line = one_line_error(run("audit", log))
        assert "(integer labels need --labels int)" in line
        assert "labels='int'" not in line

    def test_python_spelling(self):
        from shufflecheck.records.cards import STANDARD_52

        with pytest.raises(InputError, match=r"integer labels need labels='int'") as caught:
            STANDARD_52.label("12")
        assert "--" not in str(caught.value)


@pytest.fixture(scope="module")
def small_log(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("log")
    log = folder / "log.csv"
    assert run("simulate", "riffle x3", "--out", log, "--decks", 60).exit_code == 0
    return log


class TestPlot:
    def test_audit(self, small_log, tmp_path):
        target = tmp_path / "p.png"
        result = run("audit", small_log, "--plot", target)
        assert result.exit_code == 0, result.output
        assert target.read_bytes()[:8] == PNG
        again = one_line_error(run("audit", small_log, "--plot", target))
        assert "exists; pass --force" in again
        assert "is the log itself" in one_line_error(run("audit", small_log, "--plot", small_log))

    def test_policy(self, tmp_path):
        path = tmp_path / "policy.toml"
        path.write_text(
            "[policy]\ntarget = 0.5\nsimulate = 200\nmax_repeats = 2\n"
            '[[procedure]]\nsteps = "riffle"\n'
        )
        target = tmp_path / "policy.png"
        result = run("policy", path, "--plot", target)
        assert result.exit_code == 0, result.output
        assert target.read_bytes()[:8] == PNG
        assert "it is a file the policy reads" in one_line_error(
            run("policy", path, "--plot", path, "--force")
        )

    def test_track(self, tmp_path):
        target = tmp_path / "track.png"
        result = run("track", "riffle x4", "--simulate", 200, "--plot", target)
        assert result.exit_code == 0, result.output
        assert target.read_bytes()[:8] == PNG


class TestReportFolders:
    def test_spectrum_report(self, tmp_path):
        folder = tmp_path / "spectrum"
        result = run("spectrum", "riffle", "-n", 6, "--report", folder)
        assert result.exit_code == 0, result.output
        data = json.loads((folder / "report.json").read_text(encoding="utf-8"))
        # the riffle's multiplicities are the Stirling numbers of the first kind c(6, k)
        # (OEIS A132393 row 6: 120, 274, 225, 85, 15, 1), summing to 6! = 720
        multiplicities = [r["multiplicity"] for r in data["data"]["rows"]]
        assert multiplicities == [1, 15, 85, 225, 274, 120]
        assert "Stirling" in (folder / "report.md").read_text(encoding="utf-8")

    def test_characters_takes_none(self):
        result = run("characters", 4, "--report", "x")
        assert result.exit_code == 2 and "No such option: --report" in result.stderr

    def test_the_demo_refuses_a_folder_it_did_not_write(self, tmp_path):
        folder = tmp_path / "mine"
        folder.mkdir()
        (folder / "notes.txt").write_text("keep me")
        line = one_line_error(run("demo", "--report", folder))
        assert line == (
            f"error: report folder {folder} exists and was not written by the demo; pass "
            "--force to replace it"
        )
        assert (folder / "notes.txt").read_text() == "keep me"

    def test_an_owned_folder_is_replaced_without_force(self, tmp_path):
        from shufflecheck.report.document import MethodNote, Report, Section
        from shufflecheck.report.provenance import collect_provenance
        from shufflecheck.report.writer import write_report

        report = Report(
            title="t",
            question="q?",
            answer=("a",),
            reproducibility=collect_provenance(),
            sections=(Section("s", paragraphs=("p",)),),
            methods=(MethodNote("x", "exact", "m", ("a source",)),),
        )
        folder = tmp_path / "demo"
        write_report(report, folder, owner="demo")
        check_report_folder(folder, force=False, owner="demo")  # no error
        write_report(report, folder, owner="demo")  # replaced, no force
        assert (folder / OWNER_FILE).read_text() == "demo\n"
        with pytest.raises(InputError, match="exists; pass force"):
            write_report(report, folder)  # without the owner: force needed
        with pytest.raises(InputError, match="not written by the audit"):
            check_report_folder(folder, force=False, owner="audit")


def _pipe_env() -> dict[str, str]:
    env = dict(os.environ, OMP_NUM_THREADS="1", OPENBLAS_NUM_THREADS="1")
    env["PYTHONPATH"] = os.pathsep.join([str(ROOT), env.get("PYTHONPATH", "")])
    return env


class TestClosedPipe:
    def test_head_after_the_first_line(self, tmp_path):
        # far more output than a pipe holds: the writes after the reader has gone fail
        # (EPIPE), which is a normal end
        child = subprocess.Popen(
            [sys.executable, "-m", "shufflecheck", "spectrum", "riffle", "-n", "1000"],
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            cwd=tmp_path,
            env=_pipe_env(),
        )
        assert child.stdout is not None and child.stderr is not None
        first = child.stdout.readline()
        child.stdout.close()
        error = child.stderr.read()
        child.stderr.close()
        assert child.wait(timeout=120) == 0
        assert first.startswith(b"Spectrum of riffle on 1000 cards")
        assert error == b""

    def test_the_issue_command_in_a_shell(self, tmp_path):
        command = (
            f"set -o pipefail; {sys.executable} -m shufflecheck mix riffle --cards 52 "
            "--max-steps 200 | head -1"
        )
        done = subprocess.run(
            ["bash", "-c", command], capture_output=True, cwd=tmp_path, env=_pipe_env()
        )
        assert done.returncode == 0, done.stderr
        assert done.stderr == b""
        assert done.stdout.decode().startswith("Distance to a uniformly random deck: riffle")


@pytest.mark.slow
def test_readme_demo_twice_in_a_fresh_folder(tmp_path):
    """``shufflecheck demo`` (the README's command) run twice in a row: both exit 0."""
    for _ in range(2):
        done = subprocess.run(
            [sys.executable, "-m", "shufflecheck", "demo"],
            capture_output=True,
            cwd=tmp_path,
            env=_pipe_env(),
        )
        assert done.returncode == 0, done.stderr
        assert (tmp_path / "reports" / "demo" / OWNER_FILE).is_file()
