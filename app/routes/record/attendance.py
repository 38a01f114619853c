"""Attendance: session dates, participants and who attended which date."""

from typing import Annotated

from fastapi import APIRouter, Form, Request
from starlette.responses import RedirectResponse, Response

from app.routes.deps import SessionDep, read_page_edit, read_seen
from app.routes.rendering import is_htmx, render
from app.services.record import attendance as attendance_service
from app.services.record.attendance import Answer, AttendanceForm, AttendanceInputError
from app.services.study.conflicts import ConflictError

router = APIRouter(prefix="/studies/{study_id}")
TEMPLATE = "record/attendance/page.html"
TextForm = Annotated[str, Form()]
Marks = Annotated[list[str], Form()]


def _page(request: Request, session: SessionDep, study_id: int,
          form: AttendanceForm | None = None, status_code: int = 200) -> Response:
    page = attendance_service.read_attendance_page(session=session, study_id=study_id)
    block = "attendance_section" if is_htmx(request) else None
    return render(request, TEMPLATE, {"page": page, "form": form or AttendanceForm()},
                  block=block, status_code=status_code)


def _done(request: Request, session: SessionDep, study_id: int) -> Response:
    """htmx gets the refreshed section; a plain form post goes back to the page."""
    if is_htmx(request):
        return _page(request, session, study_id)
    url = request.url_for("read_attendance", study_id=study_id)
    return RedirectResponse(url, status_code=303)


def _refused(request: Request, session: SessionDep, study_id: int, kind: str,
             item_id: int | None, values: dict[str, str], error: AttendanceInputError) -> Response:
    form = AttendanceForm(kind, item_id, values, error.field, error.message)
    return _page(request, session, study_id, form, status_code=422)


async def _answer(request: Request) -> Answer:
    """The version and originals the edit form was loaded with, and any answer to a conflict."""
    posted = await request.form()
    return Answer(read_page_edit(posted), str(posted.get("resolution") or ""), read_seen(posted))


def _conflict(request: Request, session: SessionDep, study_id: int, kind: str, item_id: int,
              values: dict[str, str], answer: Answer, error: ConflictError) -> Response:
    """409: the row's form again with the typed text, the other person's values and the choice."""
    originals = {name: str(value) for name, value in answer.edit.originals.items()}
    form = AttendanceForm(kind, item_id, values, conflicts=error.conflicts,
                          page_version=answer.edit.version, originals=originals)
    return _page(request, session, study_id, form, status_code=409)


@router.get("/attendance", name="read_attendance")
def read_attendance(request: Request, study_id: int, session: SessionDep) -> Response:
    """Session dates, participants and the attendance matrix."""
    return _page(request, session, study_id)


@router.post("/attendance/days", name="create_session_day")
def create_session_day(request: Request, study_id: int, session: SessionDep,
                       day: TextForm = "", note: TextForm = "") -> Response:
    """Add a session date with a note."""
    try:
        attendance_service.add_day(session=session, study_id=study_id, day=day, note=note)
    except AttendanceInputError as error:
        return _refused(request, session, study_id, "day", None, {"day": day, "note": note}, error)
    return _done(request, session, study_id)


@router.get("/attendance/days/{day_id}/edit", name="edit_session_day")
def edit_session_day(request: Request, study_id: int, day_id: int,
                     session: SessionDep) -> Response:
    """The page with one session date open for editing."""
    attendance_service.get_day(session=session, study_id=study_id, day_id=day_id)
    return _page(request, session, study_id, AttendanceForm("day", day_id))


@router.post("/attendance/days/{day_id}", name="update_session_day")
async def update_session_day(request: Request, study_id: int, day_id: int, session: SessionDep,
                             day: TextForm = "", note: TextForm = "") -> Response:
    """Save what was changed in a session date (409 when someone saved it since)."""
    values, answer = {"day": day, "note": note}, await _answer(request)
    try:
        attendance_service.update_day(session=session, study_id=study_id, day_id=day_id,
                                      day=day, note=note, answer=answer)
    except AttendanceInputError as error:
        return _refused(request, session, study_id, "day", day_id, values, error)
    except ConflictError as error:
        return _conflict(request, session, study_id, "day", day_id, values, answer, error)
    return _done(request, session, study_id)


@router.post("/attendance/days/{day_id}/delete", name="delete_session_day")
def delete_session_day(request: Request, study_id: int, day_id: int,
                       session: SessionDep) -> Response:
    """Delete a session date and its attendance marks."""
    attendance_service.delete_day(session=session, study_id=study_id, day_id=day_id)
    return _done(request, session, study_id)


@router.post("/attendance/participants", name="create_participant")
def create_participant(request: Request, study_id: int, session: SessionDep, name: TextForm = "",
                       role: TextForm = "", discipline: TextForm = "",
                       company: TextForm = "") -> Response:
    """Add a participant."""
    values = {"name": name, "role": role, "discipline": discipline, "company": company}
    try:
        attendance_service.add_participant(session=session, study_id=study_id, values=values)
    except AttendanceInputError as error:
        return _refused(request, session, study_id, "participant", None, values, error)
    return _done(request, session, study_id)


@router.get("/attendance/participants/{participant_id}/edit",
            name="edit_participant")
def edit_participant(request: Request, study_id: int, participant_id: int,
                     session: SessionDep) -> Response:
    """The page with one participant open for editing."""
    attendance_service.get_participant(session=session, study_id=study_id,
                                       participant_id=participant_id)
    return _page(request, session, study_id, AttendanceForm("participant", participant_id))


@router.post("/attendance/participants/{participant_id}",
             name="update_participant")
async def update_participant(request: Request, study_id: int, participant_id: int,
                             session: SessionDep, name: TextForm = "", role: TextForm = "",
                             discipline: TextForm = "", company: TextForm = "") -> Response:
    """Save what was changed in a participant (409 when someone saved those fields since)."""
    values = {"name": name, "role": role, "discipline": discipline, "company": company}
    answer = await _answer(request)
    try:
        attendance_service.save_participant(session=session, study_id=study_id,
                                            participant_id=participant_id, values=values,
                                            answer=answer)
    except AttendanceInputError as error:
        return _refused(request, session, study_id, "participant", participant_id, values, error)
    except ConflictError as error:
        return _conflict(request, session, study_id, "participant", participant_id, values,
                         answer, error)
    return _done(request, session, study_id)


@router.post("/attendance/participants/{participant_id}/delete",
             name="delete_participant")
def delete_participant(request: Request, study_id: int, participant_id: int,
                       session: SessionDep) -> Response:
    """Delete a participant and their attendance marks."""
    attendance_service.remove_participant(session=session, study_id=study_id,
                                          participant_id=participant_id)
    return _done(request, session, study_id)


def _marks_list(text: object) -> list[str] | None:
    """The marks the matrix was loaded with ("3:7,3:8"); None when the form sent none."""
    if not isinstance(text, str):
        return None
    return [mark for mark in text.split(",") if mark.strip()]


@router.post("/attendance/marks", name="save_attendance")
async def save_attendance(request: Request, study_id: int, session: SessionDep,
                          present: Marks = []) -> Response:  # noqa: B006 (FastAPI copies defaults)
    """Save the boxes changed since the matrix was loaded (the form without JavaScript)."""
    # Read raw: an empty list of loaded marks ("") must stay apart from none sent.
    loaded = (await request.form()).get("loaded_marks")
    try:
        attendance_service.record_attendance(session=session, study_id=study_id, typed=present,
                                             loaded=_marks_list(loaded))
    except AttendanceInputError as error:
        return _refused(request, session, study_id, "matrix", None, {}, error)
    return _done(request, session, study_id)


@router.post("/attendance/marks/{day_id}/{participant_id}",
             name="update_attendance_mark")
def update_attendance_mark(request: Request, study_id: int, day_id: int, participant_id: int,
                           session: SessionDep, present: Marks = []) -> Response:  # noqa: B006
    """Tick or untick one box: present when its 'day:participant' value was sent ticked."""
    ticked = f"{day_id}:{participant_id}" in present
    attendance_service.set_attendance(session=session, study_id=study_id, day_id=day_id,
                                      participant_id=participant_id, present=ticked)
    if not is_htmx(request):
        return _done(request, session, study_id)
    page = attendance_service.read_attendance_page(session=session, study_id=study_id)
    return render(request, TEMPLATE, {"page": page, "form": AttendanceForm()},
                  block="day_counts")
