"""Actions: recommendations with owner, due date, status and the scenarios they address."""

from dataclasses import dataclass, replace
from datetime import date
from typing import Annotated

from fastapi import APIRouter, Depends, Form, Request
from starlette.responses import RedirectResponse, Response

from app.routes.deps import SessionDep, read_page_edit, read_seen
from app.routes.rendering import is_htmx, render
from app.services.record import actions as action_service
from app.services.record.action_inputs import (
    ActionInputError,
    ActionOrder,
    read_order,
    read_scenario_id,
)
from app.services.record.actions_page import ActionForm, order_query, read_actions_page

router = APIRouter(prefix="/studies/{study_id}")
TEMPLATE = "record/actions/list.html"


def today() -> date:
    """Today's date (a dependency, so tests can fix the day)."""
    return date.today()


TodayDep = Annotated[date, Depends(today)]
TextForm = Annotated[str, Form()]


@dataclass(frozen=True)
class ListView:
    """The day overdue is judged on and the order the list is shown in."""

    today: date
    order: ActionOrder


def list_view(day: TodayDep, order: str = "due") -> ListView:
    """Today and the order asked for (?order=team); every actions route answers in it."""
    return ListView(day, read_order(order))


ViewDep = Annotated[ListView, Depends(list_view)]


def _page(request: Request, session: SessionDep, study_id: int, view: ListView,
          form: ActionForm | None = None, status_code: int = 200,
          focus_id: int | None = None) -> Response:
    page = read_actions_page(session=session, study_id=study_id, today=view.today,
                             order=view.order)
    context = {"page": page, "form": form or ActionForm(), "focus_id": focus_id}
    block = "actions_section" if is_htmx(request) else None
    return render(request, TEMPLATE, context, block=block, status_code=status_code)


def _done(request: Request, session: SessionDep, study_id: int, view: ListView,
          focus_id: int | None = None) -> Response:
    """htmx gets the refreshed section; a plain form post goes back to the page (and row)."""
    if is_htmx(request):
        return _page(request, session, study_id, view, focus_id=focus_id)
    url = f"{request.url_for('read_actions', study_id=study_id)}{order_query(view.order)}"
    anchor = f"#action-{focus_id}" if focus_id is not None else ""
    return RedirectResponse(url + anchor, status_code=303)


def _refused(request: Request, session: SessionDep, study_id: int, view: ListView,
             error: ActionInputError, action_id: int | None,
             values: dict[str, str]) -> Response:
    form = ActionForm(action_id, values, error.field, error.message)
    return _page(request, session, study_id, view, form, status_code=422)


@router.get("/actions", name="read_actions")
def read_actions(request: Request, study_id: int, session: SessionDep, view: ViewDep) -> Response:
    """Every recommendation by due date or in team order, with the gaps they address."""
    return _page(request, session, study_id, view)


@router.post("/actions", name="create_action")
def create_action(
    request: Request, study_id: int, session: SessionDep, view: ViewDep, text: TextForm = "",
    owner: TextForm = "", due_date: TextForm = "", expected_rrf: TextForm = "",
) -> Response:
    """Add an open recommendation."""
    values = {"text": text, "owner": owner, "due_date": due_date, "expected_rrf": expected_rrf}
    try:
        action_service.add_action(session=session, study_id=study_id, text=text, owner=owner,
                                     due_date=due_date, expected_rrf=expected_rrf)
    except ActionInputError as error:
        return _refused(request, session, study_id, view, error, None, values)
    return _done(request, session, study_id, view)


@router.get("/actions/{action_id}/edit", name="edit_action")
def edit_action(
    request: Request, study_id: int, action_id: int, session: SessionDep, view: ViewDep
) -> Response:
    """The list with one action open for editing."""
    action_service.get_action(session=session, action_id=action_id, study_id=study_id)
    return _page(request, session, study_id, view, ActionForm(action_id))


@router.post("/actions/{action_id}", name="update_action")
async def update_action(
    request: Request, study_id: int, action_id: int, session: SessionDep, view: ViewDep,
    text: TextForm = "", owner: TextForm = "", due_date: TextForm = "", status: TextForm = "open",
    status_reason: TextForm = "", expected_rrf: TextForm = "",
) -> Response:
    """Save the fields the person changed; a rejected action needs a reason; 409 on a conflict."""
    values = {"text": text, "owner": owner, "due_date": due_date, "status": status,
              "status_reason": status_reason, "expected_rrf": expected_rrf}
    posted = await request.form()
    edit = read_page_edit(posted)
    try:
        action_service.save_action(session=session, action_id=action_id, changes=values,
                                   study_id=study_id, edit=edit, seen=read_seen(posted),
                                   resolution=str(posted.get("resolution") or ""))
    except ActionInputError as error:
        return _refused(request, session, study_id, view, error, action_id, values)
    except action_service.ActionConflictError as conflict:
        form = ActionForm(action_id, values, conflicts=conflict.conflicts,
                          page_version=edit.version,
                          originals={k: str(v) for k, v in edit.originals.items()})
        return _page(request, session, study_id, view, form, status_code=409)
    return _done(request, session, study_id, view)


@router.post("/actions/{action_id}/move", name="move_action")
def move_action(
    request: Request, study_id: int, action_id: int, session: SessionDep, view: ViewDep,
    direction: TextForm = "",
) -> Response:
    """Move an action up or down the team order; the page answers in team order, on that row."""
    team = replace(view, order=ActionOrder.TEAM)
    try:
        action_service.shift_action(session=session, action_id=action_id, study_id=study_id,
                                   direction=direction)
    except ActionInputError as error:
        return _refused(request, session, study_id, team, error, None, {"direction": direction})
    return _done(request, session, study_id, team, focus_id=action_id)


@router.get("/actions/{action_id}/delete", name="confirm_delete_action")
def confirm_delete_action(
    request: Request, study_id: int, action_id: int, session: SessionDep, view: ViewDep
) -> Response:
    """Ask before deleting (the page for browsers without JavaScript)."""
    action = action_service.get_action(session=session, action_id=action_id, study_id=study_id)
    context = {"action": action, "order_query": order_query(view.order)}
    return render(request, "record/actions/confirm_delete.html", context)


@router.post("/actions/{action_id}/delete", name="delete_action")
def delete_action(
    request: Request, study_id: int, action_id: int, session: SessionDep, view: ViewDep
) -> Response:
    """Delete an action and its links."""
    action_service.remove_action(session=session, action_id=action_id, study_id=study_id)
    return _done(request, session, study_id, view)


@router.post("/actions/{action_id}/scenarios", name="link_action_scenario")
def link_action_scenario(
    request: Request, study_id: int, action_id: int, session: SessionDep, view: ViewDep,
    scenario_id: TextForm = "",
) -> Response:
    """The action now addresses one more scenario."""
    try:
        chosen = read_scenario_id(scenario_id)
        action_service.link_scenario(session=session, action_id=action_id, scenario_id=chosen,
                                     study_id=study_id)
    except ActionInputError as error:
        values = {"scenario_id": scenario_id}
        return _refused(request, session, study_id, view, error, action_id, values)
    return _done(request, session, study_id, view)


@router.post("/actions/{action_id}/scenarios/{scenario_id}/delete",
             name="unlink_action_scenario")
def unlink_action_scenario(
    request: Request, study_id: int, action_id: int, scenario_id: int, session: SessionDep,
    view: ViewDep,
) -> Response:
    """The action no longer addresses this scenario."""
    action_service.unlink_scenario(session=session, action_id=action_id, scenario_id=scenario_id,
                                   study_id=study_id)
    return _done(request, session, study_id, view)
