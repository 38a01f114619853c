"""The CSV's per-column cell writer writes every cell as csv_cell does, remembered numbers
included: zero and negative zero are one dictionary key but are written apart."""

from datetime import date, datetime

import pytest

from app.services.exchange.export_csv import cell_writer, csv_cell
from app.services.exchange.export_tables import RRF, SCIENTIFIC, SIGNED, WHOLE, Cell

CELLS: list[Cell] = [1e-5, 1e-5, -0.0, 0.0, -0.0, 0.0, float("nan"), float("inf"), 3, True,
                     "=SUM(A1)", "plain", "", None, date(2026, 12, 2),
                     datetime(2026, 12, 2, 15, 30), 1234.5, -1234.5, 0.049999, 0.05]


@pytest.mark.parametrize("number_format", [SCIENTIFIC, SIGNED, RRF, WHOLE, "0.0%", None])
def test_the_column_writer_writes_each_cell_as_csv_cell(number_format: str | None) -> None:
    write = cell_writer(number_format)
    written = ["" if value is None else write(value) for value in CELLS * 2]  # twice: remembered
    assert written == [csv_cell(value, number_format) for value in CELLS * 2]


def test_zero_and_negative_zero_stay_apart_in_a_scientific_column() -> None:
    write = cell_writer(SCIENTIFIC)
    # format(-0.0, "g") is "-0" (Python's format spec); a remembered 0.0 must not answer it
    assert [write(0.0), write(-0.0), write(0.0), write(-0.0)] == ["0", "-0", "0", "-0"]
    assert [write(1e-5), write(1e-5)] == ["1.0e-5", "1.0e-5"]
