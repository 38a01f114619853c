"""Query builders (pure: they return statements) and the one-line runners beside them."""

from functools import cache
from typing import Any, TypeVar

from sqlalchemy import Row as ResultRow
from sqlalchemy import and_, bindparam, or_, update
from sqlalchemy import select as select_columns
from sqlalchemy.sql.selectable import GenerativeSelect
from sqlmodel import Session, col, func, select
from sqlmodel.sql.expression import SelectOfScalar

from app.db.models import (
    Deviation,
    Node,
    Recommendation,
    RecommendationScenario,
    Scenario,
    SeverityCategory,
    Step,
    Study,
)

# Any in this module: the builders serve any table model and return SQLAlchemy statements whose
# column types the ORM attributes do not carry (the ORM boundary).

Row = TypeVar("Row")
Ordered = TypeVar("Ordered", bound=GenerativeSelect)


def _in_display_order(statement: Ordered, model: type[Any]) -> Ordered:
    """Order rows as the worksheet shows them: by position where the model has one, then id."""
    table: Any = model
    if hasattr(model, "position"):
        return statement.order_by(table.position, table.id)
    return statement.order_by(table.id)


def plain_rows_of_study(model: type[Any], study_id: int, names: tuple[str, ...] = ()) -> Any:
    """Every row of `model` in one study, in display order, as plain rows of every column, or
    of the columns named, in that order (no ORM objects built)."""
    table: Any = model  # Any: the table model's columns
    columns = ([table.__table__.columns[name] for name in names] if names
               else list(table.__table__.columns))
    statement = select_columns(*columns).where(table.study_id == study_id)
    return _in_display_order(statement, model)


def fetch_rows_of_study(session: Session, model: type[Row], study_id: int) -> list[Row]:
    """Every row of `model` in one study, in display order."""
    table: Any = model  # hashable: the statement is built once per model
    return list(session.exec(_rows_of_parent(table, "study_id"),
                             params={"parent_id": study_id}).all())


@cache
def _rows_of_parent(model: Any, parent_field: str) -> SelectOfScalar[Any]:
    """The rows of `model` under one parent (bound as parent_id), in display order: built once
    per model (an edit's reply runs several; building and keying a statement cost about as
    much as running it)."""
    table: Any = model
    return _in_display_order(
        select(model).where(getattr(table, parent_field) == bindparam("parent_id")), model)


def rows_of_node(model: type[Row], node_id: int) -> SelectOfScalar[Row]:
    """Every deviation, scenario, step or safeguard under one node, in display order."""
    table: Any = model
    statement = select(model)
    if model is not Deviation:
        if model is not Scenario:
            statement = statement.join(Scenario, col(Scenario.id) == table.scenario_id)
        statement = statement.join(Deviation, col(Deviation.id) == col(Scenario.deviation_id))
    return _in_display_order(statement.where(Deviation.node_id == node_id), model)


def fetch_rows_of_node(session: Session, model: type[Row], node_id: int) -> list[Row]:
    """Run rows_of_node."""
    return list(session.exec(rows_of_node(model, node_id)).all())


def fetch_rows_of_scenario(session: Session, model: type[Row], scenario_id: int) -> list[Row]:
    """A scenario's steps or safeguards, in display order."""
    table: Any = model
    return list(session.exec(_rows_of_parent(table, "scenario_id"),
                             params={"parent_id": scenario_id}).all())


def _step_figure_columns() -> list[Any]:
    # Every column the IPL checks read too: totals show the figures with flagged credits
    # withdrawn. Any: ORM attributes as columns.
    return [Step.scenario_id, Step.id, Step.position, Step.kind, Step.value,
            Step.credited, Step.description, Step.ipl_type, Step.system_tag,
            Step.response_time_minutes, Step.sil_claimed, Step.typical_key,
            Step.acts_after_sif, Step.modifier_kind, Step.receptors,
            Step.cause_type, Step.final_element_tag, Step.alarm_on_bpcs,
            Step.crew, Step.per_opportunity_probability,
            Step.opportunities_per_year, Step.time_available_minutes,
            Step.time_to_detect_and_act_minutes, Step.error_factor]


def step_figures_of_study(study_id: int) -> Any:
    """The columns of a study's steps that the arithmetic reads, as plain rows."""
    return select_columns(*_step_figure_columns()).where(col(Step.study_id) == study_id)


def step_figures_of_scenario_ids(scenario_ids: list[int]) -> Any:
    """step_figures_of_study for a few scenarios of any study (through the scenario_id index)."""
    return select_columns(*_step_figure_columns()).where(col(Step.scenario_id).in_(scenario_ids))


# Built once, run with {"scenario_ids": [...]}: a keystroke recomputes its scenario from these.
STEP_FIGURES_OF_SCENARIOS = select_columns(*_step_figure_columns()).where(
    col(Step.scenario_id).in_(bindparam("scenario_ids", expanding=True)))


def scenario_ratings_of_study(study_id: int) -> Any:
    """Each scenario of a study with its node and its three severity ratings, as plain rows."""
    columns: list[Any] = [Scenario.id, Scenario.deviation_id, Deviation.node_id,
                          Scenario.severity_category_id, Scenario.environment_category_id,
                          Scenario.asset_category_id,
                          Scenario.people_not_rated]  # Any: ORM attributes as columns
    return (select_columns(*columns)
            .join(Deviation, col(Deviation.id) == col(Scenario.deviation_id))
            .where(col(Scenario.study_id) == study_id))


# Built once, run with {"scenario_ids": [...]}: each scenario with its study, node and ratings.
_RATING_COLUMNS: list[Any] = [Scenario.id, Scenario.study_id, Scenario.deviation_id,
                              Deviation.node_id, Scenario.severity_category_id,
                              Scenario.environment_category_id, Scenario.asset_category_id,
                              Scenario.people_not_rated]  # Any: ORM attributes as columns
RATINGS_OF_SCENARIOS = (
    select_columns(*_RATING_COLUMNS)
    .join(Deviation, col(Deviation.id) == col(Scenario.deviation_id))
    .where(col(Scenario.id).in_(bindparam("scenario_ids", expanding=True))))
# Built once, run with {"study_id": id} (category_targets_of_study).
CATEGORY_TARGETS = select_columns(
    col(SeverityCategory.id), col(SeverityCategory.name),
    col(SeverityCategory.tolerable_frequency), col(SeverityCategory.receptor)).where(
    col(SeverityCategory.study_id) == bindparam("study_id"))


def category_targets_of_study(study_id: int) -> Any:
    """Each severity category's id, name, tolerable frequency and receptor, as plain rows."""
    return select(SeverityCategory.id, SeverityCategory.name,
                  SeverityCategory.tolerable_frequency, SeverityCategory.receptor).where(
        SeverityCategory.study_id == study_id)


def placed_rows_of_study(model: type[Any], parent_field: str, study_id: int) -> Any:
    """(id, parent id, position) of every row of `model` in one study, as plain rows."""
    table: Any = model
    return select(table.id, getattr(table, parent_field), table.position).where(
        table.study_id == study_id)


def fetch_plain_rows(session: Session, statement: Any,
                     parameters: dict[str, Any] | None = None) -> list[ResultRow[Any]]:
    """Run a column select on the session's connection: plain rows, no ORM objects built."""
    session.flush()  # the connection does not autoflush as session.execute would
    return list(session.connection().execute(statement, parameters).all())


def node_links_of_study(study_id: int) -> Any:
    """Each node's id, number and name in display order (for the node switcher)."""
    statement = (select_columns(col(Node.id), col(Node.number), col(Node.name))
                 .where(col(Node.study_id) == study_id))
    return _in_display_order(statement, Node)


def fetch_node_links(session: Session, study_id: int) -> list[ResultRow[Any]]:
    """Run node_links_of_study."""
    return list(session.execute(node_links_of_study(study_id)).all())


def fetch_first_node_id(session: Session, study_id: int) -> int | None:
    """Run node_links_of_study for the first node only."""
    return session.execute(node_links_of_study(study_id).limit(1)).scalar()


def first_scenario_of_study(study_id: int) -> Any:
    """The id of the study's first scenario in worksheet order."""
    return (select(Scenario.id)
            .join(Deviation, col(Deviation.id) == col(Scenario.deviation_id))
            .join(Node, col(Node.id) == col(Deviation.node_id))
            .where(Scenario.study_id == study_id)
            .order_by(col(Node.position), col(Node.id), col(Deviation.position),
                      col(Deviation.id), col(Scenario.position), col(Scenario.id))
            .limit(1))


def fetch_first_scenario_id(session: Session, study_id: int) -> int | None:
    """Run first_scenario_of_study."""
    return session.execute(first_scenario_of_study(study_id)).scalar()


def scenario_count_of_study(study_id: int) -> Any:
    """How many scenarios a study has."""
    return select(func.count()).select_from(Scenario).where(Scenario.study_id == study_id)


def fetch_scenario_count(session: Session, study_id: int) -> int:
    """Run scenario_count_of_study."""
    return int(session.execute(scenario_count_of_study(study_id)).scalar_one())


def recommendations_of_node(node_id: int) -> Any:
    """(scenario id, recommendation) for every action linked to a scenario under one node."""
    return (select(RecommendationScenario.scenario_id, Recommendation)
            .join(Recommendation,
                  col(Recommendation.id) == col(RecommendationScenario.recommendation_id))
            .join(Scenario, col(Scenario.id) == col(RecommendationScenario.scenario_id))
            .join(Deviation, col(Deviation.id) == col(Scenario.deviation_id))
            .where(Deviation.node_id == node_id)
            .order_by(col(RecommendationScenario.scenario_id), col(Recommendation.position),
                      col(Recommendation.id)))


def fetch_recommendations_of_scenario(session: Session, scenario_id: int
                                      ) -> tuple[Recommendation, ...]:
    """The actions linked to one scenario, in the actions' order."""
    return tuple(session.exec(_RECOMMENDATIONS_OF_SCENARIO,
                              params={"scenario_id": scenario_id}).all())


_RECOMMENDATIONS_OF_SCENARIO = (
    select(Recommendation)
    .join(RecommendationScenario,
          col(Recommendation.id) == col(RecommendationScenario.recommendation_id))
    .where(RecommendationScenario.scenario_id == bindparam("scenario_id"))
    .order_by(col(Recommendation.position), col(Recommendation.id)))


def _place_among(table: Any, parent: Any, prefix: str) -> Any:
    """How many siblings come before or at a row in display order (position, then id)."""
    position: Any = bindparam(f"{prefix}_position")
    row_id: Any = bindparam(f"{prefix}_id")
    return (select_columns(func.count()).select_from(table)
            .where(parent == bindparam(f"{prefix}_parent"),
                   or_(table.position < position,
                       and_(table.position == position, table.id <= row_id)))
            .scalar_subquery())


_DEVIATIONS: Any = Deviation
_SCENARIOS: Any = Scenario
# Built once: the edit reply numbers its scenario on every keystroke.
_PLACE_IN_NODE = select_columns(_place_among(_DEVIATIONS, _DEVIATIONS.node_id, "dev"),
                                _place_among(_SCENARIOS, _SCENARIOS.deviation_id, "sc"))


def place_in_node(session: Session, deviation: Deviation, scenario: Scenario) -> tuple[int, int]:
    """The deviation's place in its node and the scenario's in its deviation (from 1), counted
    through the parent indexes in one statement instead of reading every sibling's id."""
    found = session.connection().execute(_PLACE_IN_NODE, {
        "dev_parent": deviation.node_id, "dev_position": deviation.position,
        "dev_id": deviation.id, "sc_parent": scenario.deviation_id,
        "sc_position": scenario.position, "sc_id": scenario.id}).one()
    return int(found[0]), int(found[1])


def fetch_recommendations_of_node(session: Session,
                                  node_id: int) -> list[tuple[int, Recommendation]]:
    """Run recommendations_of_node."""
    return [(row[0], row[1]) for row in session.execute(recommendations_of_node(node_id))]


def studies_with_counts() -> Any:
    """Each study with its node and scenario counts, newest first."""
    nodes = select(func.count()).where(Node.study_id == Study.id).scalar_subquery()
    scenarios = select(func.count()).where(Scenario.study_id == Study.id).scalar_subquery()
    return select(Study, nodes, scenarios).order_by(Study.id.desc())  # type: ignore[union-attr]


def fetch_studies_with_counts(session: Session) -> list[tuple[Study, int, int]]:
    """Run studies_with_counts."""
    return [tuple(row) for row in session.exec(studies_with_counts()).all()]


def lock_study_order(session: Session, study_id: int) -> None:
    """Make this transaction the study's only reorderer until it commits.

    A reorder reads the siblings' positions and writes new ones; two at once would each write
    from a stale read and leave tied positions. A no-op UPDATE of the study row as the
    transaction's first statement takes the row lock on PostgreSQL and the write lock on
    SQLite, so the next reorder waits and then reads the committed order.
    """
    table = Study.__table__  # type: ignore[attr-defined]
    session.execute(update(table).where(table.c.id == study_id).values(id=table.c.id))


def step_figures_of_scenarios(study_id: int, scenario_ids: list[int]) -> Any:
    """step_figures_of_study for a few of its scenarios (the worksheet rows being drawn)."""
    return step_figures_of_study(study_id).where(col(Step.scenario_id).in_(scenario_ids))


def scenario_outline_of_node(node_id: int) -> Any:
    """Each scenario of one node in worksheet order: what a slim worksheet row shows and the
    ratings its figures need, as plain rows (no steps)."""
    columns: list[Any] = [Scenario.id, Scenario.deviation_id, Scenario.cause,
                          Scenario.consequence, Scenario.severity_category_id,
                          Scenario.environment_category_id, Scenario.asset_category_id,
                          Scenario.people_not_rated]  # Any: ORM attributes as columns
    return (select_columns(*columns)
            .join(Deviation, col(Deviation.id) == col(Scenario.deviation_id))
            .where(col(Deviation.node_id) == node_id)
            .order_by(col(Deviation.position), col(Deviation.id), col(Scenario.position),
                      col(Scenario.id)))


def child_counts_by_deviation(model: type[Any], node_id: int) -> Any:
    """(deviation id, how many) of a node's steps or safeguards, for the delete questions."""
    table: Any = model
    return (select_columns(col(Scenario.deviation_id), func.count(table.id).label("how_many"))
            .join(Scenario, col(Scenario.id) == table.scenario_id)
            .join(Deviation, col(Deviation.id) == col(Scenario.deviation_id))
            .where(col(Deviation.node_id) == node_id)
            .group_by(col(Scenario.deviation_id)))
