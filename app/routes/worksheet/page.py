"""The node worksheet and its live value edits."""

from typing import Annotated, Any

from fastapi import APIRouter, Form, Request
from starlette.responses import RedirectResponse, Response
from starlette.routing import NoMatchFound

from app.db.ids import read_row_id
from app.routes.deps import SessionDep, author_name
from app.routes.rendering import is_htmx, render
from app.routes.urls import empty_worksheet_url, worksheet_url
from app.services.study.conflicts import PageEdit
from app.services.study.tree import get_study
from app.services.worksheet import page as worksheet_service
from app.services.worksheet.edits import FieldReply, edit_step_value
from app.services.worksheet.sheet_rows import deviation_part

# The scenarios the scribe's page has open in full, sent by worksheet.js with every redraw of
# a large node, so a redraw keeps them open.
OPEN_HEADER = "X-Tallyroom-Open"

router = APIRouter(prefix="/studies/{study_id}")


def route_exists(request: Request, name: str, **params: int) -> bool:
    """True when another area has registered the route (so a link to it can show)."""
    try:
        request.app.url_path_for(name, **params)
    except NoMatchFound:
        return False
    return True


def render_worksheet(request: Request, session: SessionDep, study_id: int, node_id: int,
                     *, block: str | None = None, status_code: int = 200,
                     **extra: Any) -> Response:
    """The worksheet page, or only its #worksheet region for htmx."""
    page = worksheet_service.build_worksheet_page(
        session=session, study_id=study_id, node_id=node_id, author=author_name(request),
        focus_id=str(extra.get("focus_id") or ""), open_ids=open_scenarios(request))
    context = {"page": page, "study": page.study, "focus_id": "", "notice": "", "typed": {},
               "links": worksheet_links(request), **extra}
    return render(request, "worksheet/page.html", context, block=block,
                  status_code=status_code)


def worksheet_links(request: Request) -> dict[str, bool]:
    """Which other areas' pages a worksheet row links to (those whose routes exist)."""
    return {"step_details": route_exists(request, "read_step_details", study_id=0, step_id=0),
            "proof_test": route_exists(request, "read_proof_test", study_id=0),
            "actions": route_exists(request, "read_actions", study_id=0),
            "estimate_round": route_exists(request, "read_new_round", study_id=0, step_id=0)}


def open_scenarios(request: Request) -> tuple[int, ...]:
    """The scenario ids the page says it has open (digits only; anything else is ignored)."""
    ids = (read_row_id(part) for part in request.headers.get(OPEN_HEADER, "")[:200].split(","))
    return tuple(row_id for row_id in ids if row_id is not None)


def render_field_reply(request: Request, reply: FieldReply) -> Response:
    """Results region (main swap) with the field's line and the totals out of band.

    A conflict or a deleted row answers 409 with only the field's line, retargeted to it.
    """
    response = render(request, "worksheet/field_reply.html", {"edit": reply},
                      status_code=reply.status_code)
    if reply.conflict or reply.gone:
        response.headers["HX-Retarget"] = f"#{reply.field_id}-said"
        response.headers["HX-Reswap"] = "outerHTML"
    return response


@router.get("/nodes/{node_id}", name="read_worksheet")
def read_worksheet(request: Request, study_id: int, node_id: int, session: SessionDep,
                   focus: str = "") -> Response:
    """One node's worksheet: deviations, scenarios, steps, figures and ladders."""
    block = "worksheet" if is_htmx(request) else None
    return render_worksheet(request, session, study_id, node_id, block=block, focus_id=focus)


@router.get("/deviations/{deviation_id}/rows", name="read_deviation_rows")
def read_deviation_rows(request: Request, study_id: int, deviation_id: int,
                        session: SessionDep, start: int = 0) -> Response:
    """The next part of a large node's deviation: slim rows from `start` (htmx swaps them in
    as they scroll into view; without JavaScript a page of its own)."""
    part = deviation_part(session, study_id, deviation_id, start)
    template = "worksheet/rows.html" if is_htmx(request) else "worksheet/rows_page.html"
    return render(request, template, {"part": part})


@router.get("/scenarios/{scenario_id}/open", name="read_open_scenario")
def read_open_scenario(request: Request, study_id: int, scenario_id: int,
                       session: SessionDep) -> Response:
    """One scenario's full editing row, in place of its slim row, the cursor in its cause."""
    view, node, categories = worksheet_service.opened_scenario(
        session=session, study_id=study_id, scenario_id=scenario_id)
    if not is_htmx(request):
        return RedirectResponse(f"{worksheet_url(request, study_id, node.id or 0)}"
                                f"?focus=sc-{scenario_id}-cause", status_code=303)
    context = {"sv": view, "study_id": study_id, "node": node, "page": {"categories": categories},
               "focus_id": f"sc-{scenario_id}-cause", "typed": {}, "notice": "",
               "links": worksheet_links(request)}
    return render(request, "worksheet/scenario_open.html", context)


@router.get("/worksheet", name="read_first_worksheet")
def read_first_worksheet(request: Request, study_id: int, session: SessionDep,
                         node: str = "") -> Response:
    """Open the worksheet at the chosen node, else the first; a study with none gets the
    empty worksheet, where the first node is added."""
    node_id = worksheet_service.picked_node_id(session=session, study_id=study_id, picked=node)
    if node_id is None:
        study = get_study(session, study_id)
        return render(request, "worksheet/empty.html", {"study": study, "focus_id": "add-node"})
    return RedirectResponse(worksheet_url(request, study_id, node_id), status_code=303)


@router.post("/steps/{step_id}/value", name="update_step_value")
def update_step_value(
    request: Request, study_id: int, step_id: int, session: SessionDep,
    value_text: Annotated[str, Form()] = "", client: Annotated[str, Form(max_length=64)] = "",
    seq: Annotated[int | None, Form()] = None, version: Annotated[int | None, Form()] = None,
    orig_value_text: Annotated[str | None, Form(max_length=100)] = None,
) -> Response:
    """Parse, validate and save a step's value as typed; answer with the recomputed scenario."""
    originals = {} if orig_value_text is None else {"value_text": orig_value_text}
    edit = PageEdit(version=version, originals=originals, client=client, seq=seq)
    reply = edit_step_value(session=session, study_id=study_id, step_id=step_id, text=value_text,
                            edit=edit)
    if reply is None:  # a newer edit of this field already arrived: drop this one
        return Response(status_code=204, headers={"X-Tallyroom-Stale": "1"})
    if is_htmx(request):
        response = render_field_reply(request, reply)
        response.headers["X-Tallyroom-Seq"] = str(seq if seq is not None else "")
        return response
    return answer_without_script(request, session, study_id, reply, value_text)


def answer_without_script(request: Request, session: SessionDep, study_id: int,
                          reply: FieldReply, typed: str = "") -> Response:
    """A plain form post: back to the worksheet, or the page again saying what went wrong."""
    anchor = f"scenario-{reply.scenario.item.scenario.id}" if reply.scenario else ""
    if reply.conflict or reply.gone:
        node_id = reply.node_id or worksheet_service.first_node_id(session=session,
                                                                   study_id=study_id)
        if node_id is None:
            return RedirectResponse(empty_worksheet_url(request, study_id), status_code=303)
        return render_worksheet(request, session, study_id, node_id, status_code=409,
                                edit=reply, focus_id=reply.field_id)
    if reply.error:
        return render_worksheet(request, session, study_id, reply.node_id,
                                status_code=422, notice=reply.error,
                                typed={reply.field_id: typed}, focus_id=reply.field_id)
    return RedirectResponse(worksheet_url(request, study_id, reply.node_id, anchor),
                            status_code=303)
