"""``shufflecheck policy`` through typer's CliRunner (issue 6): minimums against the published
riffle table, house standings, attached logs, and file/line/key errors for bad files."""

from __future__ import annotations

import textwrap
from pathlib import Path

import pytest

from ._cli import command_json, one_line_error, run


def policy_json(path: Path) -> dict:
    return command_json("policy", path)


def write(folder: Path, text: str, name: str = "policy.toml") -> Path:
    path = folder / name
    path.write_text(textwrap.dedent(text).lstrip(), encoding="utf-8")
    return path


def riffle_policy(folder: Path, target: float, house: int = 7) -> Path:
    """Ideal riffles only: the repeated procedure is exact, the Monte Carlo part tiny."""
    return write(
        folder,
        f"""
        [policy]
        title = "Riffle yardstick (invented)"
        metric = "total-variation"
        target = {target}
        simulate = 200
        seed = 5
        max_repeats = 12

        [[procedure]]
        name = "Ideal riffles"
        cards = 52
        steps = "riffle"
        house = {house}
        """,
        f"riffle-{target}.toml",
    )


class TestPolicyMinimums:
    def test_published_table_at_01(self, tmp_path):
        data = policy_json(riffle_policy(tmp_path, 0.1))
        (procedure,) = data["procedures"]
        # Bayer & Diaconis (1992), table of variation distance for 52 cards: TV <= 0.1 is
        # first reached at 9 riffles (0.167 at 8, 0.085 at 9)
        assert procedure["minimum"] == 9
        assert procedure["kind"] == "exact"

    def test_published_table_at_05(self, tmp_path):
        data = policy_json(riffle_policy(tmp_path, 0.5))
        (procedure,) = data["procedures"]
        # Bayer & Diaconis (1992): TV <= 0.5 first reached at 7 riffles (0.614 at 6, 0.334
        # at 7)
        assert procedure["minimum"] == 7
        assert procedure["kind"] == "exact"

    def test_failed_house_count_is_a_finding(self, tmp_path):
        path = riffle_policy(tmp_path, 0.1, house=7)
        result = run("policy", path)
        assert result.exit_code == 0, result.output  # a failed policy is a finding
        data = policy_json(path)
        (procedure,) = data["procedures"]
        # TV after 7 riffles is 0.334 > 0.1 (Bayer & Diaconis 1992)
        assert procedure["standing"] == "fails" and procedure["standing_how"] == "exact"
        assert data["all_house_counts_meet_target"] is False
        assert "fails (exact)" in result.stdout

    def test_house_count_that_meets(self, tmp_path):
        data = policy_json(riffle_policy(tmp_path, 0.1, house=10))
        (procedure,) = data["procedures"]
        assert procedure["standing"] == "meets"  # 0.043 after 10 (Bayer & Diaconis 1992)
        assert data["all_house_counts_meet_target"] is True

    def test_bound_certifies_a_mixed_procedure(self, tmp_path):
        path = write(
            tmp_path,
            """
            [policy]
            target = 0.1
            simulate = 500
            max_repeats = 2

            [[procedure]]
            name = "Strip then nine riffles"
            steps = "strip, riffle x9"
            """,
        )
        (procedure,) = policy_json(path)["procedures"]
        # the exactly analysed block riffle x9 has TV 0.085 (Bayer & Diaconis 1992) and a
        # further step never increases TV: one repetition is certified by a rigorous bound
        assert procedure["minimum"] == 1
        assert procedure["kind"] == "bound"

    def test_estimate_only_is_not_certified(self, tmp_path):
        path = write(
            tmp_path,
            """
            [policy]
            target = 0.1
            simulate = 500
            max_repeats = 2

            [[procedure]]
            name = "Strips only"
            steps = "strip x3"
            """,
        )
        (procedure,) = policy_json(path)["procedures"]
        # no step of this procedure has an exact law: nothing can certify the target
        assert procedure["minimum"] is None
        assert procedure["kind"] == "estimate"


@pytest.fixture(scope="module")
def policy_with_logs(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("policy-logs")
    (folder / "logs").mkdir()
    for name, procedure, decks, seed in (
        ("under.csv", "riffle x4", 30, 41),
        ("sound.csv", "riffle x20", 150, 42),
    ):
        result = run(
            "simulate", procedure, "--decks", decks, "--seed", seed, "--out", folder / "logs" / name
        )
        assert result.exit_code == 0, result.output
    return write(
        folder,
        """
        [policy]
        target = 0.1
        simulate = 200
        max_repeats = 10

        [[procedure]]
        name = "Ideal riffles"
        steps = "riffle"
        house = 4

          [[procedure.log]]
          table = "Table A"
          path = "logs/under.csv"

          [[procedure.log]]
          table = "Table B"
          path = "logs/sound.csv"
        """,
    )


class TestPolicyLogs:
    def test_audit_verdicts_in_json(self, policy_with_logs):
        (procedure,) = policy_json(policy_with_logs)["procedures"]
        logs = {log["table"]: log for log in procedure["logs"]}
        assert set(logs) == {"Table A", "Table B"}
        assert logs["Table A"]["flagged"] is True  # 4 riffles (issue 5 sensitivity case)
        assert logs["Table A"]["decks"] == 30
        assert logs["Table B"]["flagged"] is False  # 20 riffles, TV < 3e-6 (exact)
        assert logs["Table B"]["decks"] == 150

    def test_audit_verdicts_in_terminal(self, policy_with_logs):
        result = run("policy", policy_with_logs)
        assert result.exit_code == 0, result.output
        assert "log Table A: FLAGGED" in result.stdout
        assert "log Table B: no test flags" in result.stdout


class TestReportProgress:
    def test_one_unit_per_figure_drawn(self, policy_with_logs, tmp_path):
        # the report's progress bar counts the figures before drawing them: the count
        # must equal the figures drawn (and written), each reported once as it is drawn
        from shufflecheck.analyses.policy import evaluate_policy, load_policy
        from shufflecheck.report.builders.policy import policy_figure_count, policy_report
        from shufflecheck.report.figures import figure_progress
        from shufflecheck.report.provenance import collect_provenance

        loaded = load_policy(policy_with_logs)
        result = evaluate_policy(loaded)
        drawn = []
        with figure_progress(lambda: drawn.append(1)):
            document = policy_report(
                result, payload={}, provenance=collect_provenance(loaded.inputs)
            )
        figures = [f for _, _, f in document.numbered_figures()]
        # the policy chart, three per log, and the since-when chart of the flagged Table A
        assert policy_figure_count(result) == len(figures) == len(drawn) == 8
        assert policy_figure_count(result, figures=False) == 0

    def test_bar_outside_a_terminal_is_silent(self, policy_with_logs, tmp_path):
        result = run("policy", policy_with_logs, "--report", tmp_path / "r")
        assert result.exit_code == 0, result.output
        assert "drawing the report" not in result.output
        assert len(list((tmp_path / "r" / "figures").iterdir())) == 8


#: (policy text, line number, dotted key, text in the message)
BAD_POLICIES = [
    pytest.param(
        """
        [policy]
        target = 0.1
        colour = "red"

        [[procedure]]
        steps = "riffle"
        """,
        3,
        "policy.colour",
        "unknown key",
        id="unknown-key",
    ),
    pytest.param(
        """
        [policy]
        target = 0.1

        [[procedure]]
        name = "a"
        steps = "riffle"
        shuffles = 3
        """,
        7,
        "procedure.shuffles",
        "unknown key",
        id="unknown-procedure-key",
    ),
    pytest.param(
        """
        [policy]
        target = 0.1
        simulate = "many"

        [[procedure]]
        steps = "riffle"
        """,
        3,
        "policy.simulate",
        "must be an integer",
        id="wrong-type-int",
    ),
    pytest.param(
        """
        [policy]
        target = "0.1"

        [[procedure]]
        steps = "riffle"
        """,
        2,
        "policy.target",
        "must be a number",
        id="wrong-type-number",
    ),
    pytest.param(
        """
        [policy]
        target = 0.1

        [[procedure]]
        name = "a"
        steps = "riffle"

        [[procedure]]
        name = "b"
        steps = "riffle"
        house = "seven"
        """,
        11,
        "procedure.house",
        "must be an integer",
        id="wrong-type-second-procedure",
    ),
    pytest.param(
        """
        [policy]
        target = 0.1

        [[procedure]]
        name = "a"
        steps = "riffle x3, strp"
        """,
        6,
        "procedure.steps",
        "unknown step 'strp' at column 12; did you mean 'strip'?",
        id="unknown-step",
    ),
    pytest.param(
        """
        [policy]
        target = 1.5

        [[procedure]]
        steps = "riffle"
        """,
        2,
        "policy.target",
        "target must be in (0, 1]",
        id="target-above-one",
    ),
    pytest.param(
        """
        [policy]
        metric = "separation"
        target = 0

        [[procedure]]
        steps = "riffle"
        """,
        3,
        "policy.target",
        "target must be in (0, 1]",
        id="target-zero",
    ),
    pytest.param(
        """
        [policy]
        target = 0.1

        [[procedure]]
        name = "a"
        steps = "riffle"

          [[procedure.log]]
          table = "T"
          path = "nowhere.csv"
        """,
        10,
        "procedure.log.path",
        "not found",
        id="missing-log",
    ),
]


class TestPolicyBadFiles:
    @pytest.mark.parametrize(("text", "line", "key", "fragment"), BAD_POLICIES)
    def test_file_line_key(self, tmp_path, text, line, key, fragment):
        path = write(tmp_path, text)
        message = one_line_error(run("policy", path))
        assert message.startswith(f"error: {path} line {line}: key '{key}': "), message
        assert fragment in message

    def test_syntax_error(self, tmp_path):
        path = write(tmp_path, "[policy\ntarget = 0.1\n")
        message = one_line_error(run("policy", path))
        assert str(path) in message and "invalid TOML" in message and "line 1" in message

    def test_missing_file(self, tmp_path):
        assert "no such file" in one_line_error(run("policy", tmp_path / "absent.toml"))

    def test_no_procedures(self, tmp_path):
        path = write(tmp_path, "[policy]\ntarget = 0.1\n")
        assert "no procedures" in one_line_error(run("policy", path))


class TestWhatWouldSettleIt:
    """Issue 9, section 4: when the bounds leave a decision open, the policy says what
    would settle it, in the terminal output and in the JSON."""

    @pytest.fixture(scope="class")
    @classmethod
    def open_policy(cls, tmp_path_factory) -> Path:
        folder = tmp_path_factory.mktemp("settle")
        return write(
            folder,
            """
            [policy]
            title = "Hand procedure (invented)"
            target = 0.1
            simulate = 2000
            seed = 3
            max_repeats = 3

            [[procedure]]
            name = "Hand-dealt"
            cards = 52
            steps = "riffle x3, strip(packets=5), riffle x3, cut"
            house = 2
            """,
        )

    def test_json(self, open_policy):
        (procedure,) = policy_json(open_policy)["procedures"]
        assert procedure["standing"] == "undetermined"
        settle = procedure["settle"]
        assert settle["repeats"] == 2
        # Bayer & Diaconis (1992): 9 riffles first bring TV of 52 cards to <= 0.1 (0.0854)
        assert settle["one_block_riffles"] == 9
        assert settle["one_block_value"]["kind"] == "exact"
        change = settle["certifying_change"]
        # two blocks of 8 riffles: TV <= TV(R8) x 2 TV(R8) = 2 x 0.167^2 < 0.1, 7 are not
        # enough (2 x 0.334^2 > 0.1): five more riffles in the first run
        assert change["riffle_run"] == 1 and change["riffles_added"] == 5
        assert change["bound"]["kind"] == "bound" and change["bound"]["value"] < 0.1
        assert change["procedure"].startswith("riffle x8")
        guess = settle["conjectured_at_repeats"]
        assert guess["kind"] == "conjectured" and round(guess["value"], 4) == 0.2775
        assert settle["conjectured_minimum"] == 3
        assert settle["audit_needs"]["kind"] == "estimate"
        assert procedure["settle_summary"] and all(procedure["settle_summary"])

    def test_terminal(self, open_policy):
        result = run("policy", open_policy)
        assert result.exit_code == 0, result.output
        text = result.stdout
        assert "What would settle it (2 repetitions):" in text
        assert "a run of 9 consecutive ideal riffles" in text
        assert "conjectured upper bound" in text and "unproven" in text

    def test_no_settlement_when_certified(self, tmp_path):
        (procedure,) = policy_json(riffle_policy(tmp_path, 0.1, house=10))["procedures"]
        assert procedure["settle"] is None and procedure["settle_summary"] == []
