"""A month of logs for three tables of an invented card room, ingested day by day and read
after every day: faults raise alarms with their change-point sets, the sound table stays
quiet, and reading the store every day changes nothing (the state equals one ingest of the
whole month).

Tables (every deck 432 s apart: 200 decks a day; all invented):

* Table 3 -- an ideal machine (uniform permutations) all month;
* Table 5 -- a 10-shelf machine (two passes, then a cut) that loses six shelves from deck
  2,401 (day 13), as in the demo's Table 7;
* Table 8 -- an ideal machine replaced from deck 4,001 (day 21) by eight ideal riffles.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest

from shufflecheck.analyses.monitor import fleet_status, ingest_log

from ._monitor_data import frame, table_decks, write_days, write_frame

DAYS = 30
PER_DAY = 200
EVERY = 86_400 // PER_DAY


@pytest.fixture(scope="module")
def month(tmp_path_factory) -> tuple[list[Path], Path]:
    folder = tmp_path_factory.mktemp("month")
    decks = DAYS * PER_DAY - 1
    rows = pd.concat(
        [
            frame("Table 3", table_decks(None, decks, seed=30), every=EVERY),
            frame(
                "Table 5",
                table_decks(
                    "shelf(shelves=10) x2, cut",
                    decks,
                    seed=50,
                    change=(2401, "shelf(shelves=4) x2, cut"),
                ),
                every=EVERY,
                offset=100,
            ),
            frame(
                "Table 8",
                table_decks(None, decks, seed=80, change=(4001, "riffle x8")),
                every=EVERY,
                offset=200,
            ),
        ]
    )
    days = write_days(folder, rows)
    whole = write_frame(folder / "whole-month.csv", rows)
    return days, whole


def test_a_month_day_by_day(tmp_path, month):
    days, whole = month
    assert len(days) == DAYS + 1  # the last deck of each table falls just past midnight
    store = tmp_path / "room.db"
    seen: dict[str, dict] = {}
    for day in days:
        result = ingest_log(store, day)
        assert result.decks_added > 0
        status = fleet_status(store, retrospective=False)  # a look after every day
        for table in status.tables:
            for kind, alarm in (("evidence", table.family_alarm), ("change", table.change_alarm)):
                key = f"{table.name}/{kind}"
                if key in seen:
                    assert alarm == seen[key]  # an alarm stands, unchanged by later looks
                elif alarm is not None:
                    seen[key] = alarm
    final = {t.name: t for t in fleet_status(store).tables}
    assert final["Table 3"].family_alarm is None and final["Table 3"].change_alarm is None
    # Table 5: the lost shelves are detected, and the set holds the first faulty deck
    five = final["Table 5"]
    assert five.change_alarm is not None and five.change_alarm["deck"] > 2400
    assert five.change_now.low <= 2401 <= five.change_now.high
    # Table 8: eight riffles in place of a random deck, detected soon after deck 4,000
    eight = final["Table 8"]
    assert eight.change_alarm is not None and 4000 < eight.change_alarm["deck"] < 4600
    assert eight.change_now.low <= 4001 <= eight.change_now.high
    assert eight.family_alarm is not None and eight.family_alarm["deck"] > 4000
    # reading every day changed nothing: one ingest of the whole month gives the same
    once = tmp_path / "once.db"
    ingest_log(once, whole)
    single = {t.name: t for t in fleet_status(once).tables}
    for name, table in final.items():
        other = single[name]
        assert (table.decks, table.change_alarm) == (other.decks, other.change_alarm)
        for alarm, again in ((table.family_alarm, other.family_alarm),):
            assert (alarm is None) == (again is None)
            if alarm is not None:
                assert (alarm["deck"], alarm["leading"]) == (again["deck"], again["leading"])
                assert alarm["log_e"] == pytest.approx(again["log_e"], abs=1e-9)
        assert table.family_log_e == pytest.approx(other.family_log_e, abs=1e-6)
    # re-ingesting every day again adds nothing
    for day in days:
        assert ingest_log(store, day).decks_added == 0
