"""Tables as CSV: UTF-8 with a byte-order mark so spreadsheet programs read it right.

The byte-order mark is common practice (no standard asks for it): without it Excel reads a
UTF-8 file in the local code page and garbles every non-Latin letter.
"""

import csv
import io
from collections.abc import Callable, Iterable, Sequence
from datetime import date
from typing import IO

from app.services.exchange.export_tables import (
    SHOWN_AS,
    Cell,
    Column,
    Table,
    shown_number,
    spreadsheet_text,
)

BYTE_ORDER_MARK = "\ufeff"


def table_csv(table: Table, *, cautions: str = "") -> bytes:
    """The table as CSV bytes: a header row, then one row per table row, CRLF line ends; with
    `cautions`, a last row "Cautions", text (a reader that stops at the data still sees them
    when it opens the file, and no comment syntax outside RFC 4180 is needed)."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\r\n")
    writer.writerow([spreadsheet_text(column.header) for column in table.columns])
    for row in table.rows:
        writer.writerow([csv_cell(value, column.number_format)
                         for value, column in zip(row, table.columns, strict=True)])
    if cautions:
        writer.writerow(["Cautions", spreadsheet_text(cautions)])
    return (BYTE_ORDER_MARK + buffer.getvalue()).encode("utf-8")


ROWS_PER_WRITE = 200


def write_csv(target: IO[bytes], columns: Sequence[Column], rows: Iterable[Sequence[Cell]], *,
              cautions: str = "") -> None:
    """table_csv's bytes written into an open binary file a few hundred rows at a time, so a
    table of any length is never held whole."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\r\n")
    buffer.write(BYTE_ORDER_MARK)
    writer.writerow([spreadsheet_text(column.header) for column in columns])
    cells = [cell_writer(column.number_format) for column in columns]
    for count, row in enumerate(rows, 1):
        writer.writerow(["" if value is None else write(value)
                         for write, value in zip(cells, row, strict=True)])
        if count % ROWS_PER_WRITE == 0:
            target.write(buffer.getvalue().encode("utf-8"))
            buffer.seek(0)
            buffer.truncate()
    if cautions:
        writer.writerow(["Cautions", spreadsheet_text(cautions)])
    target.write(buffer.getvalue().encode("utf-8"))


REMEMBERED_NUMBERS = 65_536  # shown texts kept per column while one file is written


def cell_writer(number_format: str | None) -> Callable[[Cell], str]:
    """csv_cell for one column, with the common kinds (float, text) first: a large table has
    half a million cells. A column's numbers repeat (the same frequencies, products and
    targets down a study), so each one's shown text is kept once made; zero never is, as
    0.0 and -0.0 are one key but are written apart ("0", "-0")."""
    shown = SHOWN_AS.get(number_format or "")
    texts: dict[float, str] = {}

    def write(value: Cell) -> str:
        kind = type(value)
        if kind is float:
            if shown is None:
                return f"{value:.10g}"
            text = texts.get(value)  # type: ignore[arg-type]
            if text is None:
                text = shown(value)  # type: ignore[arg-type]
                if value and len(texts) < REMEMBERED_NUMBERS:
                    texts[value] = text  # type: ignore[index]
            return text
        if kind is str:
            return spreadsheet_text(value)  # type: ignore[arg-type]
        return csv_cell(value, number_format)

    return write


def csv_cell(value: Cell, number_format: str | None = None) -> str:
    """One cell as CSV text: numbers rounded as the screen shows them (the study file keeps
    the exact values), text formula-safe, nothing as ''."""
    if value is None:
        return ""
    if isinstance(value, str):
        return spreadsheet_text(value)
    if isinstance(value, date):
        return value.isoformat()
    return shown_number(value, number_format)
