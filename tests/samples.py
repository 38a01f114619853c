"""Study content shared by the export and import tests: hostile text, an edited demo study."""

from sqlmodel import Session, func, select

from app.db.models import Participant, Revision, Scenario, Step, Study, text_limit
from app.db.queries import fetch_rows_of_study
from app.db.snapshot_store import store_snapshot
from app.likelihood.types import StepKind
from app.services.exchange.study_file import export_study
from tests.factories import (
    make_deviation,
    make_node,
    make_safeguard,
    make_scenario,
    make_step,
    make_study,
)

# Text a spreadsheet would run as a formula (OWASP, CSV Injection), markup, other scripts.
FORMULA_TEXTS = ["=1+1", "+cmd|' /C calc'!A0", "-2+3", "@SUM(A1:A2)", "\t=1+1", "\r=1+1"]
MARKUP = "<script>alert('x')</script><b>bold</b> & \"quotes\""
SCRIPTS = {
    "arabic": "صمام الأمان مغلق",
    "chinese": "储罐液位过高",
    "devanagari": "सुरक्षा वाल्व बंद",
    "emoji": "🔥⚠️🛢️",
}
# As long as a cause may be: the database refuses longer text (PostgreSQL enforces VARCHAR).
LONG_TEXT = ("long-" * 1000)[: text_limit(Scenario, "cause")]


def study_count(session: Session) -> int:
    """How many studies the database holds."""
    return session.exec(select(func.count()).select_from(Study)).one()


def make_hostile_study(session: Session, *, long_text: str = LONG_TEXT) -> Study:
    """A study whose every kind of text is hostile; one scenario short of target, one meeting it."""
    study = make_study(session, title=f"Hostile {MARKUP} {SCRIPTS['arabic']}",
                       facility=SCRIPTS["chinese"], scope=SCRIPTS["devanagari"])
    node = make_node(session, study, name=f"{MARKUP} {SCRIPTS['emoji']}", number="=1")
    deviation = make_deviation(session, node, guideword="-2+3", parameter="@SUM(A1:A2)")
    short = make_scenario(session, deviation, cause=FORMULA_TEXTS[0], consequence=MARKUP,
                          notes=long_text)
    make_step(session, short, description=FORMULA_TEXTS[1], value=0.1)
    make_safeguard(session, short, description=SCRIPTS["emoji"])
    meets = make_scenario(session, deviation, cause=FORMULA_TEXTS[2],
                          consequence=f"{SCRIPTS['chinese']} {SCRIPTS['devanagari']}",
                          initiating_frequency=1e-3)
    make_step(session, meets, description=FORMULA_TEXTS[3], value=1e-3)
    long_cause = make_scenario(session, deviation, cause=long_text,
                               consequence=FORMULA_TEXTS[4] + FORMULA_TEXTS[5])
    make_step(session, long_cause, description=SCRIPTS["arabic"], value=0.01)
    return study


def edit_demo_study(session: Session, study: Study) -> None:
    """Edit, delete and add through the tracked session, then freeze a revision."""
    scenarios = fetch_rows_of_study(session, Scenario, study.id)
    scenarios[0].cause = scenarios[0].cause + " (reworded at the review)"
    step = next(s for s in fetch_rows_of_study(session, Step, study.id)
                if s.scenario_id == scenarios[1].id and s.kind != StepKind.INITIATING_EVENT)
    step.value = step.value / 2
    session.add(Participant(study_id=study.id, name="Late joiner (invented)", role="Observer"))
    session.delete(scenarios[2])
    session.commit()
    snapshot = export_study(session, study.id, with_history=False)
    session.add(Revision(study_id=study.id, label="Rev 1", note="issued for comment",
                         frozen_by="Test Scribe",
                         snapshot_parts=store_snapshot(session, study.id or 0, snapshot)))
    session.commit()


def free_the_title(session: Session, study: Study) -> None:
    """Rename `study` so a re-import of its file keeps the file's title (an import whose title
    exists is given a dated one), letting round-trip tests compare whole files."""
    study.title = f"{study.title[:150]} (renamed before re-import)"
    session.add(study)
    session.commit()
