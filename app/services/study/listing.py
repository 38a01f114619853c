"""Study listing and the study overview page's data."""

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

from sqlalchemy import delete
from sqlmodel import Session

from app.db.models import Scenario, Study
from app.db.queries import fetch_studies_with_counts
from app.likelihood.completeness import left_out_words
from app.likelihood.types import ScenarioResult
from app.services.study.results import Assessment

if TYPE_CHECKING:  # the overview's own module imports this one
    from app.services.study.overview import StudyOverview
from app.services.study.tree import (
    NodeBranch,
    NotFoundError,
    ScenarioBranch,
)


@dataclass(frozen=True)
class StudyListing:
    """One line of the study list."""

    study: Study
    node_count: int
    scenario_count: int


@dataclass(frozen=True)
class NodeTotals:
    """What a node adds up to."""

    scenario_count: int
    short_count: int
    unresolved_count: int
    flagged_count: int = 0
    """Scenarios with a credit an IPL check doubts."""
    short_withdrawn_count: int = 0
    """Scenarios short of target once the flagged credits are withdrawn."""
    incomplete_count: int = 0
    """Scenarios without an initiating frequency or a severity yet (not in any other count)."""

    @property
    def left_out(self) -> str:
        """What these totals say about the incomplete scenarios they leave out ('' if none)."""
        return left_out_words(self.incomplete_count)


def list_studies(*, session: Session) -> list[StudyListing]:
    """Every study with its size."""
    return [StudyListing(*row) for row in fetch_studies_with_counts(session)]


def _withdrawn_result(assessment: Assessment) -> ScenarioResult:
    figures = assessment.withdrawn or assessment.as_credited
    return figures.result


def totals_of_results(assessments: Sequence[Assessment | None], *,
                      incomplete_count: int = 0) -> NodeTotals:
    """Count and sum scenario assessments; None stands for one that could not be computed,
    `incomplete_count` of those Nones are incomplete scenarios (counted apart)."""
    computed = [a for a in assessments if a is not None]
    return NodeTotals(
        scenario_count=len(assessments),
        short_count=sum(not a.as_credited.result.meets_target for a in computed),
        unresolved_count=len(assessments) - len(computed) - incomplete_count,
        incomplete_count=incomplete_count,
        flagged_count=sum(a.withdrawn is not None for a in computed),
        short_withdrawn_count=sum(not _withdrawn_result(a).meets_target for a in computed),
    )


def totals_of(scenarios: list[ScenarioBranch]) -> NodeTotals:
    """Count and sum a set of scenarios' outcomes."""
    return totals_of_results([s.outcome.assessment for s in scenarios],
                             incomplete_count=sum(s.outcome.incomplete for s in scenarios))


def node_totals(nodes: list[NodeBranch]) -> dict[int, NodeTotals]:
    """Totals for each node, keyed by node id."""
    return {n.node.id: totals_of(n.scenario_branches()) for n in nodes if n.node.id is not None}


def delete_study(*, session: Session, study_id: int) -> StudyListing:
    """Delete a study and everything it holds, in one transaction; returns what was deleted.

    Scenarios go first: they refer to severity categories with ON DELETE RESTRICT, which the
    study's own cascade could meet before it reached the scenarios. Everything else cascades
    from the study row. Plain statements, so no change-log entry points at a deleted study.
    """
    listing = next((row for row in list_studies(session=session) if row.study.id == study_id),
                   None)
    if listing is None:
        raise NotFoundError(f"There is no study with id {study_id}.")
    session.execute(delete(Scenario).where(Scenario.study_id == study_id))  # type: ignore[arg-type]
    session.execute(delete(Study).where(Study.id == study_id))  # type: ignore[arg-type]
    session.commit()
    return listing


def read_study_overview(*, session: Session, study_id: int) -> "StudyOverview":
    """The study page's data (services/study/overview.py), read from the stored results."""
    # Imported here: the overview builds on NodeTotals above, through the stored results.
    from app.services.study.overview import read_study_overview as read_overview
    return read_overview(session=session, study_id=study_id)
