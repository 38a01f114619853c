"""In a real browser: a value typed while another large write holds the database is not lost.

SQLite takes one writer at a time; a large import holds the database for seconds. The server
waits for it (0.3 s here, 5 s by default), then answers 503 with Retry-After; the field's line
says the database is busy and nothing was saved, and the page sends the value again until it
is saved (tests/routes/test_database_busy.py has the answers themselves).
"""

import re
from collections.abc import Iterator

import pytest
from playwright.sync_api import Page, expect
from sqlalchemy import Engine
from sqlmodel import Session

from app.db.models import Step
from tests.factories import make_scenario_tree, make_step
from tests.helpers import another_writer, waiting_less_for_writers, worksheet_path


@pytest.fixture
def impatient_server(db_engine: Engine, monkeypatch: pytest.MonkeyPatch) -> Iterator[Engine]:
    yield from waiting_less_for_writers(db_engine, monkeypatch, 0.3)


@pytest.fixture
def layer(session: Session) -> Step:
    return make_step(session, make_scenario_tree(session), value=0.1, value_text="1 in 10",
                     description="High level trip")


@pytest.fixture
def worksheet(page: Page, live_server: str, session: Session, layer: Step) -> Page:
    """The worksheet of the layer's node, open in the browser."""
    page.goto(live_server + worksheet_path(session, layer.scenario_id))
    return page


def saved_text(session: Session, step: Step) -> str:
    session.expire_all()
    row = session.get(Step, step.id)
    assert row is not None
    return row.value_text


@pytest.mark.usefixtures("impatient_server")
def test_a_value_typed_while_the_database_is_busy_is_sent_again_and_saved(
    worksheet: Page, session: Session, db_engine: Engine, layer: Step,
) -> None:
    page = worksheet
    field = page.locator(f"#step-{layer.id}-value_text")
    said = page.locator(f"#step-{layer.id}-value_text-said")
    with another_writer(db_engine):
        field.fill("1 in 1000")
        field.press("Tab")
        expect(said).to_have_text("Not saved: the database is busy. Sending again in 2 s.",
                                  timeout=5_000)
        expect(said).to_have_attribute("title", re.compile("nothing was saved"))
        # A screen reader hears it too, once requests settle (the page's one live region).
        expect(page.locator("#page-status")).to_contain_text(
            "Not saved: the database is busy.", timeout=5_000)
        assert saved_text(session, layer) == "1 in 10"
    expect(said).to_have_text("1 in 1,000 · 1.0e-3", timeout=10_000)  # sent again, saved
    expect(page.locator("#page-status")).to_contain_text("mitigated 1.0e-4 /yr", timeout=5_000)
    expect(field).to_have_value("1 in 1000")
    assert saved_text(session, layer) == "1 in 1000"


@pytest.mark.usefixtures("impatient_server")
def test_a_button_pressed_while_the_database_is_busy_says_so_at_the_top_until_one_succeeds(
    worksheet: Page, db_engine: Engine, layer: Step,
) -> None:
    page = worksheet
    add_ipl = page.locator(f"#scenario-{layer.scenario_id} form[data-add='ipl'] button")
    notice = page.locator("#request-notice")
    with another_writer(db_engine):
        add_ipl.click()
        expect(notice).to_contain_text("busy", timeout=5_000)
        expect(notice).to_contain_text("nothing was saved")
        expect(notice).to_have_attribute("role", "alert")
    add_ipl.click()
    expect(notice).to_have_count(0)
    expect(page.locator(f"#scenario-{layer.scenario_id} [data-value-field]")).to_have_count(3)
