"""Query builders (pure: they return statements) and the one-line runners beside them."""

from typing import Any, TypeVar

from sqlmodel import Session, func, select
from sqlmodel.sql.expression import SelectOfScalar

from app.db.models import Node, Scenario, Study

Row = TypeVar("Row")


def rows_of_study(model: type[Row], study_id: int) -> SelectOfScalar[Row]:
    """Every row of `model` in one study, in display order."""
    table: Any = model
    statement = select(model).where(table.study_id == study_id)
    if hasattr(model, "position"):
        return statement.order_by(table.position, table.id)
    return statement.order_by(table.id)


def fetch_rows_of_study(session: Session, model: type[Row], study_id: int) -> list[Row]:
    """Run rows_of_study."""
    return list(session.exec(rows_of_study(model, study_id)).all())


def studies_with_counts() -> Any:
    """Each study with its node and scenario counts, newest first."""
    nodes = select(func.count()).where(Node.study_id == Study.id).scalar_subquery()
    scenarios = select(func.count()).where(Scenario.study_id == Study.id).scalar_subquery()
    return select(Study, nodes, scenarios).order_by(Study.id.desc())  # type: ignore[union-attr]


def fetch_studies_with_counts(session: Session) -> list[tuple[Study, int, int]]:
    """Run studies_with_counts."""
    return [tuple(row) for row in session.exec(studies_with_counts()).all()]  # type: ignore[misc]
