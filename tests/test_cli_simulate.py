"""``shufflecheck simulate`` through typer's CliRunner (issue 4): the log it writes, read back
by ``audit``; references, a change of procedure part-way, overwrite protection, and the
sensitivity requirement of issue 5 (4 riffles flagged from 20 decks)."""

from __future__ import annotations

import csv
import hashlib
import json

import pytest

from shufflecheck.records.cards import load_deck

from ._cli import command_json, one_line_error, run

STANDARD = load_deck().cards  # the reference order of the built-in 52-card deck


def simulate(*args: object) -> dict:
    result = run("simulate", *args, "--json")
    assert result.exit_code == 0, result.output
    return json.loads(result.stdout)


def audit_json(*args: object) -> dict:
    return command_json("audit", *args)


def read_orders(path) -> list[list[str]]:
    with open(path, newline="", encoding="utf-8") as handle:
        return [row["order"].split() for row in csv.DictReader(handle)]


def relative(before: list[str], after: list[str]) -> tuple[int, ...]:
    """``source`` with ``after[i] = before[source[i]]`` (the shuffle between two decks)."""
    where = {card: i for i, card in enumerate(before)}
    return tuple(where[card] for card in after)


class TestSimulateLog:
    def test_rows_and_cards(self, tmp_path):
        out = tmp_path / "log.csv"
        summary = simulate("riffle x4", "--decks", 20, "--seed", 3, "--out", out)
        assert summary["rows"] == 21 and summary["decks"] == 20
        assert summary["labels"] == "codes"
        orders = read_orders(out)
        assert len(orders) == 21
        assert orders[0] == list(STANDARD)  # row 1 is the starting (reference) order
        for order in orders:
            assert sorted(order) == sorted(STANDARD)  # every row is an arrangement
        assert len(out.read_text(encoding="utf-8").splitlines()) == 22  # with the header

    def test_audit_reads_it_back(self, tmp_path):
        out = tmp_path / "log.csv"
        simulate("riffle x6", "--decks", 40, "--seed", 2, "--out", out)
        data = audit_json(out)
        assert data["decks"] == 40
        assert data["set_aside"] == 0
        assert data["log"]["decks_read"] == 41
        assert data["log"]["reference_only"] == 1

    def test_jsonl_round_trip(self, tmp_path):
        out = tmp_path / "log.jsonl"
        simulate("riffle x6", "--decks", 10, "--seed", 2, "--out", out)
        lines = out.read_text(encoding="utf-8").splitlines()
        assert len(lines) == 11
        assert json.loads(lines[0])["order"] == list(STANDARD)
        assert audit_json(out)["decks"] == 10

    def test_table_and_time_columns(self, tmp_path):
        out = tmp_path / "log.csv"
        simulate(
            "riffle x7", "--decks", 5, "--out", out, "--table", "Table 9", "--start-time",
            "2026-11-02T18:00", "--every", 90,
        )  # fmt: skip
        with open(out, newline="", encoding="utf-8") as handle:
            rows = list(csv.DictReader(handle))
        assert {row["table"] for row in rows} == {"Table 9"}
        assert rows[0]["recorded_at"] == "2026-11-02T18:00:00"
        assert rows[2]["recorded_at"] == "2026-11-02T18:03:00"  # 2 x 90 s later
        data = audit_json(out, "--time", "recorded_at", "--by", "table")
        assert set(data["groups"]) == {"Table 9"}

    def test_bad_start_time(self, tmp_path):
        result = run("simulate", "riffle", "--out", tmp_path / "x.csv", "--start-time", "teatime")
        assert "--start-time" in one_line_error(result)

    def test_same_seed_same_bytes(self, tmp_path):
        a, b = tmp_path / "a.csv", tmp_path / "b.csv"
        simulate("riffle x3, strip, cut", "--decks", 30, "--seed", 8, "--out", a)
        simulate("riffle x3, strip, cut", "--decks", 30, "--seed", 8, "--out", b)
        assert a.read_bytes() == b.read_bytes()


class TestSimulateReference:
    def test_first(self, tmp_path):
        out = tmp_path / "first.csv"
        summary = simulate("pile(piles=4)", "--decks", 4, "--reference", "first", "--out", out)
        assert summary["reference"] == "first"
        orders = read_orders(out)
        # a pile deal is deterministic: every deck dealt from row 1 comes out the same
        assert orders[1] == orders[2] == orders[3] == orders[4] != orders[0]

    def test_previous(self, tmp_path):
        out = tmp_path / "previous.csv"
        simulate("pile(piles=4)", "--decks", 3, "--out", out)
        orders = read_orders(out)
        # each deck is dealt from the one before: the same shuffle between neighbours, so
        # the decks themselves differ
        step = relative(orders[0], orders[1])
        assert relative(orders[1], orders[2]) == step == relative(orders[2], orders[3])
        assert orders[1] != orders[2]

    def test_audit_with_first(self, tmp_path):
        out = tmp_path / "first.csv"
        simulate("riffle x7", "--decks", 25, "--reference", "first", "--out", out, "--seed", 4)
        data = audit_json(out, "--reference", "first")
        assert data["decks"] == 25
        assert data["log"]["reference_only"] == 1


class TestSimulateChange:
    def test_then_from(self, tmp_path):
        out = tmp_path / "fault.csv"
        summary = simulate(
            "riffle x20", "--then", "pile(piles=4)", "--from", 6, "--decks", 10, "--out", out
        )
        assert summary["change"] == {"from": 6, "procedure": "pile(piles=4)"}
        orders = read_orders(out)
        steps = [relative(orders[t - 1], orders[t]) for t in range(1, 11)]
        # decks 6..10 follow the deterministic pile deal: one and the same shuffle
        assert len(set(steps[5:])) == 1
        assert steps[5] != tuple(range(52))
        # decks 1..5 are 20 riffles: all different and none the pile deal
        assert len(set(steps[:5])) == 5 and steps[5] not in steps[:5]

    def test_terminal_names_the_row(self, tmp_path):
        out = tmp_path / "fault.csv"
        result = run("simulate", "riffle", "--then", "cut", "--from", 6, "--decks", 9, "--out", out)
        assert result.exit_code == 0, result.output
        # deck 6 sits on row 8 of the file (header row 1, starting order row 2)
        assert "From simulated deck 6 (row 8) on" in result.stdout

    @pytest.mark.parametrize(
        ("args", "fragment"),
        [
            (["--then", "cut"], "give --then and --from together"),
            (["--from", 3], "give --then and --from together"),
            (["--then", "cut", "--from", 9], "from 1 to 5"),
            (["--then", "rifle", "--from", 2], "unknown step 'rifle'"),
        ],
    )
    def test_bad_change(self, tmp_path, args, fragment):
        result = run("simulate", "riffle", "--decks", 5, "--out", tmp_path / "x.csv", *args)
        assert fragment in one_line_error(result)
        assert not (tmp_path / "x.csv").exists()


class TestSimulateOverwrite:
    def test_refuses_without_force(self, tmp_path):
        out = tmp_path / "log.csv"
        simulate("riffle x4", "--decks", 5, "--seed", 1, "--out", out)
        before = hashlib.sha256(out.read_bytes()).hexdigest()
        result = run("simulate", "riffle x4", "--decks", 5, "--seed", 2, "--out", out)
        assert "--force" in one_line_error(result)
        assert hashlib.sha256(out.read_bytes()).hexdigest() == before

    def test_replaces_with_force(self, tmp_path):
        out = tmp_path / "log.csv"
        simulate("riffle x4", "--decks", 5, "--seed", 1, "--out", out)
        before = out.read_bytes()
        simulate("riffle x4", "--decks", 5, "--seed", 2, "--out", out, "--force")
        assert out.read_bytes() != before
        assert len(read_orders(out)) == 6


class TestSimulateOtherDecks:
    def test_integer_labels(self, tmp_path):
        out = tmp_path / "ten.csv"
        summary = simulate("riffle x2", "--cards", 10, "--decks", 8, "--out", out)
        assert summary["labels"] == "int (1..n)"
        orders = read_orders(out)
        assert orders[0] == [str(k) for k in range(1, 11)]
        for order in orders:
            assert sorted(map(int, order)) == list(range(1, 11))

    def test_audit_with_a_deck_file(self, tmp_path):
        out = tmp_path / "ten.csv"
        simulate("riffle x2", "--cards", 10, "--decks", 30, "--out", out)
        deck = tmp_path / "ten.toml"
        codes = ", ".join(f'"C{k}"' for k in range(1, 11))
        deck.write_text(f'name = "ten"\ncards = [{codes}]\n', encoding="utf-8")
        data = audit_json(out, "--labels", "int", "--deck", deck)
        assert data["decks"] == 30

    def test_audit_reads_integer_log_of_its_own_size(self, tmp_path):
        out = tmp_path / "ten.csv"
        simulate("riffle x2", "--cards", 10, "--decks", 30, "--out", out)
        data = audit_json(out, "--labels", "int", "--cards", 10)
        assert data["decks"] == 30


class TestSimulateSensitivity:
    def test_four_riffles_flagged_from_20_decks(self, tmp_path):
        out = tmp_path / "four.csv"
        simulate("riffle x4", "--decks", 20, "--seed", 20, "--out", out)
        data = audit_json(out)
        # issue 5: decks made with 4 ideal riffles are flagged from 20 decks
        assert data["decks"] == 20
        assert data["flagged"] is True
        rising = next(t for t in data["tests"] if t["name"] == "rising-sequences")
        assert rising["p_adjusted"] <= data["alpha"]

    def test_well_mixed_not_flagged(self, tmp_path):
        out = tmp_path / "twenty.csv"
        simulate("riffle x20", "--decks", 300, "--seed", 21, "--out", out)
        data = audit_json(out)
        # TV after 20 riffles is below 3e-6 (exact); the battery controls false alarms at
        # alpha = 0.01, so a fixed-seed log of such decks is not flagged
        assert data["decks"] == 300
        assert data["flagged"] is False
