"""The scenario table (CSV and the workbook's Scenarios sheet) carries issue 9's figures:
demand on an added SIF, each receptor's line and the figures with flagged credits withdrawn."""

import csv
import io

from sqlmodel import Session, select

from app.db.models import Receptor, Step, Study
from app.likelihood.types import StepKind
from app.services.exchange.export_csv import table_csv
from app.services.exchange.export_tables import scenario_table
from app.services.study.tree import load_study_tree
from tests.factories import make_category, make_scenario_tree, make_step


def test_the_csv_has_demand_receptor_lines_and_withdrawn_figures(session: Session) -> None:
    """IE 1e-4 /yr, presence 0.5 (people only), a BPCS layer at PFD 0.01; people 1e-5 /yr,
    asset 1e-6 /yr.

    By hand: people 1e-4 x 0.5 x 0.01 = 5e-7 /yr, ratio 0.05; asset 1e-4 x 0.01 = 1e-6 /yr,
    ratio 1 (governs: the larger ratio). Demand on an added SIF: 1e-4 x 0.01 = 1e-6 /yr.
    The BPCS check (IEC 61511-1:2016, clause 9.3) withdraws the layer: asset 1e-4 /yr, ratio
    100, RRF 100 -> SIL 1 (RRF 100 is SIL 1, IEC 61511-1:2016 Table 4; values secondary).
    """
    scenario = make_scenario_tree(session)
    study = session.get(Study, scenario.study_id)
    assert study is not None
    asset = make_category(session, study, name="A1", tolerable_frequency=1e-6,
                          receptor=Receptor.ASSET)
    scenario.asset_category_id = asset.id
    session.add(scenario)
    cause = session.exec(select(Step).where(Step.scenario_id == scenario.id)).one()
    cause.value = 1e-4
    session.add(cause)
    session.commit()
    make_step(session, scenario, kind=StepKind.CONDITIONAL_MODIFIER, value=0.5,
              description="Someone present", modifier_kind="presence", position=1)
    make_step(session, scenario, value=0.01, description="DCS trip", ipl_type="bpcs",
              system_tag="DCS-2")
    text = table_csv(scenario_table(load_study_tree(session, study.id or 0))).decode("utf-8-sig")
    row = next(csv.DictReader(io.StringIO(text)))
    assert float(row["Demand rate on an added SIF (/yr)"]) == 1e-6
    assert row["Governing receptor"] == "asset"
    assert float(row["People: mitigated (/yr)"]) == 5e-7
    assert float(row["People: ratio"]) == 0.05
    assert float(row["Asset: mitigated (/yr)"]) == 1e-6
    assert row["Environment: SIL target"] == "not rated"
    assert row["Flagged credits"] == "DCS trip"
    assert float(row["Withdrawn: mitigated (/yr)"]) == 1e-4
    assert float(row["Withdrawn: ratio"]) == 100
    assert row["Withdrawn: SIL target"] == "SIL 1"
    assert row["Withdrawn: status"] == "short of target"
