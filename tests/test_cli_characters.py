"""``shufflecheck characters`` and ``spectrum`` through typer's CliRunner (JSON contracts)."""

from __future__ import annotations

import csv
import json
import math

from typer.testing import CliRunner

from shufflecheck.cli import app

runner = CliRunner()


def run(*args: str):
    return runner.invoke(app, list(args))


class TestCharactersCommand:
    def test_table_json_contract(self):
        result = run("characters", "4", "--json")
        assert result.exit_code == 0, result.output
        data = json.loads(result.stdout)
        assert set(data) == {"n", "shapes", "classes", "values"}
        assert data["shapes"][1] == [3, 1]
        assert data["values"][1] == [-1, 0, -1, 1, 3]

    def test_single_value_json_contract(self):
        result = run("characters", "7", "--shape", "4,2,1", "--class", "3,3,1", "--json")
        assert result.exit_code == 0, result.output
        data = json.loads(result.stdout)
        # chi^(4,2,1)(3,3,1) = -1: the S_7 table is compared entry by entry with the Frobenius
        # formula (sympy) and with GAP's CharacterTable("Symmetric", 7) in test_characters.py
        assert data == {"n": 7, "shape": [4, 2, 1], "class": [3, 3, 1], "value": -1}

    def test_terminal_table(self):
        result = run("characters", "3")
        assert result.exit_code == 0
        assert "Character table of S_3" in result.stdout

    def test_csv(self, tmp_path):
        target = tmp_path / "s9.csv"
        result = run("characters", "9", "--csv", str(target))
        assert result.exit_code == 0, result.output
        with open(target, newline="") as handle:
            rows = list(csv.reader(handle))
        assert len(rows) == 31  # header + p(9) = 30 shapes
        assert rows[1][0] == "9" and set(rows[1][1:]) == {"1"}

    def test_bad_input_exit_2(self):
        for args in (
            ["characters", "4", "--shape", "3,2", "--class", "4"],
            ["characters", "4", "--shape", "1,3", "--class", "4"],
            ["characters", "4", "--shape", "3,0,1", "--class", "4"],
            ["characters", "4", "--shape", "-3,1", "--class", "4"],
            ["characters", "4", "--shape", "3,1"],
            ["characters", "60"],
        ):
            result = run(*args)
            assert result.exit_code == 2, (args, result.output)
            assert result.stderr.startswith("error: ")
            assert len(result.stderr.strip().splitlines()) == 1

    def test_refusal_names_estimate(self):
        result = run("characters", "60")
        assert "entries, about" in result.stderr and "GB" in result.stderr


class TestSpectrumCommand:
    def test_transposition_json_contract(self):
        result = run("spectrum", "transposition", "--cards", "6", "--json")
        assert result.exit_code == 0, result.output
        data = json.loads(result.stdout)
        assert data["model"] == "transposition" and data["cards"] == 6
        assert set(data["rows"][0]) >= {"eigenvalue", "multiplicity", "shapes"}
        assert sum(r["multiplicity"] for r in data["rows"]) == math.factorial(6)
        assert data["rows"][0]["eigenvalue"] == 1.0 and data["rows"][0]["shapes"] == [[6]]
        # (5,1): 1/n + (n-1)/n * (n-3)/(n-1) = (n-2)/n  (content formula)
        assert data["rows"][1]["eigenvalue"] == 4 / 6

    def test_riffle_and_top_to_random(self):
        riffle = json.loads(run("spectrum", "riffle", "--cards", "5", "--json").stdout)
        # Bayer & Diaconis (1992), Cor. 3: eigenvalues of the riffle are 2^-i, i = 0..n-1
        assert [r["eigenvalue"] for r in riffle["rows"]] == [1, 0.5, 0.25, 0.125, 0.0625]
        ttr = json.loads(run("spectrum", "top-to-random", "--cards", "5", "--json").stdout)
        assert sum(r["multiplicity"] for r in ttr["rows"]) == 120
        # Diaconis, Fill & Pitman (1992): eigenvalue j/n has the multiplicity of permutations
        # with j fixed points, none for j = n-1
        assert 0.8 not in [r["eigenvalue"] for r in ttr["rows"]]

    def test_terminal(self):
        result = run("spectrum", "transposition", "--cards", "8")
        assert result.exit_code == 0
        assert "distinct eigenvalues" in result.stdout

    def test_bad_input(self):
        assert run("spectrum", "transposition", "--cards", "1").exit_code == 2
        assert run("spectrum", "transposition", "--cards", "5", "--hold", "1.5").exit_code == 2
        assert run("spectrum", "riffle", "--cards", "5", "--hands", "1").exit_code == 2
        assert run("spectrum", "wash", "--cards", "5").exit_code == 2
