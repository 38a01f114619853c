"""Load the invented demo study: one loader for `make run`, the tests and the docs."""

from pathlib import Path

from sqlmodel import Session, select

from app.db.models import Study
from app.services.exchange.study_import import import_study_text
from app.settings import PROJECT_ROOT

DEMO_STUDY_PATH = PROJECT_ROOT / "sample_data" / "demo_study.json"


def load_demo_study(session: Session, path: Path = DEMO_STUDY_PATH) -> Study:
    """Import the invented demo study and return it."""
    return import_study_text(session, path.read_text(encoding="utf-8"))


def load_demo_if_empty(session: Session) -> Study | None:
    """Import the demo study only into a database with no studies."""
    if session.exec(select(Study.id).limit(1)).first() is not None:
        return None
    return load_demo_study(session)
