"""Error factors in the study file: typed EFs and the study's defaults travel through export
and import (optional keys of schema version 2); files without them still import; an EF out of
bounds is refused with the field named."""

import json

import pytest
from sqlmodel import Session, select

from app.db.models import Step, Study
from app.services.exchange.study_file import StudyFileError, export_study
from app.services.exchange.study_import import import_study_text
from tests.factories import make_scenario_tree, make_step


def _study_with_error_factors(session: Session) -> Study:
    scenario = make_scenario_tree(session, error_factor_default_ipl=3.0)
    make_step(session, scenario, value=0.01, error_factor=10.0, description="Trip")
    study = session.get(Study, scenario.study_id)
    assert study is not None
    return study


def test_typed_efs_and_defaults_survive_export_and_import(session: Session) -> None:
    study = _study_with_error_factors(session)
    data = export_study(session, study.id or 0)
    assert data["study"]["error_factor_default_ipl"] == 3.0
    steps = data["nodes"][0]["deviations"][0]["scenarios"][0]["steps"]
    assert [s["error_factor"] for s in steps] == [None, 10.0]
    copy = import_study_text(session, json.dumps(data))
    assert copy.error_factor_default_ipl == 3.0
    assert copy.error_factor_default_initiating_event is None
    typed = session.exec(select(Step.error_factor).where(Step.study_id == copy.id)).all()
    assert sorted(typed, key=lambda v: v or 0) == [None, 10.0]
    assert export_study(session, copy.id or 0)["nodes"] == data["nodes"]


def test_a_file_without_error_factor_keys_still_imports(session: Session) -> None:
    data = export_study(session, _study_with_error_factors(session).id or 0)
    for key in [k for k in data["study"] if k.startswith("error_factor_default_")]:
        del data["study"][key]
    for step in data["nodes"][0]["deviations"][0]["scenarios"][0]["steps"]:
        del step["error_factor"]
    copy = import_study_text(session, json.dumps(data))
    assert copy.error_factor_default_ipl is None


@pytest.mark.parametrize("bad", [0.5, 1000.0])
def test_an_ef_out_of_bounds_is_refused(session: Session, bad: float) -> None:
    data = export_study(session, _study_with_error_factors(session).id or 0)
    data["nodes"][0]["deviations"][0]["scenarios"][0]["steps"][1]["error_factor"] = bad
    with pytest.raises(StudyFileError, match="error_factor"):
        import_study_text(session, json.dumps(data))
