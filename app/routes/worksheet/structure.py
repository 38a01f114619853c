"""Worksheet rows (nodes, deviations, scenarios, steps, safeguards): create, edit, move, delete.

The five row kinds share one set of helpers; each kind's routes are written out below with their
paths and names (create_step, update_step, move_step, read_step_delete, delete_step).
"""

from typing import Any

from fastapi import APIRouter, Request
from starlette.responses import RedirectResponse, Response

from app.db.ids import read_row_id
from app.routes.deps import ORIGINAL_PREFIX, PAGE_FIELDS, AuthorDep, SessionDep, read_page_edit
from app.routes.rendering import is_htmx, render
from app.routes.urls import empty_worksheet_url, path_for, worksheet_url
from app.routes.worksheet.page import answer_without_script, render_field_reply, render_worksheet
from app.services.study.tree import NotFoundError
from app.services.worksheet import structure
from app.services.worksheet import undo as structure_undo
from app.services.worksheet.edits import edit_field, field_id
from app.services.worksheet.page import first_node_id
from app.services.worksheet.structure import node_id_of

router = APIRouter(prefix="/studies/{study_id}")
FIRST_FIELD = {"node": "name", "deviation": "guideword", "scenario": "cause",
               "step": "description", "safeguard": "description"}
NOT_VALUES = {"parent_id", "after_id", "node_id", "focus", "offset", "client", "seq"}


async def read_form(request: Request) -> dict[str, Any]:
    """The posted form; a field sent twice (hidden + checkbox) keeps every value.

    Any: form values are text or lists of text until the services read them (a boundary).
    """
    form = await request.form()
    return {key: (values if len(values := form.getlist(key)) > 1 else values[0])
            for key in form}


def _int(value: Any) -> int | None:  # Any: one raw form value
    text = str(value or "").strip()
    return -1 if text == "-1" else read_row_id(text)


def _after_change(request: Request, session: SessionDep, study_id: int, node_id: int | None,
                  focus_id: str = "", notice: str = "", status_code: int = 200) -> Response:
    """Answer a structure change: the #worksheet region for htmx, else back to the page."""
    if node_id is None:
        node_id = first_node_id(session=session, study_id=study_id)
        if node_id is None:
            return _go(request, empty_worksheet_url(request, study_id))
    if is_htmx(request) or status_code >= 400:
        block = "worksheet" if is_htmx(request) else None
        return render_worksheet(request, session, study_id, node_id, block=block,
                                status_code=status_code, focus_id=focus_id, notice=notice)
    return RedirectResponse(worksheet_url(request, study_id, node_id, focus_id), status_code=303)


def _go(request: Request, url: str) -> Response:
    """A full-page move: HX-Redirect for htmx, a 303 otherwise."""
    if is_htmx(request):
        return Response(status_code=200, headers={"HX-Redirect": url})
    return RedirectResponse(url, status_code=303)


async def _create(request: Request, session: SessionDep, study_id: int, kind: str) -> Response:
    """Add a row of this kind; htmx gets the worksheet with the new row focused."""
    form = await read_form(request)
    values = {k: str(v) for k, v in form.items() if k not in NOT_VALUES}
    try:
        row = structure.create_row(session=session, study_id=study_id, kind_name=kind,
                                   parent_id=_int(form.get("parent_id")),
                                   after_id=_int(form.get("after_id")), values=values)
    except structure.StructureInputError as err:
        return _after_change(request, session, study_id, _int(form.get("node_id")),
                             notice=err.message, status_code=422)
    if kind == "node":
        return _go(request, f"{worksheet_url(request, study_id, row.id)}?focus=node-{row.id}-name")
    return _after_change(request, session, study_id, node_id_of(session, kind, row),
                         focus_id=field_id(kind, row.id, FIRST_FIELD[kind]))


async def _update(request: Request, session: SessionDep, study_id: int, kind: str,
                  row_id: int) -> Response:
    """Save the sent fields; htmx gets the recomputed figures and the field's line."""
    form = await read_form(request)
    changes = {k: v for k, v in form.items()
               if k not in NOT_VALUES | PAGE_FIELDS and not k.startswith(ORIGINAL_PREFIX)}
    reply = edit_field(session=session, study_id=study_id, kind_name=kind, row_id=row_id,
                       changes=changes, edit=read_page_edit(form),
                       resolution=str(form.get("resolution") or ""))
    if is_htmx(request):
        return render_field_reply(request, reply)
    if reply.conflict or reply.gone:
        return answer_without_script(request, session, study_id, reply)
    return _after_change(request, session, study_id, reply.node_id,
                         focus_id=reply.field_id, notice=reply.error,
                         status_code=422 if reply.error else 200)


async def _move(request: Request, session: SessionDep, study_id: int, kind: str,
                row_id: int) -> Response:
    """Move the row up or down among its siblings, keeping the scribe's focus."""
    form = await read_form(request)
    row = structure.move_row(session=session, study_id=study_id, kind_name=kind,
                             row_id=row_id, offset=-1 if _int(form.get("offset")) == -1 else 1)
    focus = str(form.get("focus") or field_id(kind, row_id, FIRST_FIELD[kind]))
    return _after_change(request, session, study_id, node_id_of(session, kind, row),
                         focus_id=focus)


def _read_delete(request: Request, session: SessionDep, study_id: int, kind: str,
                 row_id: int) -> Response:
    """Ask before deleting, saying what goes with the row (for browsers without JavaScript)."""
    question = structure_undo.question_for(session=session, study_id=study_id,
                                           kind_name=kind, row_id=row_id)
    row = structure.get_row(session, structure.kind_of(kind), study_id, row_id)
    action = path_for(request, f"delete_{kind}", study_id=study_id, row_id=row_id)
    context = {"question": question, "study_id": study_id, "kind": kind, "action": action,
               "back": worksheet_url(request, study_id, node_id_of(session, kind, row))}
    return render(request, "worksheet/confirm_delete.html", context)


def _delete(request: Request, session: SessionDep, author: str, study_id: int, kind: str,
            row_id: int) -> Response:
    """Delete the row and everything under it; the delete can be undone."""
    row = structure.get_row(session, structure.kind_of(kind), study_id, row_id)
    node_id = None if kind == "node" else node_id_of(session, kind, row)
    try:
        structure_undo.delete_row(session=session, study_id=study_id, kind_name=kind,
                                  row_id=row_id, author=author)
    except structure.StructureInputError as err:
        return _after_change(request, session, study_id, node_id, notice=err.message,
                             status_code=409)
    if kind == "node":
        node_id = first_node_id(session=session, study_id=study_id)
        return _go(request, worksheet_url(request, study_id, node_id) if node_id
                   else empty_worksheet_url(request, study_id))
    return _after_change(request, session, study_id, node_id, focus_id="undo-button")


@router.post("/undo", name="undo_delete")
async def undo_delete(request: Request, study_id: int, session: SessionDep,
                      author: AuthorDep) -> Response:
    """Bring back this person's newest delete (each person undoes their own)."""
    form_node = _int((await read_form(request)).get("node_id"))
    try:
        kind, row = structure_undo.undo_last_delete(session=session, study_id=study_id,
                                                    author=author)
    except structure_undo.NothingToUndoError as err:
        node_id = form_node if form_node and _node_exists(session, study_id, form_node) else None
        return _after_change(request, session, study_id, node_id, notice=str(err),
                             status_code=409)
    node_id = node_id_of(session, kind, row)
    if kind == "node":
        return _go(request, worksheet_url(request, study_id, node_id))
    return _after_change(request, session, study_id, node_id,
                         focus_id=field_id(kind, row.id, FIRST_FIELD[kind]))


def _node_exists(session: SessionDep, study_id: int, node_id: int) -> bool:
    try:
        structure.get_row(session, structure.kind_of("node"), study_id, node_id)
    except NotFoundError:
        return False
    return True


# nodes

@router.post("/nodes", name="create_node")
async def create_node(request: Request, study_id: int, session: SessionDep) -> Response:
    """Add a node."""
    return await _create(request, session, study_id, "node")


@router.post("/nodes/{row_id}", name="update_node")
async def update_node(request: Request, study_id: int, row_id: int,
                       session: SessionDep) -> Response:
    """Save the sent fields of a node."""
    return await _update(request, session, study_id, "node", row_id)


@router.post("/nodes/{row_id}/move", name="move_node")
async def move_node(request: Request, study_id: int, row_id: int,
                     session: SessionDep) -> Response:
    """Move a node up or down among its siblings."""
    return await _move(request, session, study_id, "node", row_id)


@router.get("/nodes/{row_id}/delete", name="read_node_delete")
def read_node_delete(request: Request, study_id: int, row_id: int,
                     session: SessionDep) -> Response:
    """Ask before deleting a node."""
    return _read_delete(request, session, study_id, "node", row_id)


@router.post("/nodes/{row_id}/delete", name="delete_node")
def delete_node(request: Request, study_id: int, row_id: int, session: SessionDep,
               author: AuthorDep) -> Response:
    """Delete a node and everything under it."""
    return _delete(request, session, author, study_id, "node", row_id)


# deviations

@router.post("/deviations", name="create_deviation")
async def create_deviation(request: Request, study_id: int, session: SessionDep) -> Response:
    """Add a deviation."""
    return await _create(request, session, study_id, "deviation")


@router.post("/deviations/{row_id}", name="update_deviation")
async def update_deviation(request: Request, study_id: int, row_id: int,
                            session: SessionDep) -> Response:
    """Save the sent fields of a deviation."""
    return await _update(request, session, study_id, "deviation", row_id)


@router.post("/deviations/{row_id}/move", name="move_deviation")
async def move_deviation(request: Request, study_id: int, row_id: int,
                          session: SessionDep) -> Response:
    """Move a deviation up or down among its siblings."""
    return await _move(request, session, study_id, "deviation", row_id)


@router.get("/deviations/{row_id}/delete", name="read_deviation_delete")
def read_deviation_delete(request: Request, study_id: int, row_id: int,
                          session: SessionDep) -> Response:
    """Ask before deleting a deviation."""
    return _read_delete(request, session, study_id, "deviation", row_id)


@router.post("/deviations/{row_id}/delete", name="delete_deviation")
def delete_deviation(request: Request, study_id: int, row_id: int, session: SessionDep,
                    author: AuthorDep) -> Response:
    """Delete a deviation and everything under it."""
    return _delete(request, session, author, study_id, "deviation", row_id)


# scenarios

@router.post("/scenarios", name="create_scenario")
async def create_scenario(request: Request, study_id: int, session: SessionDep) -> Response:
    """Add a scenario."""
    return await _create(request, session, study_id, "scenario")


@router.post("/scenarios/{row_id}", name="update_scenario")
async def update_scenario(request: Request, study_id: int, row_id: int,
                           session: SessionDep) -> Response:
    """Save the sent fields of a scenario."""
    return await _update(request, session, study_id, "scenario", row_id)


@router.post("/scenarios/{row_id}/move", name="move_scenario")
async def move_scenario(request: Request, study_id: int, row_id: int,
                         session: SessionDep) -> Response:
    """Move a scenario up or down among its siblings."""
    return await _move(request, session, study_id, "scenario", row_id)


@router.get("/scenarios/{row_id}/delete", name="read_scenario_delete")
def read_scenario_delete(request: Request, study_id: int, row_id: int,
                         session: SessionDep) -> Response:
    """Ask before deleting a scenario."""
    return _read_delete(request, session, study_id, "scenario", row_id)


@router.post("/scenarios/{row_id}/delete", name="delete_scenario")
def delete_scenario(request: Request, study_id: int, row_id: int, session: SessionDep,
                   author: AuthorDep) -> Response:
    """Delete a scenario and everything under it."""
    return _delete(request, session, author, study_id, "scenario", row_id)


# steps

@router.post("/steps", name="create_step")
async def create_step(request: Request, study_id: int, session: SessionDep) -> Response:
    """Add a step."""
    return await _create(request, session, study_id, "step")


@router.post("/steps/{row_id}", name="update_step")
async def update_step(request: Request, study_id: int, row_id: int,
                       session: SessionDep) -> Response:
    """Save the sent fields of a step."""
    return await _update(request, session, study_id, "step", row_id)


@router.post("/steps/{row_id}/move", name="move_step")
async def move_step(request: Request, study_id: int, row_id: int,
                     session: SessionDep) -> Response:
    """Move a step up or down among its siblings."""
    return await _move(request, session, study_id, "step", row_id)


@router.get("/steps/{row_id}/delete", name="read_step_delete")
def read_step_delete(request: Request, study_id: int, row_id: int,
                     session: SessionDep) -> Response:
    """Ask before deleting a step."""
    return _read_delete(request, session, study_id, "step", row_id)


@router.post("/steps/{row_id}/delete", name="delete_step")
def delete_step(request: Request, study_id: int, row_id: int, session: SessionDep,
               author: AuthorDep) -> Response:
    """Delete a step and everything under it."""
    return _delete(request, session, author, study_id, "step", row_id)


# safeguards

@router.post("/safeguards", name="create_safeguard")
async def create_safeguard(request: Request, study_id: int, session: SessionDep) -> Response:
    """Add a safeguard."""
    return await _create(request, session, study_id, "safeguard")


@router.post("/safeguards/{row_id}", name="update_safeguard")
async def update_safeguard(request: Request, study_id: int, row_id: int,
                            session: SessionDep) -> Response:
    """Save the sent fields of a safeguard."""
    return await _update(request, session, study_id, "safeguard", row_id)


@router.post("/safeguards/{row_id}/move", name="move_safeguard")
async def move_safeguard(request: Request, study_id: int, row_id: int,
                          session: SessionDep) -> Response:
    """Move a safeguard up or down among its siblings."""
    return await _move(request, session, study_id, "safeguard", row_id)


@router.get("/safeguards/{row_id}/delete", name="read_safeguard_delete")
def read_safeguard_delete(request: Request, study_id: int, row_id: int,
                          session: SessionDep) -> Response:
    """Ask before deleting a safeguard."""
    return _read_delete(request, session, study_id, "safeguard", row_id)


@router.post("/safeguards/{row_id}/delete", name="delete_safeguard")
def delete_safeguard(request: Request, study_id: int, row_id: int, session: SessionDep,
                    author: AuthorDep) -> Response:
    """Delete a safeguard and everything under it."""
    return _delete(request, session, author, study_id, "safeguard", row_id)
