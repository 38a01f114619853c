"""The risk criteria page: categories, the governing rule, re-evaluation on change, refusals."""

import re
from html import unescape

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session

from app.db.models import Receptor, SeverityCategory, Study
from tests.factories import (
    first_category,
    make_category,
    make_deviation,
    make_node,
    make_scenario,
    make_step,
    make_study,
)
from tests.helpers import table_rows


def three_scenarios(session: Session) -> tuple[Study, SeverityCategory]:
    """Mitigated 1e-3, 1e-4 and 1e-6 /yr against the study's one category (1e-5 /yr)."""
    study = make_study(session)
    deviation = make_deviation(session, make_node(session, study))
    for pfd in (0.01, 0.001, 0.00001):
        scenario = make_scenario(session, deviation)  # IE 0.1 /yr
        make_step(session, scenario, value=pfd, description="Relief valve",
                  ipl_type="relief_device")
    return study, first_category(session, study)


def _category_form(category: SeverityCategory, **changes: str) -> dict[str, str]:
    return {"name": category.name, "description": category.description,
            "tolerable_frequency": repr(category.tolerable_frequency),
            "receptor": str(category.receptor), **changes}


def _message(page: str) -> str:
    found = re.search(r'id="criteria-message" role="status">✓ ([^<]*)<', page)
    return unescape(found[1]) if found else ""


def test_the_page_shows_the_basis_and_each_categorys_use(
    client: TestClient, session: Session
) -> None:
    study, _ = three_scenarios(session)
    page = client.get(f"/studies/{study.id}/criteria").text
    assert "Example criteria, invented: replace with your company" in unescape(page)
    assert ("the rating needing the largest risk reduction governs the scenario's target"
            in " ".join(re.sub(r"<[^>]+>", "", unescape(page)).split()))
    assert table_rows(page, "criteria-table")[1:] == [
        ["Single fatality", "people", "1.0e-5", "once in 100,000 years · 1.0e-5 per year",
         "3", "3", "2"],
    ]


def test_changing_a_tolerable_frequency_re_evaluates_its_scenarios_at_once(
    client: TestClient, session: Session
) -> None:
    """Against 1e-5: 1e-3 and 1e-4 are short. Against 1e-3 (typed '1 in 1,000 years') none is."""
    study, category = three_scenarios(session)
    response = client.post(
        f"/studies/{study.id}/criteria/categories/{category.id}",
        data=_category_form(category, tolerable_frequency="1 in 1,000 years"),
    )
    assert response.status_code == 200
    assert _message(response.text) == (
        "'Single fatality' saved. 3 scenarios re-evaluated: 0 short of target (was 2); "
        "3 governed by this category (was 3).")
    session.refresh(category)
    assert category.tolerable_frequency == 1e-3
    overview = client.get(f"/studies/{study.id}").text
    assert overview.count("▲ short") == 0 and overview.count("● meets target") == 3


def test_tightening_a_criterion_makes_more_scenarios_short(
    client: TestClient, session: Session
) -> None:
    study, category = three_scenarios(session)
    response = client.post(f"/studies/{study.id}/criteria/categories/{category.id}",
                           data=_category_form(category, tolerable_frequency="1e-7"))
    assert "3 scenarios re-evaluated: 3 short of target (was 2)" in _message(response.text)


def test_the_most_demanding_rating_governs_a_scenario(
    client: TestClient, session: Session
) -> None:
    """A 1e-4 /yr scenario rated people 1e-3 and environment 1e-5: the environment governs."""
    study = make_study(session)
    people = first_category(session, study)
    environment = make_category(session, study, name="Off-site pollution",
                                tolerable_frequency=1e-5, receptor=Receptor.ENVIRONMENT)
    people.tolerable_frequency = 1e-3
    session.add(people)
    session.commit()
    deviation = make_deviation(session, make_node(session, study))
    make_scenario(session, deviation, initiating_frequency=1e-4,
                  environment_category_id=environment.id)
    rows = table_rows(client.get(f"/studies/{study.id}/criteria").text, "criteria-table")
    assert [(r[0], r[4], r[5], r[6]) for r in rows[1:]] == [
        ("Single fatality", "1", "0", "0"), ("Off-site pollution", "1", "1", "1")]
    response = client.post(
        f"/studies/{study.id}/criteria/categories/{environment.id}",
        data=_category_form(environment, tolerable_frequency="1e-2"))
    # Now people (1e-3) is the more demanding: it governs, and 1e-4 meets it.
    assert "1 scenario re-evaluated: 0 short of target (was 1); 0 governed by this " \
           "category (was 1)" in _message(response.text)


@pytest.mark.parametrize(
    ("field", "typed", "message"),
    [
        ("name", "", "Name: a category needs a name."),
        ("name", "x" * 81, "Name: at most 80 characters (got 81)."),
        ("description", "y" * 1001, "Description: at most 1000 characters (got 1001)."),
        ("tolerable_frequency", "rarely", "Tolerable frequency: not a number:"),
        ("tolerable_frequency", "0", "Tolerable frequency: a frequency must be a finite number"),
        ("tolerable_frequency", "", "Tolerable frequency: a value is required"),
        ("receptor", "planet", "Receptor: 'planet' is not one of people, environment, asset."),
    ],
)
def test_a_bad_category_edit_is_422_at_the_field_and_saves_nothing(
    client: TestClient, session: Session, field: str, typed: str, message: str
) -> None:
    study, category = three_scenarios(session)
    response = client.post(f"/studies/{study.id}/criteria/categories/{category.id}",
                           data=_category_form(category, **{field: typed}))
    assert response.status_code == 422
    error = re.search(rf'id="cat-{category.id}-{field}-error" role="alert">([^<]*)<',
                      response.text)
    assert error and unescape(error[1]).startswith(message)
    if typed and field != "receptor":
        assert typed[:20] in response.text  # the typed text is kept
    session.refresh(category)
    assert (category.name, category.tolerable_frequency) == ("Single fatality", 1e-5)


def test_a_category_can_be_added(client: TestClient, session: Session) -> None:
    study = make_study(session)
    response = client.post(f"/studies/{study.id}/criteria/categories", data={
        "name": "Major loss", "description": "Invented.", "tolerable_frequency": "1e-4",
        "receptor": "asset"})
    assert response.status_code == 200
    rows = table_rows(response.text, "criteria-table")
    assert rows[-1][:4] == ["Major loss", "asset", "1.0e-4",
                            "once in 10,000 years · 1.0e-4 per year"]


def test_a_bad_new_category_is_422_and_keeps_the_typed_text(
    client: TestClient, session: Session
) -> None:
    study = make_study(session)
    response = client.post(f"/studies/{study.id}/criteria/categories", data={
        "name": "Major loss", "description": "", "tolerable_frequency": "2 in zero years",
        "receptor": "asset"})
    assert response.status_code == 422
    assert 'id="new-tolerable_frequency-error"' in response.text
    assert 'value="2 in zero years"' in response.text
    assert len(table_rows(response.text, "criteria-table")) == 2  # header + the one category


def test_deleting_a_category_in_use_is_refused_with_the_reason(
    client: TestClient, session: Session
) -> None:
    study, category = three_scenarios(session)
    response = client.post(f"/studies/{study.id}/criteria/categories/{category.id}/delete")
    assert response.status_code == 409
    assert ("'Single fatality' was not deleted: 3 scenarios are rated with it."
            in unescape(response.text))
    assert session.get(SeverityCategory, category.id) is not None


def test_an_unused_category_can_be_deleted(client: TestClient, session: Session) -> None:
    study = make_study(session)
    spare_id = make_category(session, study, name="Spare", tolerable_frequency=1e-2).id
    response = client.post(f"/studies/{study.id}/criteria/categories/{spare_id}/delete")
    assert response.status_code == 200
    assert _message(response.text) == "'Spare' deleted."
    session.expunge_all()
    assert session.get(SeverityCategory, spare_id) is None


def test_the_criteria_basis_can_be_replaced(client: TestClient, session: Session) -> None:
    study = make_study(session)
    text = "Acme Chemicals risk standard RS-01 rev 4 (invented)."
    response = client.post(f"/studies/{study.id}/criteria/basis", data={"criteria_basis": text})
    assert response.status_code == 200
    assert text in response.text
    session.refresh(study)
    assert study.criteria_basis == text


@pytest.mark.parametrize(("typed", "message"), [
    ("  ", "Criteria basis: say where these criteria come from"),
    ("z" * 501, "Criteria basis: at most 500 characters (got 501)."),
])
def test_a_bad_criteria_basis_is_422_and_saves_nothing(
    client: TestClient, session: Session, typed: str, message: str
) -> None:
    study = make_study(session)
    response = client.post(f"/studies/{study.id}/criteria/basis", data={"criteria_basis": typed})
    assert response.status_code == 422
    assert message in response.text
    session.refresh(study)
    assert study.criteria_basis.startswith("Example criteria, invented")


def test_a_category_of_another_study_is_not_found(client: TestClient, session: Session) -> None:
    study, category = three_scenarios(session)
    other = make_study(session, title="Other (invented)")
    response = client.post(f"/studies/{other.id}/criteria/categories/{category.id}",
                           data=_category_form(category))
    assert response.status_code == 404
    assert study.id != other.id


def test_an_unedited_save_keeps_the_tolerable_frequency_exactly(
    client: TestClient, session: Session
) -> None:
    """The form shows the stored number in full, so saving it unchanged loses nothing."""
    study = make_study(session)
    category = first_category(session, study)
    category.tolerable_frequency = 3.33e-5
    session.add(category)
    session.commit()
    page = client.get(f"/studies/{study.id}/criteria").text
    assert f'id="cat-{category.id}-tolerable_frequency" name="tolerable_frequency" ' \
           'value="3.33e-5"' in page
    client.post(f"/studies/{study.id}/criteria/categories/{category.id}",
                data=_category_form(category, tolerable_frequency="3.33e-5"))
    session.refresh(category)
    assert category.tolerable_frequency == 3.33e-5


def test_governed_counts_follow_each_scenarios_governing_line_not_the_strictest_rating(
    client: TestClient, session: Session
) -> None:
    """People 1e-5 /yr is the stricter rating, but a presence modifier of 0.001 applies to
    people only (issue 9's receptor rule), so the environment line governs. By hand, IE 0.1 /yr:
    people 0.1 x 0.001 = 1e-4 against 1e-5, a factor of 10; environment 0.1 against 1e-3, a
    factor of 100 -> environment needs the larger reduction and governs."""
    study = make_study(session)
    people = first_category(session, study)  # 1e-5 /yr
    environment = make_category(session, study, name="Reportable release (invented)",
                                tolerable_frequency=1e-3, receptor=Receptor.ENVIRONMENT)
    scenario = make_scenario(session, make_deviation(session, make_node(session, study)),
                             environment_category_id=environment.id)
    make_step(session, scenario, kind="conditional_modifier", value=0.001,
              description="Area occupied (invented)", modifier_kind="presence")

    rows = table_rows(client.get(f"/studies/{study.id}/criteria").text, "criteria-table")[1:]

    by_name = {row[0]: (row[4], row[5], row[6]) for row in rows}  # rated, governed, short
    assert by_name[people.name] == ("1", "0", "0")
    assert by_name["Reportable release (invented)"] == ("1", "1", "1")
