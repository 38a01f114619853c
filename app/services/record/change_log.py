"""The change log pages: filter by date range and scenario, newest first.

The recording itself is automatic (app/db/tracking.py); the only entries written here are
links between an action and a scenario, which are rows of a link table the tracker skips.
"""

from dataclasses import dataclass, field
from datetime import UTC, date, datetime, time, timedelta
from typing import Any

from sqlmodel import Session, col, func, select
from sqlmodel.sql.expression import SelectOfScalar

from app.db.ids import read_row_id
from app.db.models import ChangeLogEntry, Recommendation, Scenario, Study
from app.db.tracking import AUTHOR_KEY, SUPPRESS_LOG_KEY, describe
from app.services.study.errors import FieldInputError
from app.services.study.tree import get_study

# A long study's log runs to thousands of entries; a page shows the newest ones.
PAGE_LIMIT = 500


class ChangeLogFilterError(FieldInputError):
    """A filter value that cannot be read: `field` is the query parameter."""


@dataclass(frozen=True)
class ChangeLogFilter:
    """Which entries to show: a date range (UTC days, both ends included) and a scenario."""

    since: date | None = None
    until: date | None = None
    scenario_id: int | None = None


@dataclass(frozen=True)
class FilterText:
    """The filter as typed, echoed back into the form."""

    since: str = ""
    until: str = ""
    scenario_id: str = ""


def _read_day(field: str, label: str, typed: str) -> date | None:
    if not typed.strip():
        return None
    try:
        return date.fromisoformat(typed.strip())
    except ValueError:
        raise ChangeLogFilterError(
            field, f"the '{label}' date must be written YYYY-MM-DD (got '{typed.strip()}')."
        ) from None


def read_filter(typed: FilterText) -> ChangeLogFilter:
    """Read the typed filter; the range must not end before it starts."""
    since = _read_day("since", "from", typed.since)
    until = _read_day("until", "to", typed.until)
    if since and until and until < since:
        raise ChangeLogFilterError(
            "until", f"the 'to' date {until} is before the 'from' date {since}."
        )
    scenario_id = None
    if typed.scenario_id.strip():
        scenario_id = read_row_id(typed.scenario_id)
        if scenario_id is None:
            raise ChangeLogFilterError(
                "scenario_id",
                f"the scenario must be a scenario number (got '{typed.scenario_id}').",
            )
    return ChangeLogFilter(since, until, scenario_id)


def _start_of(day: date) -> datetime:
    return datetime.combine(day, time.min, tzinfo=UTC)


def entries_query(study_id: int, chosen: ChangeLogFilter) -> SelectOfScalar[ChangeLogEntry]:
    """The study's entries matching the filter, newest first."""
    statement = select(ChangeLogEntry).where(ChangeLogEntry.study_id == study_id)
    if chosen.since:
        statement = statement.where(col(ChangeLogEntry.at) >= _start_of(chosen.since))
    if chosen.until:
        next_day = _start_of(chosen.until + timedelta(days=1))
        statement = statement.where(col(ChangeLogEntry.at) < next_day)
    if chosen.scenario_id is not None:
        statement = statement.where(ChangeLogEntry.scenario_id == chosen.scenario_id)
    return statement.order_by(col(ChangeLogEntry.at).desc(), col(ChangeLogEntry.id).desc())


def fetch_entries(session: Session, study_id: int, chosen: ChangeLogFilter) -> list[ChangeLogEntry]:
    """Run entries_query, newest PAGE_LIMIT entries."""
    return list(session.exec(entries_query(study_id, chosen).limit(PAGE_LIMIT)).all())


def count_entries(session: Session, study_id: int, chosen: ChangeLogFilter) -> int:
    """How many entries match the filter in all."""
    counted = entries_query(study_id, chosen).order_by(None).subquery()
    return int(session.exec(select(func.count()).select_from(counted)).one())


@dataclass(frozen=True)
class ChangeLogPage:
    """Display-ready data for the change log page."""

    study: Study
    entries: list[ChangeLogEntry]
    total: int
    typed: FilterText
    scenario: Scenario | None
    scenario_label: str
    scenario_names: dict[int, str] = field(default_factory=dict)
    error_field: str = ""
    error: str = ""

    @property
    def truncated(self) -> bool:
        """More entries match than the page shows."""
        return self.total > len(self.entries)


def _scenario_label(session: Session, study_id: int, scenario_id: int | None) -> tuple[
        Scenario | None, str]:
    if scenario_id is None:
        return None, ""
    scenario = session.get(Scenario, scenario_id)
    if scenario is None or scenario.study_id != study_id:
        return None, f"scenario #{scenario_id} (deleted or not in this study)"
    return scenario, f"scenario '{scenario.cause or scenario.consequence or scenario_id}'"


def build_change_log_page(*, session: Session, study_id: int, typed: FilterText) -> ChangeLogPage:
    """The filtered log; a filter that cannot be read raises ChangeLogFilterError."""
    study = get_study(session, study_id)
    chosen = read_filter(typed)
    scenario, label = _scenario_label(session, study_id, chosen.scenario_id)
    entries = fetch_entries(session, study_id, chosen)
    return ChangeLogPage(study, entries, count_entries(session, study_id, chosen), typed,
                         scenario, label, scenario_names(session, study_id, entries))


def scenario_names(
    session: Session, study_id: int, entries: list[ChangeLogEntry]
) -> dict[int, str]:
    """A short name for each scenario the entries touch ('deleted' when it is gone)."""
    ids = {e.scenario_id for e in entries if e.scenario_id is not None}
    found = session.exec(
        select(Scenario).where(Scenario.study_id == study_id, col(Scenario.id).in_(ids))
    ).all()
    names = {s.id: (s.cause or s.consequence or f"#{s.id}")[:60] for s in found if s.id}
    return {sid: names.get(sid, f"#{sid} (deleted)") for sid in ids}


def invalid_filter_page(
    *, session: Session, study_id: int, typed: FilterText, error: ChangeLogFilterError
) -> ChangeLogPage:
    """The page for a filter that could not be read: no entries, the typed text kept."""
    return ChangeLogPage(get_study(session, study_id), [], 0, typed, None, "",
                         error_field=error.field, error=error.message)


def record_link_change(
    *, session: Session, action: Recommendation, scenario: Scenario, linked: bool
) -> None:
    """Log that an action now addresses (or no longer addresses) a scenario."""
    if session.info.get(SUPPRESS_LOG_KEY):
        return
    values: dict[str, Any] = {"old_value": None, "new_value": describe(scenario)}
    if not linked:
        values = {"old_value": describe(scenario), "new_value": None}
    session.add(ChangeLogEntry(
        study_id=action.study_id, author=session.info.get(AUTHOR_KEY, ""),
        action="link" if linked else "unlink", entity="recommendation", entity_id=action.id,
        scenario_id=scenario.id, field="scenarios", summary=describe(action), **values,
    ))
