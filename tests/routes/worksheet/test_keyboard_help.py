"""The keyboard help page lists exactly the keys the app's scripts handle, and no others: every
Alt+letter, arrow, Delete, Backspace, Escape, Enter and ? it names is one a handler in static/*.js
compares against, and every key a handler compares against is on the page."""

import re

from fastapi.testclient import TestClient

from app.settings import PROJECT_ROOT
from tests.helpers import table_rows

SCRIPTS = ["worksheet.js", "record.js", "estimates.js", "app.js"]
# The words the help page writes for the keys a script compares (event.key / event.code values).
PAGE_WORD = {"ArrowUp": "↑", "ArrowDown": "↓", "Escape": "Esc", "Delete": "Delete",
             "Backspace": "Backspace", "Enter": "Enter", "?": "?", " ": "Space"}


def keys_in_scripts() -> set[str]:
    """Each key a keyboard handler tests, in the help page's words ("Alt+Z", "↑", "Esc")."""
    found: set[str] = set()
    for name in SCRIPTS:
        source = (PROJECT_ROOT / "static" / name).read_text(encoding="utf-8")
        found |= {f"Alt+{letter}" for letter in re.findall(r'event\.code === "Key([A-Z])"', source)}
        found |= {PAGE_WORD[key] for key in re.findall(r'event\.key === "([^"]+)"', source)}
        if "ArrowUp:" in source:  # record.js maps arrows through a table
            found |= {"↑", "↓"}
    return found


def keys_on_help_page(client: TestClient) -> set[str]:
    """Each <kbd> combination in the help page's key columns, split into its keys."""
    page = client.get("/help/keys").text
    found: set[str] = set()
    for combo in re.findall(r"((?:<kbd>[^<]+</kbd>\+?)+)", page):
        keys = re.findall(r"<kbd>([^<]+)</kbd>", combo)
        if keys[0] in ("Alt", "Option") and len(keys) == 2:
            letter = len(keys[1]) == 1 and keys[1].isascii() and keys[1].isalpha()
            found.add(f"Alt+{keys[1]}" if letter else keys[1])
        else:
            found |= {key for key in keys if key not in ("Alt", "Option", "Shift")}
    return found


def test_the_help_page_names_exactly_the_keys_the_scripts_handle(client: TestClient) -> None:
    on_page = keys_on_help_page(client)
    handled = keys_in_scripts()
    browser_own = {"Tab"}  # moving focus is the browser's; the app only keeps the order sensible
    assert on_page - browser_own == handled
    assert {"Alt+Z", "Alt+N", "Alt+R", "↑", "↓", "Esc", "Enter", "?", "Delete"} <= on_page


def test_each_page_section_has_a_table_of_keys(client: TestClient) -> None:
    page = client.get("/help/keys").text
    for table in ("keys", "action-keys", "round-keys", "attendance-keys"):
        assert table_rows(page, table)
