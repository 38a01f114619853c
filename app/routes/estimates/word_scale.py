"""The team word scale page: the words the team uses and the number adopted for each."""

from typing import Annotated

from fastapi import APIRouter, Form, Request
from starlette.responses import RedirectResponse, Response

from app.likelihood.estimates import EstimateUnit
from app.routes.deps import AuthorDep, SessionDep
from app.routes.rendering import render
from app.routes.urls import path_for
from app.services.estimates import rounds, views, word_list
from app.services.study.errors import FieldInputError
from app.services.study.tree import get_study

router = APIRouter(prefix="/studies/{study_id}")
ListForm = Annotated[str, Form(max_length=6000)]


def _page(request: Request, session: SessionDep, study_id: int,
          texts: dict[str, str] | None = None, error: FieldInputError | None = None) -> Response:
    saved = {unit.value: word_list.word_list_text(session, study_id, unit)
             for unit in EstimateUnit}
    context = {"study": get_study(session, study_id), "study_id": study_id,
               "texts": texts or saved, "error": error,
               "rounds": views.word_rounds(session=session, study_id=study_id)}
    return render(request, "estimates/word_scale.html", context,
                  status_code=422 if error else 200)


@router.get("/word-scale", name="read_word_scale")
def read_word_scale(request: Request, study_id: int, session: SessionDep) -> Response:
    """The words and adopted numbers, one list per unit."""
    return _page(request, session, study_id)


@router.post("/word-scale", name="update_word_scale")
def update_word_scale(request: Request, study_id: int, session: SessionDep,
                      probability: ListForm = "", per_year: ListForm = "") -> Response:
    """Save both lists; a wrong line saves nothing and keeps what was typed."""
    texts = {"probability": probability, "per_year": per_year}
    try:
        for unit in EstimateUnit:
            word_list.read_word_lines(texts[unit.value], unit, unit.value)
        for unit in EstimateUnit:
            word_list.save_word_list(session=session, study_id=study_id, unit=unit,
                                     text=texts[unit.value])
    except FieldInputError as error:
        return _page(request, session, study_id, texts, error)
    return _back(request, study_id)


def _back(request: Request, study_id: int) -> Response:
    return RedirectResponse(path_for(request, "read_word_scale", study_id=study_id),
                            status_code=303)


@router.post("/word-scale/round", name="create_word_round")
def create_word_round(request: Request, study_id: int, session: SessionDep,
                      author: AuthorDep) -> Response:
    """A private round on every word of the list (participants answer each on their page)."""
    try:
        rounds.open_word_rounds(session=session, study_id=study_id, author=author)
    except FieldInputError as error:
        return _page(request, session, study_id, error=error)
    return _back(request, study_id)


@router.post("/word-scale/reveal", name="reveal_word_round")
def reveal_word_round(request: Request, study_id: int, session: SessionDep) -> Response:
    """Show each word's estimates and spread to the room."""
    try:
        word_list.reveal_word_rounds(session=session, study_id=study_id)
    except FieldInputError as error:
        return _page(request, session, study_id, error=error)
    return _back(request, study_id)


@router.post("/word-scale/adopt", name="adopt_word_round")
def adopt_word_round(request: Request, study_id: int, session: SessionDep) -> Response:
    """Adopt each word's geometric mean; the team may edit the numbers afterwards."""
    try:
        word_list.adopt_word_means(session=session, study_id=study_id)
    except FieldInputError as error:
        return _page(request, session, study_id, error=error)
    return _back(request, study_id)
