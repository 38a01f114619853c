"""Attendance: the session dates, the participants and who attended which date.

Writes validate first and raise AttendanceInputError naming the field and the rule.
"""

from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import date
from typing import Any, TypeVar

from sqlmodel import Session, col, select

from app.db.compare_and_set import SaveOutcome
from app.db.ids import read_row_id
from app.db.models import Attendance, Participant, SessionDay, Study, text_limit
from app.db.queries import fetch_rows_of_study
from app.services.study.conflicts import (
    ConflictError,
    FieldConflict,
    GuardedResult,
    PageEdit,
    missing_row,
    save_form,
)
from app.services.study.errors import FieldInputError, length_problem
from app.services.study.tree import NotFoundError, get_study

# Any in this module: validated form values become model fields by name (the form boundary).

Saved = TypeVar("Saved", SessionDay, Participant)
PARTICIPANT_LIMITS = {
    field: text_limit(Participant, field) for field in ("name", "role", "discipline", "company")
}
NOTE_LIMIT = text_limit(SessionDay, "note")


class AttendanceInputError(FieldInputError):
    """Bad input for a date or a participant: `field` is the form field, `message` the rule."""


@dataclass(frozen=True)
class Answer:
    """How the page answered an earlier conflict ("keep"/"take"), with the values it showed."""

    edit: PageEdit = field(default_factory=PageEdit)
    resolution: str = ""
    seen: Mapping[str, str] | None = None


def read_day(typed: str) -> date:
    """A session date written YYYY-MM-DD."""
    text = typed.strip()
    if not text:
        raise AttendanceInputError("day", "the session date is required (YYYY-MM-DD).")
    try:
        return date.fromisoformat(text)
    except ValueError:
        raise AttendanceInputError(
            "day", f"the session date must be written YYYY-MM-DD (got '{text}')."
        ) from None


def _read_note(typed: str) -> str:
    note = typed.strip()
    if problem := length_problem(note, NOTE_LIMIT):
        raise AttendanceInputError("note", problem)
    return note


def read_participant(values: dict[str, str]) -> dict[str, str]:
    """Name (required), role, discipline and company, trimmed and within their lengths."""
    cleaned = {name: values.get(name, "").strip() for name in PARTICIPANT_LIMITS}
    if not cleaned["name"]:
        raise AttendanceInputError("name", "the participant's name is required.")
    for name, limit in PARTICIPANT_LIMITS.items():
        if problem := length_problem(cleaned[name], limit):
            raise AttendanceInputError(name, problem)
    return cleaned


def _row(session: Session, model: type[Saved], row_id: int, study_id: int, what: str) -> Saved:
    row = session.get(model, row_id)
    if row is None:
        raise missing_row(session, study_id, model, row_id,
                          f"There is no {what} {row_id} in this study.")
    if row.study_id != study_id:
        raise NotFoundError(f"There is no {what} {row_id} in this study.")
    return row


def get_day(*, session: Session, study_id: int, day_id: int) -> SessionDay:
    """A session date of the study, or NotFoundError."""
    found: SessionDay = _row(session, SessionDay, day_id, study_id, "session date")
    return found


def get_participant(*, session: Session, study_id: int, participant_id: int) -> Participant:
    """A participant of the study, or NotFoundError."""
    found: Participant = _row(session, Participant, participant_id, study_id, "participant")
    return found


def _check_unique_day(session: Session, study_id: int, day: date, day_id: int | None) -> None:
    same = session.exec(
        select(SessionDay.id).where(SessionDay.study_id == study_id, SessionDay.day == day)
    ).all()
    if any(found != day_id for found in same):
        raise AttendanceInputError("day", f"{day.isoformat()} is already a session date.")


def _save(session: Session, row: Saved) -> Saved:
    session.add(row)
    session.commit()
    session.refresh(row)
    return row


def add_day(*, session: Session, study_id: int, day: str, note: str = "") -> SessionDay:
    """Add a session date (one entry per calendar date)."""
    get_study(session, study_id)
    when, cleaned_note = read_day(day), _read_note(note)
    _check_unique_day(session, study_id, when, None)
    return _save(session, SessionDay(study_id=study_id, day=when, note=cleaned_note))


def update_day(*, session: Session, study_id: int, day_id: int, day: str, note: str,
               answer: Answer = Answer()) -> SessionDay:
    """Change a session date or its note (only what the person changed; 409 on a clash)."""
    row = _row(session, SessionDay, day_id, study_id, "session date")
    when, cleaned_note = read_day(day), _read_note(note)
    _check_unique_day(session, study_id, when, day_id)
    result = save_form(session, row, {"day": when, "note": cleaned_note}, answer.edit,
                       read=_day_texts, resolution=answer.resolution, seen=answer.seen)
    return _finish(session, row, result)


def _day_texts(texts: Mapping[str, Any]) -> dict[str, Any]:
    """Sent text of a date's fields read like the person's own (a date that does not read:
    left out)."""
    values: dict[str, Any] = {}
    if "note" in texts:
        values["note"] = str(texts["note"]).strip()
    try:
        if "day" in texts:
            values["day"] = read_day(str(texts["day"]))
    except AttendanceInputError:
        pass
    return values


def _participant_texts(texts: Mapping[str, Any]) -> dict[str, Any]:
    """Sent text of a participant's fields, trimmed like the person's own."""
    return {name: str(texts[name]).strip() for name in PARTICIPANT_LIMITS if name in texts}


def _finish(session: Session, row: Saved, result: GuardedResult) -> Saved:
    """Commit a guarded save, or roll back and say what stopped it."""
    if result.outcome is SaveOutcome.CHANGED_SINCE:
        session.rollback()
        raise ConflictError(result.conflicts)
    if result.outcome is SaveOutcome.DELETED:
        session.rollback()
        raise NotFoundError("This row was deleted since the page was loaded.")
    session.commit()
    session.refresh(row)
    return row


def _delete_with_marks(session: Session, row: Any, marks: Any) -> None:
    for mark in session.exec(select(Attendance).where(marks)).all():
        session.delete(mark)
    session.flush()  # marks first: the unit of work does not order these tables
    session.delete(row)
    session.commit()


def delete_day(*, session: Session, study_id: int, day_id: int) -> None:
    """Delete a session date and who attended it."""
    row = _row(session, SessionDay, day_id, study_id, "session date")
    _delete_with_marks(session, row, col(Attendance.session_day_id) == day_id)


def add_participant(*, session: Session, study_id: int, values: dict[str, str]) -> Participant:
    """Add a participant."""
    get_study(session, study_id)
    fields: dict[str, Any] = dict(read_participant(values))  # Any: checked form text
    return _save(session, Participant(study_id=study_id, **fields))


def save_participant(
    *, session: Session, study_id: int, participant_id: int, values: dict[str, str],
    answer: Answer = Answer(),
) -> Participant:
    """Change a participant's name, role, discipline or company (only what the person changed;
    a field someone else saved since the page loaded raises ConflictError)."""
    row = _row(session, Participant, participant_id, study_id, "participant")
    result = save_form(session, row, read_participant(values), answer.edit,
                       read=_participant_texts, resolution=answer.resolution, seen=answer.seen)
    return _finish(session, row, result)


def remove_participant(*, session: Session, study_id: int, participant_id: int) -> None:
    """Delete a participant and their attendance."""
    row = _row(session, Participant, participant_id, study_id, "participant")
    _delete_with_marks(session, row, col(Attendance.participant_id) == participant_id)


def set_attendance(
    *, session: Session, study_id: int, day_id: int, participant_id: int, present: bool
) -> None:
    """Mark one participant present at (or absent from) one session date."""
    _row(session, SessionDay, day_id, study_id, "session date")
    _row(session, Participant, participant_id, study_id, "participant")
    mark = session.get(Attendance, (day_id, participant_id))
    if present and mark is None:
        session.add(Attendance(session_day_id=day_id, participant_id=participant_id))
    elif not present and mark is not None:
        session.delete(mark)
    session.commit()


def read_marks(typed: list[str]) -> set[tuple[int, int]]:
    """Checkbox values 'day_id:participant_id' as pairs; anything else is refused."""
    marks = set()
    for value in typed:
        day_text, _, person_text = value.partition(":")
        day_id, person_id = read_row_id(day_text), read_row_id(person_text)
        if day_id is None or person_id is None:
            raise AttendanceInputError("present", f"'{value}' is not an attendance mark.")
        marks.add((day_id, person_id))
    return marks


def record_attendance(*, session: Session, study_id: int, typed: list[str],
                      loaded: list[str] | None = None) -> None:
    """Make the study's attendance the ticked marks (the form without JavaScript).

    `loaded`: the marks ticked when the form was loaded. Given, only the boxes the person
    changed are written, so a mark someone else set or cleared meanwhile stays as they left it.
    """
    page = read_attendance_page(session=session, study_id=study_id)
    wanted = read_marks(typed)
    known = {(d.id, p.id) for d in page.days for p in page.participants}
    if not wanted <= known:
        raise AttendanceInputError("present", "a mark names a date or person not in this study.")
    before = page.present if loaded is None else read_marks(loaded)
    for day_id, participant_id in known:
        ticked = (day_id, participant_id) in wanted
        if ticked != ((day_id, participant_id) in before):
            set_attendance(session=session, study_id=study_id, day_id=day_id or 0,
                           participant_id=participant_id or 0, present=ticked)


@dataclass(frozen=True)
class AttendancePage:
    """The study's dates (in date order), participants, and who attended which date."""

    study: Study
    days: list[SessionDay]
    participants: list[Participant]
    present: set[tuple[int | None, int | None]]

    def count(self, day_id: int | None) -> int:
        """How many participants attended the date."""
        return sum(1 for marked_day, _ in self.present if marked_day == day_id)


def read_attendance_page(*, session: Session, study_id: int) -> AttendancePage:
    """Everything the attendance page shows."""
    study = get_study(session, study_id)
    days = sorted(fetch_rows_of_study(session, SessionDay, study_id), key=lambda d: (d.day, d.id))
    participants = fetch_rows_of_study(session, Participant, study_id)
    marks = session.exec(
        select(Attendance).where(col(Attendance.session_day_id).in_([d.id for d in days]))
    ).all()
    return AttendancePage(study, days, participants,
                          {(m.session_day_id, m.participant_id) for m in marks})


@dataclass(frozen=True)
class AttendanceForm:
    """Which row is being edited or was refused, with the typed text and the error."""

    kind: str = ""  # "day" or "participant"; "" for no row
    item_id: int | None = None
    values: dict[str, str] | None = None
    error_field: str = ""
    error: str = ""
    conflicts: tuple[FieldConflict, ...] = ()  # someone saved these fields since (409)
    page_version: int | None = None  # after a conflict: the version the page was loaded with
    originals: Mapping[str, str] | None = None  # after a conflict: the page's originals

    def original(self, name: str, saved: Any = "") -> str:
        """What the form sends as the field's original: as loaded (the saved value), or after
        a conflict the page's own originals (the other person's values go apart, as seen_…)."""
        if self.conflicts:
            return str((self.originals or {}).get(name, ""))
        return "" if saved is None else str(saved)

    def version(self, saved: int) -> int:
        """The row version the form sends: the saved one, or after a conflict the page's."""
        return self.page_version if self.conflicts and self.page_version else saved

    def value(self, name: str, saved: Any = "") -> str:
        """The typed text when the form came back, otherwise the saved value."""
        if self.values is not None:
            return self.values.get(name, "")
        return "" if saved is None else str(saved)

    def error_of(self, kind: str, item_id: int | None, name: str) -> str:
        """The error to show beside one field of one form."""
        if (self.kind, self.item_id, self.error_field) == (kind, item_id, name):
            return self.error
        return ""
