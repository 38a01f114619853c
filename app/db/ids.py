"""Row ids as typed: the one reader every path, query and form id goes through.

Id columns are INTEGER: 64-bit on SQLite but 32-bit on PostgreSQL, so the app's range is the
smaller one, 1 to 2**31 - 1 (it only ever hands out positive ids). Anything else (Unicode
digits such as Arabic-Indic one or superscript two, signs, spaces inside, numbers past the
range) cannot name a row; read as an int it would reach the database driver and fail there
(OverflowError on SQLite, "integer out of range" on PostgreSQL), so it is refused here.
"""

import re

MAX_ROW_ID = 2**31 - 1  # PostgreSQL's INTEGER; SQLite's would allow 2**63 - 1
_ASCII_DIGITS = re.compile(r"[0-9]{1,10}", re.ASCII)


def read_row_id(text: object) -> int | None:
    """The id `text` names (surrounding spaces allowed), or None when it cannot name a row."""
    typed = str(text if text is not None else "").strip()
    if not _ASCII_DIGITS.fullmatch(typed):
        return None
    number = int(typed)
    return number if 1 <= number <= MAX_ROW_ID else None
