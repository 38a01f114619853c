"""Incomplete scenarios in the shared core: a new scenario has no figures until the team gives
its initiating frequency and its severity, and every total, ranking, sum and SIL count leaves
it out and says so. Rule: app/likelihood/completeness.py (common practice, no source)."""

import csv
import io
import json

import pytest
from jinja2 import Environment
from sqlmodel import Session

from app.db.models import Scenario, Step, Study
from app.likelihood.types import StepKind
from app.routes.rendering import templates
from app.services.exchange.exports import ExportFormat, build_export
from app.services.exchange.study_file import StudyFileError, export_study, parse_study_file
from app.services.exchange.study_import import import_study_file
from app.services.risk.picture import build_risk_picture
from app.services.study.completeness import is_incomplete, missing_of
from app.services.study.listing import read_study_overview
from app.services.study.totals import study_totals
from app.services.study.tree import load_study_tree
from app.services.worksheet.structure import create_row
from tests.factories import (
    first_category,
    make_deviation,
    make_node,
    make_scenario,
    make_step,
    make_study,
)

ENV: Environment = templates.env


def _new_scenario(session: Session) -> tuple[Study, Scenario, Scenario]:
    """A study with one complete scenario short of target and one just added (incomplete)."""
    study = make_study(session)
    deviation = make_deviation(session, make_node(session, study))
    # 0.1 /yr x PFD 0.1 = 1e-2 /yr against 1e-5 /yr: short by three orders (hand computation).
    complete = make_scenario(session, deviation, initiating_frequency=0.1)
    make_step(session, complete, value=0.1)
    added = create_row(session=session, study_id=study.id or 0, kind_name="scenario",
                       parent_id=deviation.id, values={"cause": "Pump seal leaks"})
    return study, complete, added


def _initiating_event(session: Session, scenario: Scenario) -> Step:
    steps = load_study_tree(session, scenario.study_id).scenario_branches()
    found = next(b for b in steps if b.scenario.id == scenario.id)
    return next(s for s in found.steps if s.kind == StepKind.INITIATING_EVENT)


def test_a_new_scenario_has_no_initiating_frequency_and_no_severity(session: Session) -> None:
    _, _, added = _new_scenario(session)
    event = _initiating_event(session, added)
    assert added.severity_category_id is None
    assert event.value is None and event.value_text == ""
    assert missing_of(added, [event]) == ("initiating event frequency", "severity")


def test_the_outcome_of_an_incomplete_scenario_has_no_result_and_says_why(
    session: Session
) -> None:
    study, _, added = _new_scenario(session)
    branch = next(b for b in load_study_tree(session, study.id or 0).scenario_branches()
                  if b.scenario.id == added.id)
    assert branch.outcome.result is None and branch.outcome.incomplete
    assert branch.outcome.no_figures_words == (
        "incomplete: no initiating event frequency and no severity yet")


def test_totals_count_incomplete_scenarios_apart_from_short_and_unresolved(
    session: Session
) -> None:
    study, _, _ = _new_scenario(session)
    for totals in (study_totals(session, study.id or 0).study,
                   read_study_overview(session=session, study_id=study.id or 0).study_totals):
        assert (totals.scenario_count, totals.short_count, totals.unresolved_count,
                totals.incomplete_count) == (2, 1, 0, 1)
        assert totals.left_out.startswith("1 incomplete scenario left out")


def test_the_risk_picture_ranks_sums_and_counts_only_complete_scenarios(
    session: Session
) -> None:
    study, complete, _ = _new_scenario(session)
    picture = build_risk_picture(load_study_tree(session, study.id or 0))
    assert [r.scenario_id for r in picture.ranked] == [complete.id]
    assert [s.scenario_count for s in picture.category_sums] == [1]
    assert abs(picture.category_sums[0].summed_frequency - 1e-2) < 1e-15
    assert sum(b.low_demand + b.high_demand for b in picture.sil_counts) == 1
    assert [u.label for u in picture.incomplete] == ["Pump seal leaks → "]
    assert picture.unresolved == ()
    assert picture.left_out.startswith("1 incomplete scenario left out")


def test_giving_both_inputs_brings_the_figures(session: Session) -> None:
    study, _, added = _new_scenario(session)
    event = _initiating_event(session, added)
    stored = session.get(Step, event.id)
    scenario = session.get(Scenario, added.id)
    assert stored is not None and scenario is not None
    stored.value, stored.value_text = 1e-3, "1 in 1000"
    session.add(stored)
    session.commit()
    assert is_incomplete(scenario, [stored])  # the frequency alone is not enough
    scenario.severity_category_id = first_category(session, study).id
    session.add(scenario)
    session.commit()
    totals = study_totals(session, study.id or 0).study
    assert (totals.incomplete_count, totals.short_count) == (0, 2)  # 1e-3 /yr > 1e-5 /yr


def test_people_not_rated_counts_as_a_severity_decision(session: Session) -> None:
    """With people not rated the environment and asset ratings decide; none at all is the
    rule the arithmetic names (not computed), not an input still to give."""
    study, _, added = _new_scenario(session)
    event = _initiating_event(session, added)
    scenario = session.get(Scenario, added.id)
    assert scenario is not None
    scenario.people_not_rated = True
    assert missing_of(scenario, [event]) == ("initiating event frequency",)
    event.value = 0.1
    session.add_all([scenario, event])
    session.commit()
    branch = next(b for b in load_study_tree(session, study.id or 0).scenario_branches()
                  if b.scenario.id == added.id)
    assert not branch.outcome.incomplete
    assert branch.outcome.no_figures_words == (
        "not computed: no severity category: no target to compare with")


def test_a_scenario_without_any_initiating_event_is_not_computed_rather_than_incomplete(
    session: Session
) -> None:
    _, complete, _ = _new_scenario(session)
    assert missing_of(complete, []) == ()


def test_the_study_file_keeps_the_missing_values_and_imports_them_back(
    session: Session
) -> None:
    study, _, _ = _new_scenario(session)
    data = export_study(session, study.id or 0)
    scenarios = data["nodes"][0]["deviations"][0]["scenarios"]
    assert scenarios[1]["severity"] is None
    assert scenarios[1]["steps"][0]["value"] is None
    study.title = "Original (renamed before the copy comes in)"
    session.add(study)
    session.commit()
    copy = import_study_file(session, parse_study_file(
        build_export(session=session, study_id=study.id or 0, export_format=ExportFormat.JSON,
                     env=ENV).content))
    totals = study_totals(session, copy.id or 0).study
    assert (totals.scenario_count, totals.incomplete_count, totals.short_count) == (2, 1, 1)


def test_a_file_refuses_a_missing_value_on_any_step_but_the_initiating_event(
    session: Session
) -> None:
    study, _, _ = _new_scenario(session)
    data = export_study(session, study.id or 0)
    data["nodes"][0]["deviations"][0]["scenarios"][0]["steps"][1]["value"] = None
    with pytest.raises(StudyFileError, match="only an initiating event may be without a value"):
        parse_study_file(json.dumps(data))


def test_the_csv_says_incomplete_and_leaves_the_figures_empty(session: Session) -> None:
    study, _, _ = _new_scenario(session)
    export = build_export(session=session, study_id=study.id or 0,
                          export_format=ExportFormat.CSV, env=ENV)
    rows = list(csv.reader(io.StringIO(export.content.decode("utf-8-sig"), newline="")))
    header, added = rows[0], rows[2]
    record = dict(zip(header, added, strict=False))
    assert record["Scenario"] == "1.1.2"
    assert record["Status"] == "incomplete: no initiating event frequency and no severity yet"
    assert record["Initiating frequency (/yr)"] == ""
    assert record["Mitigated frequency (/yr)"] == "" and record["SIL target"] == ""
