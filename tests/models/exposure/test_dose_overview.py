"""The people overview: one line per person, sorting, CSV."""
from datetime import date

import numpy as np
import pytest

from models.exposure.engine import DoseRecords, compute_doses
from models.exposure.evaluation import evaluate
from models.exposure.overview import COLUMNS, csv_table, overview_rows, sort_rows
from models.exposure.presets import preset

ON = date(2026, 5, 31)


@pytest.fixture
def lines():
    records = DoseRecords(person=[0, 1, 2], quantity=["Hp(10)"] * 3, location=["whole_body"] * 3,
                          wear_start=[date(2026, 4, 1)] * 3, wear_end=[date(2026, 4, 30)] * 3,
                          value=[0.2, 2.0, 0.5], result=["measured"] * 3, mrd=[np.nan] * 3)
    totals = compute_doses(records, 3, ON)
    evaluation = evaluate(totals, preset("icrp103"), ["adult_worker"] * 3)
    people = [(11, "ann", "Ann"), (12, "=bob", "Bob"), (13, "cy", "Cy")]
    return overview_rows(evaluation, np.array([0, 1, 2]), people)


def test_lines_carry_doses_limits_and_levels(lines):
    ann, bob, _ = lines
    assert ann.cells["effective_year"].dose_msv == pytest.approx(0.2)
    assert ann.cells["effective_year"].limit_msv == 50.0  # ICRP Publication 103, Table 6
    # common practice: 1.25 mSv Hp(10) in a quarter is level I
    assert (bob.cells["effective_quarter"].level, bob.level) == ("level_1", "level_1")
    assert "fetus" not in " ".join(COLUMNS)


@pytest.mark.parametrize("key, descending, order", [
    ("name", False, ["Ann", "Bob", "Cy"]),
    ("effective_year", True, ["Bob", "Cy", "Ann"]),
    ("level", True, ["Bob", "Cy", "Ann"]),
    ("no such column", False, ["Ann", "Bob", "Cy"]),
])
def test_sorting(lines, key, descending, order):
    assert [line.name for line in sort_rows(lines, key, descending)] == order


def test_csv_has_a_header_and_defuses_formulas(lines):
    table = csv_table(lines)
    assert table[0][:4] == ["login", "name", "worst_level", "effective_year_dose_msv"]
    assert table[2][0] == "'=bob"
    assert table[2][3] == "2.0000"


def test_a_cell_without_a_result_shows_no_dose_and_no_level(lines):
    ann = lines[0]
    # Hp(10) only: the skin and the hands had no dosimeter result, so no 0 mSv and no "below level I".
    for column in ("skin_year", "worst_hand_year", "worst_hand_quarter"):
        assert (ann.cells[column].dose_msv, ann.cells[column].fraction, ann.cells[column].level) == (
            None, None, "no_result")
    assert ann.level == "below_1"  # the worst of what was assessed
    row = csv_table(lines)[1]
    header = csv_table(lines)[0]
    assert row[header.index("worst_hand_year_dose_msv")] == ""
    assert row[header.index("worst_hand_year_level")] == "no_result"
    # Sorted by a hand column, the lines without a result come last when descending.
    assert [line.name for line in sort_rows(lines, "worst_hand_year", True)] == ["Ann", "Bob", "Cy"]
