"""The facilitator's side of a round: open it on a step, watch who answered, type for people
without devices, reveal, agree or run another round."""

from typing import Annotated

from fastapi import APIRouter, Form, Request
from starlette.responses import RedirectResponse, Response

from app.routes.deps import AuthorDep, SessionDep
from app.routes.rendering import render
from app.routes.urls import path_for
from app.services.estimates import agreeing, answers, reading, rounds, views
from app.services.estimates.agreeing import AgreementForm
from app.services.study.errors import FieldInputError
from app.services.study.tree import get_study

router = APIRouter(prefix="/studies/{study_id}")
TextForm = Annotated[str, Form(max_length=4000)]
PAGE = "estimates/round.html"


def _round_page(request: Request, session: SessionDep, study_id: int, round_id: int,
                error: FieldInputError | None = None, form: dict[str, str] | None = None,
                ) -> Response:
    page = views.round_page(session=session, study_id=study_id, round_id=round_id)
    context = {"page": page, "study_id": study_id, "error": error, "form": form or {},
               "study": get_study(session, study_id)}
    return render(request, PAGE, context, status_code=422 if error else 200)


def _to_round(request: Request, study_id: int, round_id: int) -> Response:
    return RedirectResponse(path_for(request, "read_round", study_id=study_id,
                                     round_id=round_id), status_code=303)


@router.get("/rounds", name="read_rounds")
def read_rounds(request: Request, study_id: int, session: SessionDep) -> Response:
    """Every estimate round of the study, newest first."""
    found = views.study_rounds(session=session, study_id=study_id)
    return render(request, "estimates/rounds.html", {"rounds": found, "study_id": study_id,
                                                    "study": get_study(session, study_id)})


@router.get("/steps/{step_id}/rounds/new", name="read_new_round")
def read_new_round(request: Request, study_id: int, step_id: int,
                   session: SessionDep) -> Response:
    """The question in words and the unit, before the round opens."""
    step = rounds.get_step(session, study_id, step_id)
    context = {"step": step, "study_id": study_id, "question": reading.suggested_question(step),
               "unit": reading.step_unit_words(step), "error": None,
               "study": get_study(session, study_id)}
    return render(request, "estimates/new_round.html", context)


@router.post("/steps/{step_id}/rounds", name="create_round")
def create_round(request: Request, study_id: int, step_id: int, session: SessionDep,
                 author: AuthorDep, question: TextForm = "") -> Response:
    """Open a round on the step; the participants' pages show it at once."""
    try:
        opened = rounds.open_round(session=session, study_id=study_id, step_id=step_id,
                                   question=question, author=author)
    except FieldInputError as error:
        step = rounds.get_step(session, study_id, step_id)
        context = {"step": step, "study_id": study_id, "question": question, "error": error,
                   "unit": reading.step_unit_words(step), "study": get_study(session, study_id)}
        return render(request, "estimates/new_round.html", context, status_code=422)
    return _to_round(request, study_id, opened.id or 0)


@router.get("/rounds/{round_id}", name="read_round")
def read_round(request: Request, study_id: int, round_id: int, session: SessionDep) -> Response:
    """Who answered (not what) while open; every estimate and the figures once revealed."""
    return _round_page(request, session, study_id, round_id)


@router.get("/rounds/{round_id}/answers", name="read_round_answers")
def read_round_answers(request: Request, study_id: int, round_id: int,
                       session: SessionDep) -> Response:
    """The names of those who have answered (polled while the round is open)."""
    page = views.round_page(session=session, study_id=study_id, round_id=round_id)
    return render(request, PAGE, {"page": page, "study_id": study_id, "error": None,
                                  "form": {}}, block="answers")


@router.post("/rounds/{round_id}/estimates", name="create_scribe_estimate")
def create_scribe_estimate(request: Request, study_id: int, round_id: int, session: SessionDep,
                           person: TextForm = "", value_text: TextForm = "") -> Response:
    """The scribe types the estimate of someone without a device (hidden until the reveal)."""
    try:
        answers.give_estimate(session=session, study_id=study_id, round_id=round_id,
                              answerer=answers.Answerer(person, None), text=value_text)
    except FieldInputError as error:
        form = {"person": person, "value_text": value_text}
        return _round_page(request, session, study_id, round_id, error, form)
    return _to_round(request, study_id, round_id)


@router.post("/rounds/{round_id}/reveal", name="reveal_round")
def reveal_round(request: Request, study_id: int, round_id: int,
                 session: SessionDep) -> Response:
    """Show every estimate to the room."""
    try:
        rounds.reveal_round(session=session, study_id=study_id, round_id=round_id)
    except FieldInputError as error:
        return _round_page(request, session, study_id, round_id, error)
    return _to_round(request, study_id, round_id)


@router.post("/rounds/{round_id}/names", name="update_round_names")
def update_round_names(request: Request, study_id: int, round_id: int, session: SessionDep,
                       shown: TextForm = "") -> Response:
    """Show or hide the names beside the marks."""
    rounds.set_names_shown(session=session, study_id=study_id, round_id=round_id,
                           shown=shown == "true")
    return _to_round(request, study_id, round_id)


@router.post("/rounds/{round_id}/agreement", name="agree_round")
def agree_round(request: Request, study_id: int, round_id: int, session: SessionDep,
                method: TextForm = "", typed_text: TextForm = "",
                dissents: TextForm = "") -> Response:
    """Set the step's value and basis from the round (the change log records it)."""
    form = AgreementForm(method=method, typed_text=typed_text, dissent_lines=dissents)
    try:
        agreeing.agree_round(session=session, study_id=study_id, round_id=round_id, form=form)
    except FieldInputError as error:
        values = {"method": method, "typed_text": typed_text, "dissents": dissents}
        return _round_page(request, session, study_id, round_id, error, values)
    return _to_round(request, study_id, round_id)


@router.post("/rounds/{round_id}/next", name="create_next_round")
def create_next_round(request: Request, study_id: int, round_id: int, session: SessionDep,
                      author: AuthorDep) -> Response:
    """Another round on the same step after discussion; earlier rounds stay on the page."""
    opened = rounds.open_next_round(session=session, study_id=study_id, round_id=round_id,
                                    author=author)
    return _to_round(request, study_id, opened.id or 0)
