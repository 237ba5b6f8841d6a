"""``shufflecheck fit-riffle`` end to end, and the fitted procedure file in every command
that takes a procedure: assess, power, simulate, and policy files (key ``file``)."""

from __future__ import annotations

import csv
import json
import textwrap
from pathlib import Path

import numpy as np
import pytest

from shufflecheck.models import hand_riffle, riffle
from shufflecheck.models.procedures import load_procedure
from shufflecheck.records.logs import write_log

from ._cli import command_json, one_line_error, run

#: the simulated dealer (invented): tight cuts, clumpy drops
DEALER = "hand-riffle(spread=2.5, clump=1.6)"


@pytest.fixture(scope="module")
def dealer_log(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("riffles")
    log = folder / "dealer.csv"
    result = run("simulate", DEALER, "--decks", 200, "--seed", 3, "--out", log)
    assert result.exit_code == 0, result.output
    return log


def _chain(relative: np.ndarray) -> np.ndarray:
    """Decks as a table records them: each the shuffle ``relative[t]`` of the deck before."""
    out = np.empty((relative.shape[0] + 1, relative.shape[1]), dtype=np.int16)
    out[0] = np.arange(relative.shape[1])
    for t in range(relative.shape[0]):
        out[t + 1] = out[t][relative[t]]
    return out


class TestFit:
    def test_json(self, dealer_log):
        data = command_json("fit-riffle", dealer_log, "--samples", 99)
        assert data["riffles"]["one_riffle"] == 200 and data["riffles"]["not_one_riffle"] == 0
        spread, clump = data["estimates"]["spread"], data["estimates"]["clump"]
        assert spread["kind"] == clump["kind"] == "estimate"
        assert spread["unit"] == "cards" and spread["confidence"] == 0.95
        assert spread["interval"][0] < spread["value"] < spread["interval"][1]
        # 200 riffles pin the parameters to within a few tenths (s.e. about 0.13 and 0.04)
        assert abs(spread["value"] - 2.5) < 0.6 and abs(clump["value"] - 1.6) < 0.2
        assert data["fitted_step"].startswith("hand-riffle(spread=")
        tests = {t["name"]: t for t in data["ideal_riffle"]["tests"]}
        assert set(tests) == {
            "cut-centre",
            "cut-spread",
            "packets",
            "packet-sizes",
            "likelihood-ratio",
        }
        assert tests["packets"]["flagged"] and tests["packets"]["method"] == "exact"
        assert tests["likelihood-ratio"]["method"] == "monte-carlo"
        assert data["packet_lengths"]["ideal"]["kind"] == "exact"
        assert data["packet_lengths"]["fitted"]["kind"] == "estimate"

    def test_terminal_output(self, dealer_log):
        result = run("fit-riffle", dealer_log, "--samples", 0)
        assert result.exit_code == 0, result.output
        assert "Fitted step: hand-riffle(spread=" in result.stdout
        assert "samples 0: only the exact tests were run" in result.stdout
        assert "not a certification" in result.stdout

    def test_integer_labels(self, tmp_path):
        log = tmp_path / "twenty.csv"
        made = run("simulate", "hand-riffle(clump=2)", "--cards", 20, "--decks", 300, "--out", log)
        assert made.exit_code == 0, made.output
        data = command_json("fit-riffle", log, "--labels", "int", "--cards", 20, "--samples", 0)
        assert data["cards"] == 20
        assert abs(data["estimates"]["clump"]["value"] - 2.0) < 0.4


class TestRowsThatAreNotOneRiffle:
    @pytest.fixture
    def mixed_log(self, tmp_path) -> tuple[Path, list[int]]:
        rng = np.random.default_rng(7)
        relative = hand_riffle.sample(60, 52, rng=rng, spread=3.0, clump=1.3)
        twice = [4, 9, 30]  # these decks got two riffles
        relative[twice] = riffle.sample(len(twice), 52, 2, rng=rng)
        relative[20] = np.arange(52)  # an unchanged deck (recorded twice?)
        log = tmp_path / "mixed.csv"
        write_log(log, _chain(relative))
        # CSV rows: header 1, the starting deck 2, deck t (0-based relative) at row t + 3
        return log, [t + 3 for t in twice]

    def test_reported_with_rows(self, mixed_log, tmp_path):
        log, rows = mixed_log
        out = tmp_path / "not-riffles.csv"
        data = command_json("fit-riffle", log, "--samples", 0, "--not-riffles", out)
        listed = data["riffles"]["not_one_riffle_rows"]
        assert [r["row"] for r in listed] == rows
        assert all(r["rising_sequences"] > 2 for r in listed)
        assert [r["reference_row"] for r in listed] == [r - 1 for r in rows]
        assert data["riffles"]["one_riffle"] == 57 and data["riffles"]["unchanged"] == 1
        assert data["riffles"]["unchanged_rows"] == [23]
        with out.open() as handle:
            table = list(csv.DictReader(handle))
        assert [int(r["row"]) for r in table] == rows
        assert any("not one riffle" in note for note in data["notes"])

    def test_terminal_lists_rows(self, mixed_log):
        log, rows = mixed_log
        result = run("fit-riffle", log, "--samples", 0)
        assert result.exit_code == 0, result.output
        assert f"not one riffle (not used): rows {', '.join(map(str, rows))}" in result.stdout

    def test_log_of_full_shuffles_refused(self, tmp_path):
        log = tmp_path / "shuffled.csv"
        decks = np.array([np.random.default_rng(k).permutation(52) for k in range(30)])
        write_log(log, decks)
        line = one_line_error(run("fit-riffle", log))
        assert "no deck is one riffle of the deck before it" in line and "e.g. rows 3," in line


class TestProcedureFile:
    def test_written_and_read_back(self, dealer_log, tmp_path):
        out = tmp_path / "dealer.toml"
        data = command_json("fit-riffle", dealer_log, "--samples", 0, "--out", out)
        assert data["procedure_file"] == str(out)
        procedure = load_procedure(out)
        assert procedure.describe() == data["fitted_step"] == data["procedure"]
        assert procedure.cards == 52
        text = out.read_text()
        assert "# spread: " in text and "SHA-256" in text and "not a" in text

    def test_refuses_to_overwrite(self, dealer_log, tmp_path):
        out = tmp_path / "dealer.toml"
        out.write_text("kept\n")
        line = one_line_error(run("fit-riffle", dealer_log, "--out", out))
        assert "exists; pass --force" in line
        assert out.read_text() == "kept\n"
        forced = run("fit-riffle", dealer_log, "--samples", 0, "--out", out, "--force")
        assert forced.exit_code == 0, forced.output
        assert out.read_text().startswith("# A dealing procedure")

    def test_house_procedure(self, dealer_log, tmp_path):
        out = tmp_path / "house.toml"
        data = command_json(
            "fit-riffle",
            dealer_log,
            "--samples",
            0,
            "--out",
            out,
            "--procedure",
            "riffle x3, strip(packets=5), riffle, cut",
            "--name",
            "Dealer 14 (invented)",
        )
        step = data["fitted_step"]
        assert data["procedure"] == f"{step} x3, strip, {step}, cut"
        procedure = load_procedure(out)
        assert procedure.describe() == data["procedure"]
        assert procedure.name == "Dealer 14 (invented)"

    def test_house_procedure_without_riffle(self, dealer_log):
        line = one_line_error(
            run("fit-riffle", dealer_log, "--samples", 0, "--procedure", "strip, cut")
        )
        assert "has no riffle for the fitted riffle to replace" in line

    @pytest.mark.parametrize(
        ("args", "wanted"),
        [
            (("--confidence", 1.5), "--confidence must lie in (0, 1)"),
            (("--samples", 5), "--samples must be 0 (exact tests only) or at least 19"),
            (("--out", "fit.txt"), "must end in .toml"),
            (("--alpha", 0), "--alpha must lie in (0, 1)"),
        ],
    )
    def test_bad_options(self, dealer_log, args, wanted):
        assert wanted in one_line_error(run("fit-riffle", dealer_log, *args))


class TestFittedFileInOtherCommands:
    @pytest.fixture(scope="class")
    @classmethod
    def fitted(cls, dealer_log, tmp_path_factory) -> Path:
        out = tmp_path_factory.mktemp("fitted") / "dealer.toml"
        data = command_json(
            "fit-riffle", dealer_log, "--samples", 0, "--out", out, "--procedure", "riffle x2, cut"
        )
        assert out.exists(), data
        return out

    def test_assess(self, fitted):
        data = command_json("assess", fitted, "--repeat", "1-2", "--simulate", 2000)
        assert data["procedure"].startswith("hand-riffle(spread=")
        assert len(data["rows"]) == 2

    def test_power(self, fitted):
        data = command_json("power", fitted, "--simulate", 400)
        assert data["procedure"].startswith("hand-riffle(spread=")

    def test_simulate(self, fitted, tmp_path):
        out = tmp_path / "sim.csv"
        data = command_json("simulate", fitted, "--decks", 20, "--out", out)
        assert data["procedure"].startswith("hand-riffle(spread=") and out.exists()

    def test_policy_file_key(self, fitted, tmp_path):
        policy = tmp_path / "policy.toml"
        policy.write_text(
            textwrap.dedent(
                f"""
                [policy]
                target = 0.1
                simulate = 500
                max_repeats = 2

                [[procedure]]
                file = "{fitted.as_posix()}"
                house = 1
                """
            )
        )
        # the fitted file lies outside the policy's folder (issue 16: allowed on request)
        data = command_json("policy", policy, "--allow-outside")
        (procedure,) = data["procedures"]
        assert procedure["procedure"].startswith("hand-riffle(spread=")
        assert procedure["name"] == load_procedure(fitted).name


class TestPolicyFileKey:
    def _policy(self, folder: Path, body: str) -> Path:
        path = folder / "p.toml"
        path.write_text("[policy]\ntarget = 0.1\nsimulate = 200\nmax_repeats = 1\n" + body)
        return path

    def test_relative_path_and_cards(self, tmp_path):
        (tmp_path / "procs").mkdir()
        (tmp_path / "procs" / "small.toml").write_text(
            'name = "Small"\ncards = 12\nsteps = "riffle x2"\n'
        )
        data = command_json(
            "policy", self._policy(tmp_path, '[[procedure]]\nfile = "procs/small.toml"\n')
        )
        (procedure,) = data["procedures"]
        assert procedure["cards"] == 12 and procedure["name"] == "Small"

    @pytest.mark.parametrize(
        ("body", "wanted"),
        [
            (
                '[[procedure]]\nfile = "x.toml"\nsteps = "riffle"\n',
                "key 'procedure.file': give steps or file, not both",
            ),
            ('[[procedure]]\nfile = "missing.toml"\n', "procedure file 'missing.toml' not found"),
            ('[[procedure]]\nfile = "bad.toml"\n', "bad.toml line 1: key 'steps': unknown step"),
        ],
    )
    def test_errors(self, tmp_path, body, wanted):
        (tmp_path / "bad.toml").write_text('steps = "rifle"\n')
        (tmp_path / "x.toml").write_text('steps = "riffle"\n')
        line = one_line_error(run("policy", self._policy(tmp_path, body)))
        assert wanted in line and "p.toml line 6" in line


class TestReport:
    def test_report_and_plot(self, dealer_log, tmp_path):
        folder = tmp_path / "report"
        plot = tmp_path / "packets.png"
        out = tmp_path / "d.toml"
        result = run(
            "fit-riffle",
            dealer_log,
            "--samples",
            49,
            "--report",
            folder,
            "--plot",
            plot,
            "--out",
            out,
        )
        assert result.exit_code == 0, result.output
        assert plot.read_bytes().startswith(b"\x89PNG")
        assert (folder / "figures" / "packets.png").exists()
        assert (folder / "figures" / "cuts.png").exists()
        report = json.loads((folder / "report.json").read_text())
        assert report["data"]["procedure_file"] == str(out)
        markdown = (folder / "report.md").read_text()
        assert "Fitted hand riffle" in markdown and "Tests of the ideal riffle" in markdown
        again = run("fit-riffle", dealer_log, "--samples", 0, "--report", folder)
        assert "exists; pass --force" in one_line_error(again)


class TestBeforeAfterPairs:
    def test_pairs_through_by(self, tmp_path):
        # a lab records the deck before and after each riffle, a pair per riffle: with
        # --by pair, each 'after' row is compared with the 'before' row of its own pair
        rng = np.random.default_rng(21)
        relative = hand_riffle.sample(150, 52, rng=rng, spread=3.0, clump=1.4)
        before = np.array([rng.permutation(52) for _ in range(150)], dtype=np.int16)
        after = np.take_along_axis(before, relative.astype(np.intp), axis=1)
        decks = np.empty((300, 52), dtype=np.int16)
        decks[0::2], decks[1::2] = before, after
        log = tmp_path / "pairs.csv"
        write_log(log, decks, columns={"pair": np.repeat(np.arange(150), 2)})
        data = command_json("fit-riffle", log, "--by", "pair", "--samples", 0)
        assert data["riffles"]["one_riffle"] == 150 and data["riffles"]["not_one_riffle"] == 0
        assert data["log"]["reference_only"] == 150
        assert abs(data["estimates"]["clump"]["value"] - 1.4) < 0.2
        # without --by, every 'before' row is compared with the 'after' row above it
        loose = command_json("fit-riffle", log, "--samples", 0)
        assert loose["riffles"]["not_one_riffle"] > 100
