"""Library errors name arguments; the command line names its options in their place."""

from __future__ import annotations

import pytest

from shufflecheck.analyses.assess import assess
from shufflecheck.common.errors import InputError
from shufflecheck.models import distance_curve
from shufflecheck.models.procedures import parse_procedure
from tests._cli import one_line_error, run


class TestLibraryMessagesNameArguments:
    def test_cards(self):
        with pytest.raises(InputError, match=r"^cards must be at least 2, got 1$") as caught:
            distance_curve("riffle", 1)
        assert caught.value.arguments == ("cards",)

    def test_repeats(self):
        with pytest.raises(InputError, match=r"^repeats must be an integer from 1 to") as caught:
            assess(parse_procedure("riffle"), 52, repeats=0, decks=100)
        assert "--" not in str(caught.value)


class TestCommandLineNamesOptions:
    @pytest.mark.parametrize(
        "args, expected",
        [
            (("mix", "riffle", "--cards", 1), "error: --cards must be at least 2, got 1"),
            (
                ("mix", "riffle", "--max-steps", 0),
                "error: --max-steps must be an integer from 1 to 200,000, got 0",
            ),
            (("assess", "riffle", "--repeat", 0), "error: --repeat must be an integer from 1 to"),
            (
                ("assess", "riffle", "--simulate", 1),
                "error: --simulate must be an integer from 2 to",
            ),
        ],
    )
    def test_option_in_place_of_argument(self, args, expected):
        assert one_line_error(run(*args)).startswith(expected)

    def test_two_options_in_one_message(self, tmp_path):
        log = tmp_path / "forty.csv"
        log.write_text("order\n" + " ".join(f"C{k}" for k in range(1, 41)) + "\n")
        line = one_line_error(run("audit", log, "--cards", 40))
        assert "(--deck FILE)" in line and "(--labels int)" in line
