"""Worksheet rows (nodes, deviations, scenarios, steps, safeguards): create, edit, move, delete.

The five row kinds share one set of handlers; each kind gets its own literal paths and route
names (create_step, update_step, move_step, read_step_delete, delete_step), registered below.
"""

from collections.abc import Callable
from typing import Any

from fastapi import APIRouter, Request
from starlette.responses import RedirectResponse, Response

from app.db.ids import read_row_id
from app.routes.deps import AuthorDep, SessionDep
from app.routes.rendering import is_htmx, render
from app.routes.worksheet import render_field_reply, render_worksheet, worksheet_url
from app.services import structure, structure_undo
from app.services.worksheet import first_node_id
from app.services.worksheet_edits import edit_field, field_id, node_id_of

router = APIRouter()
PLURALS = {"node": "nodes", "deviation": "deviations", "scenario": "scenarios",
           "step": "steps", "safeguard": "safeguards"}
FIRST_FIELD = {"node": "name", "deviation": "guideword", "scenario": "cause",
               "step": "description", "safeguard": "description"}
NOT_VALUES = {"parent_id", "after_id", "node_id", "focus", "offset", "client", "seq"}


async def read_form(request: Request) -> dict[str, Any]:
    """The posted form; a field sent twice (hidden + checkbox) keeps every value."""
    form = await request.form()
    return {key: (values if len(values := form.getlist(key)) > 1 else values[0])
            for key in form}


def _int(value: Any) -> int | None:
    text = str(value or "").strip()
    return -1 if text == "-1" else read_row_id(text)


def _after_change(request: Request, session: SessionDep, study_id: int, node_id: int | None,
                  focus_id: str = "", notice: str = "", status_code: int = 200) -> Response:
    """Answer a structure change: the #worksheet region for htmx, else back to the page."""
    if node_id is None:
        node_id = first_node_id(session=session, study_id=study_id)
        if node_id is None:
            return _go(request, f"/studies/{study_id}")
    if is_htmx(request) or status_code >= 400:
        block = "worksheet" if is_htmx(request) else None
        return render_worksheet(request, session, study_id, node_id, block=block,
                                status_code=status_code, focus_id=focus_id, notice=notice)
    return RedirectResponse(worksheet_url(study_id, node_id, focus_id), status_code=303)


def _go(request: Request, url: str) -> Response:
    """A full-page move: HX-Redirect for htmx, a 303 otherwise."""
    if is_htmx(request):
        return Response(status_code=200, headers={"HX-Redirect": url})
    return RedirectResponse(url, status_code=303)


def make_create(kind: str) -> Callable[..., Any]:
    """The create handler of one row kind."""
    async def create_row(request: Request, study_id: int, session: SessionDep) -> Response:
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
            return _go(request, f"{worksheet_url(study_id, row.id)}?focus=node-{row.id}-name")
        return _after_change(request, session, study_id, node_id_of(session, kind, row),
                             focus_id=field_id(kind, row.id, FIRST_FIELD[kind]))
    return create_row


def make_update(kind: str) -> Callable[..., Any]:
    """The field-edit handler of one row kind."""
    async def update_row(request: Request, study_id: int, row_id: int,
                         session: SessionDep) -> Response:
        """Save the sent fields; htmx gets the recomputed figures and the field's line."""
        form = await read_form(request)
        changes = {k: v for k, v in form.items() if k not in NOT_VALUES}
        reply = edit_field(session=session, study_id=study_id, kind_name=kind, row_id=row_id,
                           changes=changes)
        if is_htmx(request):
            return render_field_reply(request, reply)
        return _after_change(request, session, study_id, reply.reply.node_id,
                             focus_id=reply.field_id, notice=reply.error,
                             status_code=422 if reply.error else 200)
    return update_row


def make_move(kind: str) -> Callable[..., Any]:
    """The move-up/down handler of one row kind."""
    async def move_row(request: Request, study_id: int, row_id: int,
                       session: SessionDep) -> Response:
        """Move the row up or down among its siblings, keeping the scribe's focus."""
        form = await read_form(request)
        row = structure.move_row(session=session, study_id=study_id, kind_name=kind,
                                 row_id=row_id, offset=-1 if _int(form.get("offset")) == -1
                                 else 1)
        focus = str(form.get("focus") or field_id(kind, row_id, FIRST_FIELD[kind]))
        return _after_change(request, session, study_id, node_id_of(session, kind, row),
                             focus_id=focus)
    return move_row


def make_read_delete(kind: str) -> Callable[..., Any]:
    """The ask-first page of one row kind (for browsers without JavaScript)."""
    def read_row_delete(request: Request, study_id: int, row_id: int,
                        session: SessionDep) -> Response:
        """Ask before deleting, saying what goes with the row."""
        question = structure_undo.question_for(session=session, study_id=study_id,
                                               kind_name=kind, row_id=row_id)
        row = structure.get_row(session, structure.kind_of(kind), study_id, row_id)
        context = {"question": question, "study_id": study_id, "kind": kind,
                   "action": f"/studies/{study_id}/{PLURALS[kind]}/{row_id}/delete",
                   "back": worksheet_url(study_id, node_id_of(session, kind, row))}
        return render(request, "worksheet/confirm_delete.html", context)
    return read_row_delete


def make_delete(kind: str) -> Callable[..., Any]:
    """The delete handler of one row kind (the page asked first)."""
    def delete_row(request: Request, study_id: int, row_id: int, session: SessionDep,
                   author: AuthorDep) -> Response:
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
            return _go(request, worksheet_url(study_id, node_id) if node_id
                       else f"/studies/{study_id}")
        return _after_change(request, session, study_id, node_id, focus_id="undo-button")
    return delete_row


@router.post("/studies/{study_id}/undo", name="undo_delete")
def undo_delete(request: Request, study_id: int, session: SessionDep) -> Response:
    """Bring back what the study's last delete removed."""
    try:
        kind, row = structure_undo.undo_last_delete(session=session, study_id=study_id)
    except structure_undo.NothingToUndoError as err:
        return _after_change(request, session, study_id, None, notice=str(err),
                             status_code=409)
    node_id = node_id_of(session, kind, row)
    if kind == "node":
        return _go(request, worksheet_url(study_id, node_id))
    return _after_change(request, session, study_id, node_id,
                         focus_id=field_id(kind, row.id, FIRST_FIELD[kind]))


for _kind, _plural in PLURALS.items():
    _base = f"/studies/{{study_id}}/{_plural}"
    router.add_api_route(_base, make_create(_kind), methods=["POST"], name=f"create_{_kind}")
    router.add_api_route(_base + "/{row_id}", make_update(_kind), methods=["POST"],
                         name=f"update_{_kind}")
    router.add_api_route(_base + "/{row_id}/move", make_move(_kind), methods=["POST"],
                         name=f"move_{_kind}")
    router.add_api_route(_base + "/{row_id}/delete", make_read_delete(_kind), methods=["GET"],
                         name=f"read_{_kind}_delete")
    router.add_api_route(_base + "/{row_id}/delete", make_delete(_kind), methods=["POST"],
                         name=f"delete_{_kind}")
