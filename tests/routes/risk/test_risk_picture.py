"""The study risk picture, read as data: ranking, sums, matrix cells, gap bars and SIL needs.

Every expected number below is worked by hand from the scenario's factors (a year is 8760 h).
"""

import re
from html import unescape

from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import Receptor, SeverityCategory, Step, Study
from app.services.risk.charts import ZONES
from tests.factories import make_category, make_deviation, make_node, make_scenario, make_step
from tests.helpers import table_rows


def _study(session: Session) -> tuple[Study, SeverityCategory, SeverityCategory]:
    study = Study(title="Risk picture case (invented)")
    session.add(study)
    session.commit()
    session.refresh(study)
    fatality = make_category(session, study, name="Fatality", tolerable_frequency=1e-5)
    spill = make_category(session, study, name="Spill", tolerable_frequency=1e-3,
                          receptor=Receptor.ENVIRONMENT)
    return study, fatality, spill


def built_case(session: Session) -> dict[str, object]:
    """Two fatality scenarios in one decade on node 1, a spill scenario on node 2."""
    study, fatality, spill = _study(session)
    node_1 = make_node(session, study, number="1", name="Feed drum")
    node_2 = make_node(session, study, number="2", name="Tank farm", position=1)
    more_level = make_deviation(session, node_1)
    low_flow = make_deviation(session, node_2, guideword="Less", parameter="Flow")
    # 0.1 x 0.01 = 1e-3 /yr against 1e-5: gap +2.0, RRF 100 -> SIL 1 (RRF 100 is SIL 1).
    first = make_scenario(session, more_level, cause="Valve A fails",
                          severity_category_id=fatality.id)
    make_step(session, first, value=0.01, description="Relief valve",
              ipl_type="relief_device")
    # 0.2 x 0.01 = 2e-3 /yr against 1e-5: gap log10(200) = +2.3, RRF 200 -> SIL 2.
    second = make_scenario(session, more_level, cause="Valve B fails",
                           initiating_frequency=0.2, severity_category_id=fatality.id)
    make_step(session, second, value=0.01, description="Relief valve",
              ipl_type="relief_device")
    # 1e-4 /yr against 1e-3: gap -1.0, meets target.
    third = make_scenario(session, low_flow, cause="Hose splits", initiating_frequency=1e-4,
                          severity_category_id=spill.id)
    return {"study": study, "fatality": fatality, "spill": spill, "nodes": (node_1, node_2),
            "scenarios": (first, second, third)}


def test_scenarios_are_ranked_by_gap_largest_first_with_links_to_the_worksheet(
    client: TestClient, session: Session
) -> None:
    case = built_case(session)
    study, (node_1, node_2) = case["study"], case["nodes"]
    _, second, third = case["scenarios"]
    page = client.get(f"/studies/{study.id}/risk").text
    rows = [[r[0], r[3].split(" → ")[0], r[4], r[5], r[6], r[7], r[8], r[9]]
            for r in table_rows(page, "ranked-table")[1:]]
    assert rows == [
        ["1", "Valve B fails", "Fatality (people)", "2.0e-3", "1.0e-5", "+2.3", "SIL 2",
         "▲ short"],
        ["2", "Valve A fails", "Fatality (people)", "1.0e-3", "1.0e-5", "+2.0", "SIL 1",
         "▲ short"],
        ["3", "Hose splits", "Spill (environment)", "1.0e-4", "1.0e-3", "-1.0", "None needed",
         "● meets"],
    ]
    assert f'href="/studies/{study.id}/nodes/{node_1.id}#scenario-{second.id}"' in page
    assert f'href="/studies/{study.id}/nodes/{node_2.id}#scenario-{third.id}"' in page


def test_summed_mitigated_frequency_per_category_and_counts_per_node(
    client: TestClient, session: Session
) -> None:
    study = built_case(session)["study"]
    page = client.get(f"/studies/{study.id}/risk").text
    # Fatality: 1e-3 + 2e-3 = 3e-3; spill: 1e-4. Most severe (lowest tolerable) first.
    assert table_rows(page, "category-table")[1:] == [
        ["Fatality", "people", "1.0e-5", "2", "2", "3.0e-3"],
        ["Spill", "environment", "1.0e-3", "1", "0", "1.0e-4"],
    ]
    # Per node: counts only (a sum across categories would add unlike consequences).
    assert table_rows(page, "node-table")[1:] == [
        ["1 Feed drum", "2", "2", "0", "0", "2"],
        ["2 Tank farm", "1", "0", "0", "0", "0"],
    ]


def _cells(page: str) -> dict[str, tuple[str, int]]:
    found = re.findall(r'data-cell="([^"]+)" data-zone="(\w+)" data-count="(\d+)"', page)
    return {key: (zone, int(count)) for key, zone, count in found}


def test_each_matrix_cell_counts_its_scenarios_against_the_rows_target(
    client: TestClient, session: Session
) -> None:
    case = built_case(session)
    fatality, spill = case["fatality"].id, case["spill"].id
    cells = _cells(client.get(f"/studies/{case['study'].id}/risk").text)
    assert len(cells) == 2 * 8  # two categories x eight decades (< 1e-6 ... >= 1)
    assert cells[f"cat-{fatality}:decade--3"] == ("far", 2)  # 1e-3 and 2e-3, >= 100 x 1e-5
    assert cells[f"cat-{spill}:decade--4"] == ("meets", 1)  # [1e-4, 1e-3) is at or below 1e-3
    assert cells[f"cat-{fatality}:decade--5"] == ("short", 0)  # [1e-5, 1e-4): up to 100 x
    assert cells[f"cat-{fatality}:decade--6"] == ("meets", 0)
    assert sum(count for _, count in cells.values()) == 3


def test_the_most_severe_category_is_the_top_row(client: TestClient, session: Session) -> None:
    case = built_case(session)
    page = client.get(f"/studies/{case['study'].id}/risk").text
    assert page.index(f'data-cell="cat-{case["fatality"].id}:') < page.index(
        f'data-cell="cat-{case["spill"].id}:')


def test_a_cell_link_lists_that_cells_scenarios(client: TestClient, session: Session) -> None:
    case = built_case(session)
    key = f"cat-{case['fatality'].id}:decade--3"
    page = client.get(f"/studies/{case['study'].id}/risk").text
    assert f'href="?cell={key}#cell-scenarios"' in page
    listed = client.get(f"/studies/{case['study'].id}/risk", params={"cell": key}).text
    rows = table_rows(listed, "cell-table")
    assert [r[1].split(" → ")[0] for r in rows[1:]] == ["Valve B fails", "Valve A fails"]
    assert "Fatality, 1e-3 to 1e-2 per year: 2 scenarios" in listed


def test_an_unknown_cell_is_refused_with_the_rule(client: TestClient, session: Session) -> None:
    study = built_case(session)["study"]
    response = client.get(f"/studies/{study.id}/risk", params={"cell": "cat-999:decade-2"})
    assert response.status_code == 422
    assert "'cat-999:decade-2' is not a cell of this study's matrix" in unescape(response.text)


def test_each_matrix_zone_has_its_own_letter_pattern_and_legend_text(
    client: TestClient, session: Session
) -> None:
    """Status is never told by colour alone: letter, pattern and words differ for each zone."""
    study = built_case(session)["study"]
    page = client.get(f"/studies/{study.id}/risk").text
    zones = list(ZONES.values())
    assert len({z.letter for z in zones}) == len({z.pattern for z in zones}) == len(zones)
    assert len({z.fill for z in zones}) == len(zones)
    for zone in zones:
        assert f"{zone.letter} = {zone.title}" in page
    assert 'fill="url(#rm-hatch)"' in page and 'fill="url(#rm-cross)"' in page


def test_gap_bars_put_meeting_scenarios_left_of_zero_with_a_label(
    client: TestClient, session: Session
) -> None:
    study = built_case(session)["study"]
    page = client.get(f"/studies/{study.id}/risk").text
    bars = re.findall(r'class="gap-bar" data-status="(\w+)" data-gap="([^"]+)"', page)
    assert bars == [("short", "+2.3"), ("short", "+2.0"), ("meets", "-1.0")]
    assert "+2.3 ▲ short" in page and "-1.0 ● meets" in page


def test_added_functions_are_counted_per_sil_band(client: TestClient, session: Session) -> None:
    study = built_case(session)["study"]
    page = client.get(f"/studies/{study.id}/risk").text
    counts = {row[0]: (row[1], row[2]) for row in table_rows(page, "sil-count-table")[1:]}
    assert counts == {"Below SIL 1": ("0", "0"), "SIL 1": ("1", "0"), "SIL 2": ("1", "0"),
                      "SIL 3": ("0", "0"), "SIL 4": ("0", "0"),
                      "Beyond one function": ("0", "0")}
    needs = [row[1:7] for row in table_rows(page, "sil-needs-table")[1:]]
    # RRF 200 and 100 (a required RRF is shown whole); target PFD 1/RRF; low demand (demand
    # at most once a year).
    assert needs == [["2.0e-3", "200", "low demand", "SIL 2", "5.0e-3", "—"],
                     ["1.0e-3", "100", "low demand", "SIL 1", "1.0e-2", "—"]]


def test_a_demand_above_once_a_year_gives_a_high_demand_pfh_target(
    client: TestClient, session: Session
) -> None:
    """IEC 61511-1:2016 high-demand table (values secondary): PFH [1e-7, 1e-6) is SIL 2.

    Demand 5 /yr without the added function > 1 /yr -> high demand; the target is the
    tolerable frequency per hour: 1e-3 / 8760 h = 1.14e-7 per hour -> SIL 2.
    """
    study, _, spill = _study(session)
    deviation = make_deviation(session, make_node(session, study))
    scenario = make_scenario(session, deviation, initiating_frequency=5.0,
                             severity_category_id=spill.id)
    assert scenario.id is not None
    page = client.get(f"/studies/{study.id}/risk").text
    need = table_rows(page, "sil-needs-table")[1]
    assert need[1:7] == ["5.0e0", "5,000", "high demand", "SIL 2", "—", "1.1e-7"]
    assert need[7] == "High demand (5.0e0/yr > 1/yr): PFH = 1.0e-3 ÷ (8760 h x 1.0e0) = 1.1e-7/h"
    counts = {row[0]: (row[1], row[2]) for row in table_rows(page, "sil-count-table")[1:]}
    assert counts["SIL 2"] == ("0", "1")


def test_a_scenario_that_cannot_be_computed_is_listed_with_the_reason(
    client: TestClient, session: Session
) -> None:
    case = built_case(session)
    scenario = case["scenarios"][2]
    for step in session.exec(select(Step).where(Step.scenario_id == scenario.id)).all():
        session.delete(step)  # no initiating event left: nothing to compute
    session.commit()
    page = client.get(f"/studies/{case['study'].id}/risk").text
    assert "needs exactly one initiating event (found none)" in page
    assert len(table_rows(page, "ranked-table")) == 1 + 2


def test_the_demo_study_risk_picture_adds_up(client: TestClient, demo_study: Study) -> None:
    page = client.get(f"/studies/{demo_study.id}/risk").text
    ranked = table_rows(page, "ranked-table")[1:]
    gaps = [float(row[7]) for row in ranked]
    assert gaps == sorted(gaps, reverse=True) and len(ranked) >= 15
    counted = sum(count for _, count in _cells(page).values())
    assert counted == len(ranked)
    short = sum(row[9] == "▲ short" for row in ranked)
    sil_rows = table_rows(page, "sil-count-table")[1:]
    assert sum(int(r[1]) + int(r[2]) for r in sil_rows) == short


def test_an_unknown_study_has_no_risk_picture(client: TestClient, session: Session) -> None:
    assert client.get("/studies/999/risk").status_code == 404


def _flagged_bpcs_study(session: Session) -> Study:
    """One scenario at 1e-4 /yr whose only layer is a BPCS trip credited at PFD 0.01, which
    the BPCS credit check doubts (see the test below for the source)."""
    study, _, _ = _study(session)
    deviation = make_deviation(session, make_node(session, study))
    scenario = make_scenario(session, deviation, cause="Feed valve opens",
                             initiating_frequency=1e-4)
    make_step(session, scenario, value=0.01, description="DCS trip", ipl_type="bpcs",
              system_tag="DCS-2")
    return study


def test_the_picture_drawn_with_flagged_credits_withdrawn_changes_the_headline(
    client: TestClient, session: Session
) -> None:
    """A BPCS layer credited at PFD 0.01 (better than 0.1 needs a BPCS designed to IEC 61511;
    IEC 61511-1:2016, clause 9.3) on 1e-4 /yr against 1e-5 /yr.

    As credited: 1e-4 x 0.01 = 1e-6 /yr, meets (gap -1.0). Withdrawn (PFD 1): 1e-4 /yr, gap
    +1.0, RRF 10 -> below SIL 1 (RRF 10 needs no SIF band; IEC 61511-1:2016 Table 4).
    """
    study = _flagged_bpcs_study(session)
    credited = client.get(f"/studies/{study.id}/risk").text
    withdrawn = client.get(f"/studies/{study.id}/risk?credits=withdrawn").text
    row = table_rows(credited, "ranked-table")[1]
    assert row[3].startswith("⚑ Feed valve opens") and row[7:] == ["-1.0", "None needed",
                                                                   "● meets"]
    row = table_rows(withdrawn, "ranked-table")[1]
    assert row[5:] == ["1.0e-4", "1.0e-5", "+1.0", "Below SIL 1 (RRF ≤ 10)", "▲ short"]
    assert 'data-drawn="withdrawn"' in withdrawn and 'data-drawn="as-credited"' in credited


def test_matrix_links_keep_the_drawing_with_flagged_credits_withdrawn(
    client: TestClient, session: Session
) -> None:
    """Same case as above: withdrawn, the scenario sits at 1e-4 /yr (decade -4), so its cell
    link must ask for the withdrawn drawing again, and the listed row shows 1.0e-4."""
    study = _flagged_bpcs_study(session)
    url = f"/studies/{study.id}/risk"
    withdrawn = client.get(f"{url}?credits=withdrawn").text

    links = re.findall(r'<a href="(\?cell=[^"]+)"', withdrawn)
    assert len(links) == 1 and links[0].endswith("&amp;credits=withdrawn#cell-scenarios")
    listed = client.get(url + unescape(links[0]).split("#")[0]).text
    assert 'data-drawn="withdrawn"' in listed
    assert table_rows(listed, "cell-table")[1][2] == "1.0e-4"
    assert '<a href="?credits=withdrawn#risk-matrix">Clear the selection</a>' in listed
    credited = client.get(url).text
    assert all("credits=" not in link for link in re.findall(r'<a href="(\?cell=[^"]+)"', credited))
