"""In real browsers on the meeting-room network: three people join with the day's code, answer
in private on their phones, the facilitator reveals and agrees; and a round the scribe types.

External checks: the geometric mean against scipy.stats.gmean (shown with two significant
figures by the app's one formatter, and exactly in the step's stored value).
"""

import os
import shutil
from collections.abc import Iterator
from pathlib import Path

import pytest
from playwright.sync_api import Browser, BrowserContext, Page, Response, expect
from scipy.stats import gmean
from sqlalchemy import Engine
from sqlmodel import Session

from app.access.state import set_passphrase, todays_join_code
from app.db.models import Step
from app.likelihood.numbers import format_number
from app.likelihood.types import StepKind
from app.main import create_app
from app.settings import PROJECT_ROOT, Settings
from tests.browser.conftest import serve_in_thread
from tests.factories import make_scenario_tree, make_step
from tests.security.conftest import PASSPHRASE

PHONE = {"width": 390, "height": 844}
README_SHOTS = PROJECT_ROOT / "static" / "screenshots"
ANSWERS = {"A. Lind": ("0.1%", 1e-3), "B. Osei": ("0.7%", 7e-3),
           "C. Ruiz": ("1 in 20000", 5e-5)}
SENT_TO: dict[str, list[str]] = {}  # every response each phone received, as text


@pytest.fixture(scope="module")
def lan_server(db_engine: Engine) -> Iterator[str]:
    """The app in LAN mode (join code and passphrase needed), on a free loopback port."""
    yield from serve_in_thread(create_app(Settings(lan=True, host="0.0.0.0")))


def _save_shot(page: Page, artifacts: Path, name: str) -> None:
    target = artifacts / name
    page.screenshot(path=str(target))
    if os.environ.get("TALLYROOM_UPDATE_SCREENSHOTS") == "1":  # README copies, only on request
        README_SHOTS.mkdir(parents=True, exist_ok=True)
        shutil.copyfile(target, README_SHOTS / name)


def _step(session: Session) -> Step:
    set_passphrase(session, PASSPHRASE)
    scenario = make_scenario_tree(session, title="Tank farm review (invented)")
    return make_step(session, scenario, kind=StepKind.IPL, value=0.1,
                     description="Operator response to high level alarm")


def _facilitator(browser: Browser, server: str, study_id: int) -> tuple[BrowserContext, Page]:
    context = browser.new_context(viewport={"width": 1400, "height": 1000})
    page = context.new_page()
    page.goto(f"{server}/sign-in?next=/studies/{study_id}/worksheet")
    page.get_by_label("Passphrase").fill(PASSPHRASE)
    page.get_by_label("Your name").fill("F. Okafor")
    page.get_by_label("facilitator (also rotates").check()
    page.get_by_role("button", name="Sign in").click()
    expect(page.locator("[data-value-field]").first).to_be_visible()
    page.wait_for_load_state("load")  # the key handlers are attached once the scripts ran
    return context, page


def _open_round_with_the_key(page: Page, step: Step) -> None:
    field = page.locator(f"#step-{step.id}-value_text")
    field.focus()
    field.press("Alt+r")
    expect(page.get_by_label("Question in words")).to_have_value(
        "What is the probability that “Operator response to high level alarm” fails when it "
        "is needed?")
    page.get_by_role("button", name="Open the round").click()
    expect(page.locator("#round")).to_have_attribute("data-state", "open")


def _record_app_responses(context: BrowserContext) -> list[str]:
    """Every page and fragment the app sends to this browser with a body, as text (redirects
    and the poll's empty 204s carry none)."""
    bodies: list[str] = []

    def keep(response: Response) -> None:
        if "/studies/" in response.url and response.status == 200:
            bodies.append(response.text())

    context.on("response", keep)
    return bodies


def _phone_joins(browser: Browser, server: str, study_id: int, person: str,
                 code: str) -> tuple[BrowserContext, Page]:
    context = browser.new_context(viewport=PHONE, is_mobile=True, has_touch=True)
    SENT_TO[person] = _record_app_responses(context)
    page = context.new_page()
    page.goto(f"{server}/studies/{study_id}/estimate")
    page.get_by_label("Join code").fill(code)
    page.get_by_label("Your name").fill(person)
    page.get_by_role("button", name="Join").click()
    expect(page.locator(".answer-question")).to_contain_text("fails when it is needed")
    return context, page


def test_three_phones_answer_in_private_then_the_reveal_and_the_agreement(
    browser: Browser, lan_server: str, session: Session, artifacts: Path
) -> None:
    step = _step(session)
    code = todays_join_code(session)
    desk, facilitator = _facilitator(browser, lan_server, step.study_id)
    _open_round_with_the_key(facilitator, step)
    phones = {person: _phone_joins(browser, lan_server, step.study_id, person, code)
              for person in ANSWERS}
    for person, (said, _value) in ANSWERS.items():
        page = phones[person][1]
        page.get_by_label("Your estimate").fill(said)
        page.get_by_role("button", name="Send my estimate").click()
        expect(page.locator("[data-echo]")).to_contain_text(said)
    lind = phones["A. Lind"][1]
    _save_shot(lind, artifacts, "estimate-participant-phone.png")
    for other in ("0.7%", "7.0e-3", "1 in 20000", "5.0e-5"):
        assert other not in lind.content()
    for person in ANSWERS:
        expect(facilitator.locator(f'[data-answered="{person}"]')).to_be_visible()
    lind.wait_for_timeout(2500)  # let each phone's poll run at least once more
    for person, bodies in SENT_TO.items():  # no page or fragment a phone got holds another's
        received = "\n".join(bodies)
        assert ANSWERS[person][0] in received, f"{person}'s own echo was not recorded"
        for other, (said, value) in ANSWERS.items():
            if other != person:
                assert said not in received and format_number(value) not in received
    assert "0.7%" not in facilitator.content() and "7.0e-3" not in facilitator.content()
    room = desk.new_page()
    room.goto(f"{lan_server}/studies/{step.study_id}/room")
    expect(room.locator("[data-figure=answered]")).to_contain_text("3 answered")
    expect(room.locator("[data-join-code]")).to_have_text(f"{code[:3]}-{code[3:]}")
    facilitator.get_by_role("button", name="Reveal the estimates").click()
    expected = gmean([value for _said, value in ANSWERS.values()])  # scipy: 7.0e-4
    shown = facilitator.locator("[data-figure=geometric-mean]")
    expect(shown).to_have_text(format_number(expected))
    expect(room.locator('[data-mark="estimate"]')).to_have_count(3)  # the poll brings it
    expect(room.locator("#room-round [data-figure=geometric-mean]")).to_have_text(
        format_number(expected))
    # by hand: log10(7e-3 / 5e-5) = 2.1 orders, above one: called out
    expect(room.locator("[data-figure=discuss]")).to_be_visible()
    _save_shot(room, artifacts, "estimate-room-reveal.png")
    expect(lind.locator(".answer-question")).to_have_text("No round is open.")
    facilitator.get_by_label("Dissents, one per line").fill("C. Ruiz: our operators are drilled")
    facilitator.get_by_role("button", name="Agree: set the step's value and basis").click()
    expect(facilitator.locator("#agreed")).to_contain_text("C. Ruiz dissents")
    session.refresh(step)
    assert step.value == pytest.approx(expected, rel=1e-12)
    assert step.basis == (f"agreed in round 1 from 3 estimates, 5.0e-5 to 7.0e-3, geometric "
                          f"mean {format_number(expected)}; C. Ruiz dissents: our operators "
                          "are drilled")
    for context, _page in phones.values():
        context.close()
    desk.close()


def test_the_scribe_types_each_estimate_for_people_without_devices(
    browser: Browser, lan_server: str, session: Session
) -> None:
    step = _step(session)
    desk, page = _facilitator(browser, lan_server, step.study_id)
    _open_round_with_the_key(page, step)
    typed = {"D. Mwangi": "1 in 100", "E. Sato": "2e-3"}
    for person, said in typed.items():
        page.get_by_label("Name", exact=True).fill(person)
        page.get_by_label("Their estimate").fill(said)
        page.get_by_role("button", name="Add (hidden until the reveal)").click()
        expect(page.locator(f'[data-answered="{person}"]')).to_contain_text("typed by the scribe")
        assert said not in page.content()
    page.get_by_role("button", name="Reveal the estimates").click()
    expect(page.locator('#round [data-mark="estimate"]')).to_have_count(2)
    expect(page.locator("[data-figure=geometric-mean]")).to_have_text(
        format_number(gmean([1e-2, 2e-3])))  # scipy: 4.5e-3
    page.keyboard.press("Alt+r")  # another round, one key away
    expect(page.locator("#round h1")).to_contain_text("Round 2")
    expect(page.locator("#earlier-rounds")).to_contain_text("Round 1")
    desk.close()
