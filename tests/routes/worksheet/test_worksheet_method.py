"""Issue 9 on the worksheet and the overview: demand on an added SIF, a line per receptor,
figures with flagged credits withdrawn, and bounded inputs refused with the rule named."""
# ruff: noqa: RUF001, RUF002 - the multiplication sign is what the page shows

import re
from html import unescape

from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import Receptor, Step, Study
from app.likelihood.types import StepKind
from tests.factories import first_category, make_category, make_scenario_tree, make_step
from tests.helpers import HX, figures, table_rows, text_of

HOURS_PER_YEAR = 8760  # a year is 8760 h throughout


def _page(client: TestClient, study_id: int) -> str:
    return unescape(client.get(f"/studies/{study_id}/worksheet", follow_redirects=True).text)


def _initiating(session: Session, scenario_id: int) -> Step:
    return session.exec(select(Step).where(Step.scenario_id == scenario_id,
                                           Step.kind == StepKind.INITIATING_EVENT)).one()


def test_the_demand_case_is_high_demand_in_the_sil_2_pfh_band(
    client: TestClient, session: Session
) -> None:
    """5 /yr, one modifier of 0.01, no layers, against 1e-5 /yr.

    By hand: the demand rate on an added SIF is 5 /yr (modifiers act after the release and do
    not reduce it), above once a year, so high demand (IEC 61511-1:2016, modes of operation;
    from memory). Required PFH = 1e-5 / (8760 × 0.01) = 1.14e-7 /h, inside SIL 2's band
    1e-7 to < 1e-6 /h (IEC 61511-1:2016 high-demand table; values secondary).
    """
    scenario = make_scenario_tree(session)
    initiating = _initiating(session, scenario.id or 0)
    initiating.value = 5.0
    session.add(initiating)
    session.commit()
    make_step(session, scenario, kind=StepKind.CONDITIONAL_MODIFIER, value=0.01,
              description="Someone in the area", position=1)
    required_pfh = 1e-5 / (HOURS_PER_YEAR * 0.01)
    assert 1e-7 <= required_pfh < 1e-6
    page = _page(client, scenario.study_id)
    shown = figures(page, scenario.id or 0)
    assert shown["sil"] == "SIL 2"
    region = text_of(page, f"scenario-{scenario.id}-results")
    assert "Demand on an added SIF: 5.0e0 /yr · high demand" in region
    assert "PFH = 1.0e-5 ÷ (8760 h x 1.0e-2) = 1.1e-7/h" in region


def test_a_low_demand_case_says_low_demand_and_its_rrf(
    client: TestClient, session: Session
) -> None:
    """0.1 /yr with a relief valve at 0.01: demand 0.1 /yr ≤ 1, RRF = 1e-3 / 1e-5 = 100."""
    scenario = make_scenario_tree(session)
    make_step(session, scenario, value=0.01, description="Relief valve",
              ipl_type="relief_device")
    region = text_of(_page(client, scenario.study_id), f"scenario-{scenario.id}-results")
    assert "Demand on an added SIF: 1.0e-3 /yr · low demand" in region
    assert "RRF = 1.0e-3 ÷ 1.0e-5 = 1.0e2" in region


def test_the_environment_line_governs_when_people_modifiers_do_not_apply_to_it(
    client: TestClient, session: Session
) -> None:
    """People 1e-5 /yr, environment 1e-4 /yr; IE 0.1 /yr, presence 0.1 and fatality 0.5
    (people only, CCPS 2013 concept; from memory).

    By hand: people 0.1 × 0.1 × 0.5 = 5e-3 /yr, ratio 500 (shown 5.0e2); environment 0.1 /yr (no
    people modifier), ratio 1000: the environment needs the larger risk reduction and governs,
    though its tolerable frequency is the laxer one.
    """
    scenario = make_scenario_tree(session)
    study = session.get(Study, scenario.study_id)
    assert study is not None
    environment = make_category(session, study, name="E1 Local spill",
                                tolerable_frequency=1e-4, receptor=Receptor.ENVIRONMENT)
    scenario.environment_category_id = environment.id
    session.add(scenario)
    session.commit()
    make_step(session, scenario, kind=StepKind.CONDITIONAL_MODIFIER, value=0.1,
              description="Operator present", modifier_kind="presence", position=1)
    make_step(session, scenario, kind=StepKind.CONDITIONAL_MODIFIER, value=0.5,
              description="Probability of fatality", modifier_kind="vulnerability",
              position=2)
    page = _page(client, scenario.study_id)
    lines = {row[0]: row for row in _receptor_rows(page, scenario.id or 0)}
    assert lines["People"][2:5] == ["5.0e-3", "1.0e-5", "5.0e2"]
    assert lines["Environment ◆ governs"][2:5] == ["1.0e-1", "1.0e-4", "1.0e3"]
    assert lines["Asset"][1] == "not rated"
    shown = figures(page, scenario.id or 0)
    assert shown["mitigated"] == "1.0e-1 /yr" and shown["tolerable"] == "1.0e-4 /yr"


def _receptor_rows(page: str, scenario_id: int) -> list[list[str]]:
    region = re.search(rf'id="scenario-{scenario_id}-results".*?</table>', page, re.S)
    assert region is not None
    table = region[0].replace("data-receptor-lines", 'id="lines"')
    return [row for row in table_rows(table, "lines") if row and row[0] != "Receptor"]


def test_people_not_rated_leaves_only_the_other_receptors(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    study = session.get(Study, scenario.study_id)
    assert study is not None
    asset = make_category(session, study, name="A1", tolerable_frequency=1e-2,
                          receptor=Receptor.ASSET)
    scenario.asset_category_id, scenario.people_not_rated = asset.id, True
    session.add(scenario)
    session.commit()
    page = _page(client, scenario.study_id)
    lines = {row[0]: row for row in _receptor_rows(page, scenario.id or 0)}
    assert lines["People"][1] == "not rated" and "Asset ◆ governs" in lines
    assert figures(page, scenario.id or 0)["tolerable"] == "1.0e-2 /yr"


def test_a_flagged_credit_changes_the_headline_on_the_overview(
    client: TestClient, session: Session
) -> None:
    """IE 1e-4 /yr, a BPCS layer credited at PFD 0.01 against 1e-5 /yr.

    As credited: 1e-6 /yr, meets target. The BPCS check (a BPCS layer better than 0.1 needs a
    BPCS designed to IEC 61511; IEC 61511-1:2016, clause 9.3) withdraws it: 1e-4 /yr,
    short ×10.
    """
    scenario = make_scenario_tree(session)
    initiating = _initiating(session, scenario.id or 0)
    initiating.value = 1e-4
    session.add(initiating)
    session.commit()
    make_step(session, scenario, value=0.01, description="DCS high level trip",
              ipl_type="bpcs", system_tag="DCS-2")
    overview = unescape(client.get(f"/studies/{scenario.study_id}").text)
    row = re.search(rf'id="scenario-row-{scenario.id}".*?</tr>', overview, re.S)
    assert row is not None
    assert "● meets target" in row[0] and "⚑ ▲ short ×1.0e1 1.0e-4 /yr" in " ".join(
        re.sub(r"<[^>]+>", " ", row[0]).split())
    assert text_of(overview, "study-totals") == (
        "Scenarios 1 Short of target 0 Short with flagged credits withdrawn 1 "
        "Scenarios with flagged credits 1")
    region = text_of(_page(client, scenario.study_id), f"scenario-{scenario.id}-results")
    assert "⚑ With flagged credits withdrawn (DCS high level trip taken at PFD 1): " \
           "mitigated 1.0e-4 /yr · ▲ short ×1.0e1" in region
    assert "the verdict changes" in region


def test_a_decimal_comma_is_refused_in_the_worksheet_and_nothing_is_saved(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    layer = make_step(session, scenario, value=0.1, value_text="0.1", ipl_type="passive")
    for typed in ("0,001", "0,010"):
        response = client.post(f"/studies/{layer.study_id}/steps/{layer.id}/value",
                                data={"value_text": typed}, headers=HX)
        assert response.status_code == 422
        assert "use a dot for decimals" in unescape(response.text)
    session.refresh(layer)
    assert layer.value == 0.1


def test_a_value_outside_what_lopa_can_mean_is_refused(
    client: TestClient, session: Session
) -> None:
    """1e-300 would underflow a product; a probability below 1e-9 is refused (rule
    probability_range; common practice, no source)."""
    scenario = make_scenario_tree(session)
    layer = make_step(session, scenario, value=0.1, value_text="0.1", ipl_type="passive")
    response = client.post(f"/studies/{layer.study_id}/steps/{layer.id}/value",
                           data={"value_text": "1e-300"}, headers=HX)
    assert response.status_code == 422
    assert "must be at least 1e-09" in unescape(response.text)
    session.refresh(layer)
    assert layer.value == 0.1


def test_a_decimal_comma_and_1e_300_are_refused_in_the_criteria(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    study = session.get(Study, scenario.study_id)
    assert study is not None
    category = first_category(session, study)
    for typed, words in (("0,001", "use a dot for decimals"),
                         ("1e-300", "must be from 1e-09 to 10000 events per year")):
        response = client.post(
            f"/studies/{study.id}/criteria/categories/{category.id}",
            data={"name": category.name, "description": "", "tolerable_frequency": typed,
                  "receptor": "people"})
        assert response.status_code == 422
        assert words in unescape(response.text)
    session.refresh(category)
    assert category.tolerable_frequency == 1e-5
