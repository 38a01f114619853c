"""The actions page in the team's order: the order choice, and moving an action up or down."""

import re
from collections.abc import Iterator
from datetime import date

import pytest
from fastapi.testclient import TestClient
from httpx import Response
from sqlmodel import Session, col, select

from app.db.models import ChangeLogEntry, Deviation, Recommendation, Scenario
from app.routes.record.actions import today
from app.services.record.actions import add_action, shift_action
from tests.factories import make_scenario_tree
from tests.helpers import HX, table_rows

FIXED_TODAY = date(2026, 12, 1)


@pytest.fixture
def fixed_day(client: TestClient) -> Iterator[date]:
    """The app's 'today' pinned to 1 December 2026."""
    client.app.dependency_overrides[today] = lambda: FIXED_TODAY  # type: ignore[attr-defined]
    yield FIXED_TODAY
    client.app.dependency_overrides.clear()  # type: ignore[attr-defined]


@pytest.fixture
def scenario(session: Session) -> Scenario:
    """A study with one scenario (invented)."""
    return make_scenario_tree(session)


@pytest.fixture
def actions(session: Session, scenario: Scenario) -> list[Recommendation]:
    """Three actions added in the order A, B, C; their due dates run the other way."""
    return [
        add_action(session=session, study_id=scenario.study_id, text=text, due_date=due,
                      scenario_ids=[scenario.id])
        for text, due in [("A: fit a high-level trip", "2027-03-01"),
                          ("B: add a bund alarm", "2027-02-01"),
                          ("C: retrain operators", "2027-01-01")]
    ]


def _texts(html: str) -> list[str]:
    """The Action column, top to bottom."""
    header, *body = table_rows(html, "actions-table")
    column = header.index("Action")
    return [row[column][:1] for row in body]


def _team_order(session: Session, study_id: int) -> list[str]:
    session.expire_all()
    return [a.text[:1] for a in session.exec(
        select(Recommendation).where(Recommendation.study_id == study_id)
        .order_by(col(Recommendation.position), col(Recommendation.id))).all()]


def _move(client: TestClient, action: Recommendation, direction: str, *,
          htmx: bool = True) -> Response:
    """Press the row's move button (as htmx does, or as a plain form post)."""
    return client.post(f"/studies/{action.study_id}/actions/{action.id}/move",
                       data={"direction": direction}, headers=HX if htmx else {},
                       follow_redirects=False)


def test_the_list_is_by_due_date_unless_team_order_is_chosen(
    client: TestClient, actions: list[Recommendation], fixed_day: date
) -> None:
    base = f"/studies/{actions[0].study_id}/actions"
    by_due = client.get(base).text
    by_team = client.get(f"{base}?order=team").text
    assert _texts(by_due) == ["C", "B", "A"]
    assert _texts(by_team) == ["A", "B", "C"]
    header, *body = table_rows(by_team, "actions-table")
    assert header[0] == "No." and [row[0] for row in body] == ["1", "2", "3"]
    assert re.search(r'<a href="[^"]*/actions" aria-current="page">Due date</a>', by_due)
    assert re.search(r'<a href="[^"]*/actions\?order=team" aria-current="page">Team order</a>',
                     by_team)


def test_an_unknown_order_falls_back_to_due_date(
    client: TestClient, actions: list[Recommendation], fixed_day: date
) -> None:
    page = client.get(f"/studies/{actions[0].study_id}/actions?order=sideways").text
    assert _texts(page) == ["C", "B", "A"]


def test_only_team_order_offers_moves_and_the_ends_cannot_move_further(
    client: TestClient, actions: list[Recommendation]
) -> None:
    base = f"/studies/{actions[0].study_id}/actions"
    assert 'data-move="' not in client.get(base).text
    assert "data-action-row" not in client.get(base).text
    page = client.get(f"{base}?order=team").text
    buttons = re.findall(r'aria-label="Move action (up|down)"( disabled)?>', page)
    assert buttons == [("up", " disabled"), ("down", ""), ("up", ""), ("down", ""),
                       ("up", ""), ("down", " disabled")]
    assert page.count('tabindex="0" data-action-row') == 3


@pytest.mark.parametrize(("moved", "direction", "expected"), [
    (1, "down", ["A", "C", "B"]),
    (1, "up", ["B", "A", "C"]),
    (2, "up", ["A", "C", "B"]),
    (0, "down", ["B", "A", "C"]),
])
def test_a_move_swaps_the_action_with_its_neighbour_and_htmx_gets_the_section(
    client: TestClient, session: Session, actions: list[Recommendation], moved: int,
    direction: str, expected: list[str]
) -> None:
    action = actions[moved]
    response = _move(client, action, direction)
    assert response.status_code == 200
    assert response.text.lstrip().startswith('<section class="panel record" id="actions-section"')
    assert _texts(response.text) == expected
    assert re.search(rf'<tr id="action-{action.id}"[^>]* autofocus>', response.text)
    assert _team_order(session, action.study_id) == expected


@pytest.mark.parametrize(("moved", "direction"), [(0, "up"), (2, "down")])
def test_an_action_at_either_end_stays_put_and_nothing_is_logged(
    client: TestClient, session: Session, actions: list[Recommendation], moved: int,
    direction: str
) -> None:
    positions = [a.position for a in actions]
    response = _move(client, actions[moved], direction)
    assert response.status_code == 200
    assert _texts(response.text) == ["A", "B", "C"]
    session.expire_all()
    assert [a.position for a in actions] == positions
    assert session.exec(select(ChangeLogEntry).where(ChangeLogEntry.field == "position")
                        ).all() == []


def test_a_move_is_logged_as_two_position_changes_signed_by_the_scribe(
    client: TestClient, session: Session, actions: list[Recommendation]
) -> None:
    (first, first_at), (second, second_at) = [(a.id, a.position) for a in actions[:2]]
    _move(client, actions[0], "down")
    logged = session.exec(
        select(ChangeLogEntry.entity_id, ChangeLogEntry.old_value, ChangeLogEntry.new_value,
               ChangeLogEntry.author)
        .where(ChangeLogEntry.field == "position").order_by(col(ChangeLogEntry.entity_id))
    ).all()
    assert list(logged) == [
        (first, str(first_at), str(second_at), "Test Scribe"),
        (second, str(second_at), str(first_at), "Test Scribe"),
    ]


@pytest.mark.parametrize("direction", ["sideways", "", "UP"])
def test_a_bad_direction_is_refused_with_422_and_nothing_moves(
    client: TestClient, session: Session, actions: list[Recommendation], direction: str
) -> None:
    refused = _move(client, actions[1], direction)
    assert refused.status_code == 422
    assert (f"Not moved: an action moves &#39;up&#39; or &#39;down&#39; in the team order "
            f"(got &#39;{direction}&#39;).") in refused.text
    assert _texts(refused.text) == ["A", "B", "C"]  # answered in team order
    assert _team_order(session, actions[0].study_id) == ["A", "B", "C"]
    plain = _move(client, actions[1], direction, htmx=False)
    assert plain.status_code == 422 and "<html" in plain.text


def test_an_action_of_another_study_is_a_404_and_stays_put(
    client: TestClient, session: Session, actions: list[Recommendation]
) -> None:
    other = make_scenario_tree(session).study_id
    response = client.post(f"/studies/{other}/actions/{actions[1].id}/move",
                           data={"direction": "up"})
    assert response.status_code == 404
    assert _team_order(session, actions[0].study_id) == ["A", "B", "C"]


def test_without_javascript_a_move_redirects_to_the_team_order_at_the_moved_row(
    client: TestClient, session: Session, actions: list[Recommendation]
) -> None:
    action = actions[2]
    response = _move(client, action, "up", htmx=False)
    assert response.status_code == 303
    assert response.headers["location"].endswith(
        f"/studies/{action.study_id}/actions?order=team#action-{action.id}")
    page = client.get(response.headers["location"]).text
    assert _texts(page) == ["A", "C", "B"]


def test_other_changes_made_in_team_order_return_to_team_order(
    client: TestClient, actions: list[Recommendation]
) -> None:
    base = f"/studies/{actions[0].study_id}/actions"
    added = client.post(f"{base}?order=team", data={"text": "D: check the vent"},
                        follow_redirects=False)
    assert added.headers["location"].endswith(f"{base}?order=team")
    editing = client.get(f"{base}/{actions[1].id}/edit?order=team").text
    assert f'action="http://testserver{base}/{actions[1].id}?order=team"' in editing
    assert 'colspan="8"' in editing  # the edit row spans the extra No. column
    confirm = client.get(f"{base}/{actions[1].id}/delete?order=team").text
    assert f'href="http://testserver{base}?order=team">Keep it' in confirm


def test_the_worksheet_lists_a_scenarios_recommendations_in_team_order(
    client: TestClient, session: Session, scenario: Scenario, actions: list[Recommendation]
) -> None:
    _move(client, actions[2], "up")
    deviation = session.get(Deviation, scenario.deviation_id)
    assert deviation is not None
    page = client.get(f"/studies/{scenario.study_id}/nodes/{deviation.node_id}").text
    shown = [int(found) for found in re.findall(rf'id="rec-{scenario.id}-(\d+)"', page)]
    assert shown == [actions[0].id, actions[2].id, actions[1].id]


def test_tied_positions_are_renumbered_so_the_move_still_happens(
    session: Session, actions: list[Recommendation]
) -> None:
    for action in actions:  # as hand-made data might leave them
        action.position = 0
        session.add(action)
    session.commit()
    shift_action(session=session, action_id=actions[0].id, study_id=actions[0].study_id,
                direction="down")
    assert _team_order(session, actions[0].study_id) == ["B", "A", "C"]
