"""Helpers every test layer shares: reading HTML as data, htmx headers, the test author.

Test modules import helpers from here (or fixtures from conftest), never from each other.
"""


import sqlite3
import threading
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from html.parser import HTMLParser
from typing import TypeVar

import pytest
from sqlalchemy import Engine
from sqlmodel import Session

import app.db.session as session_module
from app.db.models import Deviation, Scenario
from app.db.session import build_db_engine
from app.db.tracking import AUTHOR_KEY

TEST_AUTHOR = "Test Scribe"
OTHER_AUTHOR = "Ben Other (invented)"  # the second person in tests of two editors

HX = {"HX-Request": "true"}
Row = TypeVar("Row")
VOID = {"input", "br", "img", "meta", "link", "hr", "area", "base", "col", "source", "wbr"}


class Elements(HTMLParser):
    """Each element with an id: its attributes and its text (void elements have none)."""

    def __init__(self) -> None:
        super().__init__()
        self.found: dict[str, dict[str, str]] = {}
        self.texts: dict[str, list[str]] = {}
        self.open: list[tuple[str, str | None]] = []

    def handle_starttag(self, tag: str, attrs: list) -> None:  # type: ignore[type-arg]
        values = {k: v or "" for k, v in attrs}
        element_id = values.get("id")
        if element_id:
            self.found[element_id] = {"tag": tag, **values}
            self.texts.setdefault(element_id, [])
        if tag not in VOID:
            self.open.append((tag, element_id))

    def handle_endtag(self, tag: str) -> None:
        while self.open:
            if self.open.pop()[0] == tag:
                break

    def handle_data(self, data: str) -> None:
        for _, element_id in self.open:
            if element_id:
                self.texts[element_id].append(data)


def reloaded(session: Session, model: type[Row], row_id: int | None) -> Row:
    """A row as the database holds it now (after other clients' saves), which must exist."""
    session.expire_all()
    row = session.get(model, row_id)
    assert row is not None, f"{model.__name__} {row_id} is gone"
    return row


def parse(html: str) -> Elements:
    """Parse a page or fragment."""
    parser = Elements()
    parser.feed(html)
    return parser


def text_of(html: str, element_id: str) -> str:
    """The whitespace-normalised text of the element with this id."""
    return " ".join(" ".join(parse(html).texts[element_id]).split())


def attrs_of(html: str, element_id: str) -> dict[str, str]:
    """The attributes of the element with this id."""
    return parse(html).found[element_id]


class Figures(HTMLParser):
    """The data-figure texts inside one element (by id), stopping where it closes."""

    def __init__(self, region_id: str) -> None:
        super().__init__()
        self.region_id, self.depth = region_id, 0
        self.values: dict[str, str] = {}
        self.current: str | None = None

    def handle_starttag(self, tag: str, attrs: list) -> None:  # type: ignore[type-arg]
        values = dict(attrs)
        if values.get("id") == self.region_id:
            self.depth = 1
        elif self.depth and tag not in VOID:
            self.depth += 1
        if self.depth:
            self.current = values.get("data-figure") or self.current

    def handle_endtag(self, tag: str) -> None:
        if self.depth:
            self.depth -= 1
            if tag in ("dd", "p"):
                self.current = None

    def handle_data(self, data: str) -> None:
        if self.depth and self.current:
            joined = self.values.get(self.current, "") + data
            self.values[self.current] = " ".join(joined.split())


def figures(html: str, scenario_id: int) -> dict[str, str]:
    """The scenario's computed figures by name, as shown."""
    parser = Figures(f"scenario-{scenario_id}-results")
    parser.feed(html)
    return parser.values


class TableRows(HTMLParser):
    """Collect the text of each <tr> of the table with the given id."""

    def __init__(self, table_id: str) -> None:
        super().__init__()
        self.table_id, self.depth, self.rows = table_id, 0, []
        self.cell: list[str] | None = None

    def handle_starttag(self, tag: str, attrs: list) -> None:  # type: ignore[type-arg]
        if tag == "table" and ("id", self.table_id) in attrs:
            self.depth = 1
        elif self.depth and tag == "tr":
            self.rows.append([])
        elif self.depth and tag in ("td", "th"):
            self.cell = []

    def handle_endtag(self, tag: str) -> None:
        if self.depth and tag in ("td", "th") and self.cell is not None:
            self.rows[-1].append(" ".join("".join(self.cell).split()))
            self.cell = None
        elif tag == "table":
            self.depth = 0

    def handle_data(self, data: str) -> None:
        if self.cell is not None:
            self.cell.append(data)


def table_rows(html: str, table_id: str) -> list[list[str]]:
    """The table's rows as lists of cell texts."""
    parser = TableRows(table_id)
    parser.feed(html)
    return parser.rows


def run_at_once(db_engine: Engine, move: Callable[[Session, int, int], object],
                threads: int = 4, moves: int = 25) -> list[str]:
    """`threads` workers each make `moves` calls of move(session, worker, i) in their own
    sessions, all starting together; returns the errors raised (for concurrency tests)."""
    errors: list[str] = []
    start = threading.Barrier(threads)

    def worker(number: int) -> None:
        start.wait()
        for i in range(moves):
            try:
                with Session(db_engine) as session:
                    session.info[AUTHOR_KEY] = f"thread {number}"
                    move(session, number, i)
            except Exception as err:
                errors.append(f"{type(err).__name__}: {err}")

    workers = [threading.Thread(target=worker, args=(n,)) for n in range(threads)]
    for thread in workers:
        thread.start()
    for thread in workers:
        thread.join()
    return errors


@contextmanager
def another_writer(db_engine: Engine) -> Iterator[None]:
    """Another process's long write to an SQLite database (a large import): its write lock
    held by a plain connection until the block ends."""
    holder = sqlite3.connect(str(db_engine.url.database), isolation_level=None)
    holder.execute("BEGIN IMMEDIATE")
    try:
        yield
    finally:
        holder.execute("ROLLBACK")
        holder.close()


def waiting_less_for_writers(db_engine: Engine, monkeypatch: pytest.MonkeyPatch,
                             seconds: float) -> Iterator[Engine]:
    """For a fixture: the app's sessions on an engine that waits `seconds` for another write
    instead of the settings' 5 (SQLite only: one writer at a time is its rule)."""
    if db_engine.dialect.name != "sqlite":
        pytest.skip("one writer at a time is SQLite's rule (PostgreSQL locks rows)")
    impatient = build_db_engine(str(db_engine.url), busy_seconds=seconds)
    monkeypatch.setattr(session_module, "get_db_engine", lambda: impatient)
    yield impatient
    impatient.dispose()


def worksheet_path(session: Session, scenario_id: int | None) -> str:
    """The worksheet page of the node holding a scenario."""
    scenario = session.get(Scenario, scenario_id)
    assert scenario is not None
    deviation = session.get(Deviation, scenario.deviation_id)
    assert deviation is not None
    return f"/studies/{scenario.study_id}/nodes/{deviation.node_id}"
