"""Row ids as typed: the one reader every path, query and form id goes through.

Ids are signed 64-bit integers on SQLite and PostgreSQL alike, and the app only ever hands out
positive ones. Anything else (Unicode digits such as Arabic-Indic one or superscript two,
signs, spaces inside, numbers past 2**63 - 1) cannot name a row; read as an int it would reach
the database driver and fail there, so it is refused here.
"""

import re

MAX_ROW_ID = 2**63 - 1
_ASCII_DIGITS = re.compile(r"[0-9]{1,19}", re.ASCII)


def read_row_id(text: object) -> int | None:
    """The id `text` names (surrounding spaces allowed), or None when it cannot name a row."""
    typed = str(text if text is not None else "").strip()
    if not _ASCII_DIGITS.fullmatch(typed):
        return None
    number = int(typed)
    return number if 1 <= number <= MAX_ROW_ID else None
