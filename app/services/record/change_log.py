"""The change log pages in words: filter by date range, node, scenario and person; newest first.

The recording itself is automatic (app/db/tracking.py); the only entries written here are
links between an action and a scenario, which are rows of a link table the tracker skips.
"""

from dataclasses import dataclass, field
from datetime import UTC, date, datetime, time, timedelta
from typing import Any

from sqlalchemy import and_, or_
from sqlmodel import Session, col, func, select
from sqlmodel.sql.expression import SelectOfScalar

from app.db.ids import read_row_id
from app.db.models import ChangeLogEntry, Recommendation, Scenario, Study
from app.db.tracking import AUTHOR_KEY, SUPPRESS_LOG_KEY, describe
from app.services.exchange.export_csv import table_csv
from app.services.exchange.export_tables import Cell, Column, Table
from app.services.record.change_places import StudyPlaces, name_scenario_rows, study_places
from app.services.record.change_words import ReadableEntry, readable_entry
from app.services.study.errors import FieldInputError
from app.services.study.tree import get_study

# A long study's log runs to thousands of entries; a page shows the newest ones.
PAGE_LIMIT = 500
# The scenario list of the filter: a node narrows it; a very long study lists the first ones.
SCENARIO_CHOICES = 2000


class ChangeLogFilterError(FieldInputError):
    """A filter value that cannot be read: `field` is the query parameter."""


@dataclass(frozen=True)
class ChangeLogFilter:
    """Which entries to show: a date range (UTC days, both ends included), a node, a scenario
    and a person."""

    since: date | None = None
    until: date | None = None
    scenario_id: int | None = None
    node_id: int | None = None
    who: str | None = None


@dataclass(frozen=True)
class FilterText:
    """The filter as typed, echoed back into the form."""

    since: str = ""
    until: str = ""
    scenario_id: str = ""
    node_id: str = ""
    who: str = ""

    def query(self) -> dict[str, str]:
        """The filter as the page's query parameters (for the CSV link), empty ones left out."""
        pairs = {"from": self.since, "to": self.until, "scenario_id": self.scenario_id,
                 "node_id": self.node_id, "who": self.who}
        return {key: value for key, value in pairs.items() if value}


def _read_day(field: str, label: str, typed: str) -> date | None:
    if not typed.strip():
        return None
    try:
        return date.fromisoformat(typed.strip())
    except ValueError:
        raise ChangeLogFilterError(
            field, f"the '{label}' date must be written YYYY-MM-DD (got '{typed.strip()}')."
        ) from None


def _read_row_number(field: str, what: str, typed: str) -> int | None:
    if not typed.strip():
        return None
    row_id = read_row_id(typed)  # bounded: a huge number is refused, never a database error
    if row_id is None:
        raise ChangeLogFilterError(field, f"the {what} must be chosen from the list "
                                          f"(got '{typed}').")
    return row_id


def read_filter(typed: FilterText) -> ChangeLogFilter:
    """Read the typed filter; the range must not end before it starts."""
    since = _read_day("since", "from", typed.since)
    until = _read_day("until", "to", typed.until)
    if since and until and until < since:
        raise ChangeLogFilterError(
            "until", f"the 'to' date {until} is before the 'from' date {since}."
        )
    return ChangeLogFilter(since, until, _read_row_number("scenario_id", "scenario",
                                                          typed.scenario_id),
                           _read_row_number("node_id", "node", typed.node_id),
                           typed.who.strip() or None)


def _start_of(day: date) -> datetime:
    return datetime.combine(day, time.min, tzinfo=UTC)


@dataclass(frozen=True)
class NodeRows:
    """The ids of a node's deviations and scenarios, for the node filter."""

    node_id: int
    deviation_ids: tuple[int, ...] = ()
    scenario_ids: tuple[int, ...] = ()


def entries_query(study_id: int, chosen: ChangeLogFilter,
                  node: NodeRows | None = None) -> SelectOfScalar[ChangeLogEntry]:
    """The study's entries matching the filter, newest first."""
    statement = select(ChangeLogEntry).where(ChangeLogEntry.study_id == study_id)
    if chosen.since:
        statement = statement.where(col(ChangeLogEntry.at) >= _start_of(chosen.since))
    if chosen.until:
        next_day = _start_of(chosen.until + timedelta(days=1))
        statement = statement.where(col(ChangeLogEntry.at) < next_day)
    if chosen.scenario_id is not None:
        statement = statement.where(ChangeLogEntry.scenario_id == chosen.scenario_id)
    if chosen.who is not None:
        statement = statement.where(ChangeLogEntry.author == chosen.who)
    if node is not None:
        statement = statement.where(or_(
            col(ChangeLogEntry.scenario_id).in_(node.scenario_ids),
            and_(col(ChangeLogEntry.entity) == "node",
                 col(ChangeLogEntry.entity_id) == node.node_id),
            and_(col(ChangeLogEntry.entity) == "deviation",
                 col(ChangeLogEntry.entity_id).in_(node.deviation_ids)),
        ))
    return statement.order_by(col(ChangeLogEntry.at).desc(), col(ChangeLogEntry.id).desc())


def _node_rows(places: StudyPlaces, node_id: int | None) -> NodeRows | None:
    if node_id is None:
        return None
    return NodeRows(node_id, tuple(places.node_deviations.get(node_id, ())),
                    tuple(places.node_scenarios.get(node_id, ())))


def count_entries(session: Session, statement: SelectOfScalar[ChangeLogEntry]) -> int:
    """How many entries a query matches in all."""
    counted = statement.order_by(None).subquery()
    return int(session.exec(select(func.count()).select_from(counted)).one())


@dataclass(frozen=True)
class FilterChoices:
    """What the filter's lists offer: (value, words) pairs."""

    nodes: tuple[tuple[str, str], ...] = ()
    scenarios: tuple[tuple[str, str], ...] = ()
    people: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True)
class ChangeLogPage:
    """Display-ready data for the change log page."""

    study: Study
    entries: list[ReadableEntry]
    total: int
    typed: FilterText
    heading: str = ""
    choices: FilterChoices = field(default_factory=FilterChoices)
    error_field: str = ""
    error: str = ""

    @property
    def truncated(self) -> bool:
        """More entries match than the page shows."""
        return self.total > len(self.entries)


def _heading(places: StudyPlaces, chosen: ChangeLogFilter) -> str:
    parts = []
    if chosen.node_id is not None:
        parts.append(places.name_of("node", chosen.node_id) or "a node no longer in the study")
    if chosen.scenario_id is not None:
        parts.append(places.scenario_name(chosen.scenario_id))
    if chosen.who is not None:
        parts.append(f"changes by {chosen.who}")
    return " · ".join(parts)


def _choices(session: Session, study_id: int, places: StudyPlaces,
             node_id: int | None) -> FilterChoices:
    nodes = tuple((str(i), places.names[("node", i)]) for i in places.node_scenarios)
    shown = places.node_scenarios.get(node_id, []) if node_id is not None else [
        i for ids in places.node_scenarios.values() for i in ids]
    scenarios = tuple((str(i), places.scenario_name(i)) for i in shown[:SCENARIO_CHOICES])
    people = session.exec(select(ChangeLogEntry.author).where(
        ChangeLogEntry.study_id == study_id).distinct().order_by(ChangeLogEntry.author)).all()
    return FilterChoices(nodes, scenarios, tuple((p, p) for p in people if p))


@dataclass(frozen=True)
class FilteredLog:
    """The matching entries in words and what places they name."""

    statement: SelectOfScalar[ChangeLogEntry]
    places: StudyPlaces
    chosen: ChangeLogFilter


def filtered_log(session: Session, study: Study, typed: FilterText) -> FilteredLog:
    """The query for the typed filter; ChangeLogFilterError when it cannot be read."""
    chosen = read_filter(typed)
    places = study_places(session, study, set())
    return FilteredLog(entries_query(study.id or 0, chosen, _node_rows(places, chosen.node_id)),
                       places, chosen)


def readable_entries(session: Session, log: FilteredLog,
                     limit: int | None) -> list[ReadableEntry]:
    """The entries of a filtered log in words, newest first (at most `limit`)."""
    statement = log.statement if limit is None else log.statement.limit(limit)
    entries = list(session.exec(statement).all())
    name_scenario_rows(session, log.places,
                       {e.scenario_id for e in entries if e.scenario_id is not None})
    return [readable_entry(entry, log.places) for entry in entries]


def build_change_log_page(*, session: Session, study_id: int, typed: FilterText) -> ChangeLogPage:
    """The filtered log; a filter that cannot be read raises ChangeLogFilterError."""
    study = get_study(session, study_id)
    log = filtered_log(session, study, typed)
    return ChangeLogPage(study, readable_entries(session, log, PAGE_LIMIT),
                         count_entries(session, log.statement), typed,
                         _heading(log.places, log.chosen),
                         _choices(session, study_id, log.places, log.chosen.node_id))


LOG_CSV_COLUMNS = (Column("When (UTC)"), Column("Who"), Column("Change"), Column("Item"),
                   Column("Field"), Column("Old value"), Column("New value"))


def change_log_csv(*, session: Session, study_id: int, typed: FilterText,
                   cautions: str) -> bytes:
    """Every entry the filter matches, in words, as CSV (the app's one CSV writer)."""
    study = get_study(session, study_id)
    log = filtered_log(session, study, typed)
    rows: list[list[Cell]] = [
        [e.when, e.who, e.change, e.item, e.field, e.old, e.new]
        for e in readable_entries(session, log, None)
    ]
    return table_csv(Table("Change log", LOG_CSV_COLUMNS, rows), cautions=cautions)


def invalid_filter_page(
    *, session: Session, study_id: int, typed: FilterText, error: ChangeLogFilterError
) -> ChangeLogPage:
    """The page for a filter that could not be read: no entries, the typed text kept."""
    study = get_study(session, study_id)
    places = study_places(session, study, set())
    return ChangeLogPage(study, [], 0, typed, choices=_choices(session, study_id, places, None),
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
