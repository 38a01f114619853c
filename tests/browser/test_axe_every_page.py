"""axe-core (the vendored 4.x release, tests/browser/vendor/) finds no WCAG 2.x A/AA violation on
any page of the app, with the invented demo study loaded, a frozen revision and an estimate round.

Source: axe-core's rules for the tags wcag2a, wcag2aa, wcag21a, wcag21aa, wcag22aa (WCAG 2.1/2.2,
W3C Recommendations). axe cannot judge everything (keyboard routes, names that make sense, live
regions): tests/browser/worksheet/test_worksheet_a11y.py and test_low_vision.py cover those.
"""

from collections.abc import Iterator

import pytest
from playwright.sync_api import Browser, Page, expect
from sqlalchemy import Engine
from sqlmodel import Session, select

from app.access.state import set_passphrase, todays_join_code
from app.db.models import Node, Recommendation, Step, Study
from app.likelihood.types import StepKind
from app.main import create_app
from app.services.estimates.rounds import open_round
from app.services.record.revisions import freeze_revision
from app.settings import Settings
from tests.browser.accessibility import axe_violations
from tests.browser.conftest import serve_in_thread
from tests.security.conftest import PASSPHRASE


@pytest.fixture(scope="module")
def lan_server(db_engine: Engine) -> Iterator[str]:
    """The app in LAN mode (sign-in and join pages), on a free loopback port."""
    yield from serve_in_thread(create_app(Settings(lan=True, host="0.0.0.0")))


def _first(session: Session, query: object) -> int:
    found = session.exec(query).first()  # type: ignore[call-overload]
    assert found is not None
    return int(found)


def every_page(session: Session, study: Study) -> dict[str, str]:
    """Each page of the app (name → path) for the demo study, with a revision and a round."""
    sid = study.id
    assert sid is not None
    revision = freeze_revision(session=session, study_id=sid, frozen_by="A. Lind",
                               values={"label": "Rev A", "note": "", "signed_off_by": "B. Osei"})
    node = _first(session, select(Node.id).where(Node.study_id == sid).order_by(Node.position))
    ipl = _first(session, select(Step.id).where(Step.study_id == sid, Step.kind == StepKind.IPL)
                 .order_by(Step.id))
    action = _first(session, select(Recommendation.id).where(Recommendation.study_id == sid))
    estimate_round = open_round(session=session, study_id=sid, step_id=ipl,
                                question="How often does the trip fail on demand?")
    base = f"/studies/{sid}"
    return {
        "study list": "/", "new study": "/studies/new", "overview": base,
        "edit study": f"{base}/edit", "delete study question": f"{base}/delete",
        "worksheet": f"{base}/nodes/{node}", "node delete question": f"{base}/nodes/{node}/delete",
        "step details": f"{base}/steps/{ipl}/details",
        "proof test": f"{base}/proof-test?step_id={ipl}",
        "room view": f"{base}/room", "criteria": f"{base}/criteria",
        "risk picture": f"{base}/risk", "actions": f"{base}/actions",
        "action edit": f"{base}/actions/{action}/edit",
        "action delete question": f"{base}/actions/{action}/delete",
        "change log": f"{base}/changes", "participants": f"{base}/attendance",
        "revisions": f"{base}/revisions", "revision": f"{base}/revisions/{revision.id}",
        "comparison": f"{base}/revisions/compare?from={revision.id}&to=live",
        "exports": f"/studies/{sid}/export", "export all": "/export-all",
        "rounds": f"{base}/rounds", "new round": f"{base}/steps/{ipl}/rounds/new",
        "round": f"{base}/rounds/{estimate_round.id}", "word scale": f"{base}/word-scale",
        "estimate (scribe)": f"{base}/estimate", "keyboard help": "/help/keys",
        "access": "/access", "rooms": "/rooms",
        "missing study (404)": "/studies/2147483000", "malformed id (400)": "/studies/x1/worksheet",
    }


def test_every_page_has_no_axe_violation(page: Page, live_server: str, session: Session,
                                         demo_study: Study) -> None:
    found: dict[str, list[str]] = {}
    statuses: dict[str, int] = {}
    for name, path in every_page(session, demo_study).items():
        response = page.goto(f"{live_server}{path}")
        assert response is not None
        statuses[name] = response.status
        if violations := axe_violations(page):
            found[name] = violations
    assert {name: status for name, status in statuses.items() if status != 200} == {
        "missing study (404)": 404, "malformed id (400)": 400}
    assert found == {}


def test_risk_picture_with_a_cell_chosen_has_no_axe_violation(
    page: Page, live_server: str, demo_study: Study
) -> None:
    page.goto(f"{live_server}/studies/{demo_study.id}/risk")
    page.locator(".matrix-cell a").first.click()
    expect(page.locator("#cell-scenarios")).to_be_visible()
    assert axe_violations(page) == []


def test_sign_in_join_and_the_participant_page_have_no_axe_violation(
    browser: Browser, lan_server: str, session: Session, demo_study: Study
) -> None:
    set_passphrase(session, PASSPHRASE)
    code = todays_join_code(session)
    ipl = _first(session, select(Step.id).where(Step.study_id == demo_study.id,
                                                Step.kind == StepKind.IPL))
    assert demo_study.id is not None
    open_round(session=session, study_id=demo_study.id, step_id=ipl,
               question="How often does the trip fail on demand?")
    phone = browser.new_context(viewport={"width": 390, "height": 844})
    page = phone.new_page()
    found: dict[str, list[str]] = {}
    entry = {"sign in": "/sign-in", "join": f"/join?next=/studies/{demo_study.id}/estimate"}
    for name, path in entry.items():
        page.goto(f"{lan_server}{path}")
        if violations := axe_violations(page):
            found[name] = violations
    page.get_by_label("Join code").fill(code)
    page.get_by_label("Your name").fill("T. Nakamura-Reyes")
    page.get_by_role("button", name="Join").click()
    expect(page.locator(".answer-question")).to_be_visible()
    if violations := axe_violations(page):
        found["participant's estimate page"] = violations
    page.goto(f"{lan_server}/studies/{demo_study.id}/room")
    if violations := axe_violations(page):
        found["participant's room view"] = violations
    phone.close()
    assert found == {}
