"""Where each row of a study sits, numbered as the worksheet numbers it (node 2, deviation 2.1,
scenario 2.1.1, IPL 2 of a scenario, action A3), read as plain rows so a long log stays cheap.

Steps and safeguards are read only for the scenarios the shown entries touch.
"""

from collections import defaultdict
from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Any

from sqlalchemy import select as select_columns
from sqlmodel import Session, col

from app.db.ids import read_row_id
from app.db.models import (
    Deviation,
    Node,
    Participant,
    Recommendation,
    Revision,
    Safeguard,
    Scenario,
    SessionDay,
    SeverityCategory,
    Step,
    Study,
)
from app.db.queries import fetch_plain_rows
from app.likelihood.types import StepKind

# Any in this module: plain result rows of column selects (the ORM boundary).

SHORT_TEXT = 70


def _short(text: str) -> str:
    text = " ".join(text.split())
    return text if len(text) <= SHORT_TEXT else text[: SHORT_TEXT - 1] + "…"


def _ordered(rows: Iterable[Any], parent: str) -> dict[int, list[Any]]:
    grouped: dict[int, list[Any]] = defaultdict(list)
    for row in sorted(rows, key=lambda r: (r.position, r.id)):
        grouped[getattr(row, parent)].append(row)
    return grouped


@dataclass
class StudyPlaces:
    """Names of rows by their place: every node, deviation, scenario, category and action,
    and the steps and safeguards of the scenarios asked for."""

    study_title: str = ""
    names: dict[tuple[str, int], str] = field(default_factory=dict)
    scenario_numbers: dict[int, str] = field(default_factory=dict)
    node_scenarios: dict[int, list[int]] = field(default_factory=dict)
    node_deviations: dict[int, list[int]] = field(default_factory=dict)

    def name_of(self, entity: str, row_id: int | None) -> str:
        """The row's name by place, or '' when it is no longer in the study."""
        if entity == "study":
            return "Study details"
        return self.names.get((entity, row_id or 0), "")

    def scenario_name(self, scenario_id: int) -> str:
        """'Scenario 2.1.1 — Level transmitter fails low'."""
        return self.names.get(("scenario", scenario_id), "a scenario no longer in the study")

    def category_name(self, text: str) -> str:
        """A severity category's name from its stored id."""
        found = self.names.get(("severity category", read_row_id(text) or 0), "")
        return found.removeprefix("Severity category ") or "a category no longer in the study"

    def node_name(self, text: str) -> str:
        """A node's name from its stored id."""
        return self.names.get(("node", read_row_id(text) or 0), "") or (
            "a node no longer in the study")

    def deviation_name(self, text: str) -> str:
        """A deviation's name from its stored id."""
        return self.names.get(("deviation", read_row_id(text) or 0), "") or (
            "a deviation no longer in the study")


def _columns(*attributes: Any) -> list[Any]:  # Any: ORM attributes used as columns
    return list(attributes)


def _name_structure(session: Session, study_id: int, places: StudyPlaces) -> None:
    nodes = fetch_plain_rows(session, select_columns(*_columns(
        Node.id, Node.number, Node.name, Node.position)).where(col(Node.study_id) == study_id))
    deviations = fetch_plain_rows(session, select_columns(*_columns(
        Deviation.id, Deviation.node_id, Deviation.position, Deviation.guideword,
        Deviation.parameter)).where(col(Deviation.study_id) == study_id))
    scenarios = fetch_plain_rows(session, select_columns(*_columns(
        Scenario.id, Scenario.deviation_id, Scenario.position, Scenario.cause,
        Scenario.consequence)).where(col(Scenario.study_id) == study_id))
    by_node, by_deviation = _ordered(deviations, "node_id"), _ordered(scenarios, "deviation_id")
    for node in nodes:
        number = node.number or "(unnumbered)"
        places.names[("node", node.id)] = f"Node {number} — {_short(node.name)}"
        places.node_deviations[node.id] = []
        places.node_scenarios[node.id] = []
        for d_index, deviation in enumerate(by_node.get(node.id, []), start=1):
            d_number = f"{number}.{d_index}"
            words = f"{deviation.guideword} {deviation.parameter}".strip()
            places.names[("deviation", deviation.id)] = f"Deviation {d_number} — {words}"
            places.node_deviations[node.id].append(deviation.id)
            for s_index, scenario in enumerate(by_deviation.get(deviation.id, []), start=1):
                s_number = f"{d_number}.{s_index}"
                text = scenario.cause or scenario.consequence or "(no cause written)"
                places.scenario_numbers[scenario.id] = s_number
                places.names[("scenario", scenario.id)] = f"Scenario {s_number} — {_short(text)}"
                places.node_scenarios[node.id].append(scenario.id)


def _name_steps(session: Session, scenario_ids: set[int], places: StudyPlaces) -> None:
    steps = fetch_plain_rows(session, select_columns(*_columns(
        Step.id, Step.scenario_id, Step.kind, Step.position, Step.description)).where(
        col(Step.scenario_id).in_(scenario_ids)))
    for scenario_id, rows in _ordered(steps, "scenario_id").items():
        counted: dict[str, int] = defaultdict(int)
        where = places.scenario_numbers.get(scenario_id, "")
        for row in rows:
            kind = StepKind(row.kind)
            counted[kind.value] += 1
            text = f" — {_short(row.description)}" if row.description else ""
            places.names[("step", row.id)] = (
                f"Step {kind.short} {counted[kind.value]} of scenario {where}{text}")


def _name_safeguards(session: Session, scenario_ids: set[int], places: StudyPlaces) -> None:
    safeguards = fetch_plain_rows(session, select_columns(*_columns(
        Safeguard.id, Safeguard.scenario_id, Safeguard.position, Safeguard.description)).where(
        col(Safeguard.scenario_id).in_(scenario_ids)))
    for scenario_id, rows in _ordered(safeguards, "scenario_id").items():
        where = places.scenario_numbers.get(scenario_id, "")
        for index, row in enumerate(rows, start=1):
            places.names[("safeguard", row.id)] = (
                f"Safeguard {index} of scenario {where} — {_short(row.description)}")


def _name_record(session: Session, study_id: int, places: StudyPlaces) -> None:
    categories = fetch_plain_rows(session, select_columns(*_columns(
        SeverityCategory.id, SeverityCategory.name)).where(
        col(SeverityCategory.study_id) == study_id))
    for row in categories:
        places.names[("severity category", row.id)] = f"Severity category {row.name}"
    actions = fetch_plain_rows(session, select_columns(*_columns(
        Recommendation.id, Recommendation.position, Recommendation.text)).where(
        col(Recommendation.study_id) == study_id))
    for number, row in enumerate(sorted(actions, key=lambda r: (r.position, r.id)), start=1):
        places.names[("recommendation", row.id)] = f"Action A{number} — {_short(row.text)}"
    people = fetch_plain_rows(session, select_columns(*_columns(
        Participant.id, Participant.name)).where(col(Participant.study_id) == study_id))
    for row in people:
        places.names[("participant", row.id)] = f"Participant {row.name}"
    days = fetch_plain_rows(session, select_columns(*_columns(
        SessionDay.id, SessionDay.day)).where(col(SessionDay.study_id) == study_id))
    for row in days:
        places.names[("session date", row.id)] = f"Session date {row.day.isoformat()}"
    revisions = fetch_plain_rows(session, select_columns(*_columns(
        Revision.id, Revision.label, Revision.signed_off_by)).where(
        col(Revision.study_id) == study_id))
    for row in revisions:
        places.names[("revision", row.id)] = (
            f"Revision {row.label}, signed off by {row.signed_off_by}")


def study_places(session: Session, study: Study, scenario_ids: set[int]) -> StudyPlaces:
    """Every row's place in the study; steps and safeguards of `scenario_ids` only."""
    places = StudyPlaces(study_title=study.title)
    study_id = study.id or 0
    _name_structure(session, study_id, places)
    _name_record(session, study_id, places)
    name_scenario_rows(session, places, scenario_ids)
    return places


def name_scenario_rows(session: Session, places: StudyPlaces, scenario_ids: set[int]) -> None:
    """Add the names of the steps and safeguards of these scenarios."""
    if scenario_ids:
        _name_steps(session, scenario_ids, places)
        _name_safeguards(session, scenario_ids, places)
