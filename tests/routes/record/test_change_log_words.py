"""The change log reads as words: field names, rows by place and text, categories by name,
proof-test inputs as one line, no database ids; X -> X is no change; filters and the CSV."""

import csv
import io
import json
import re

from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import (
    ChangeLogEntry,
    Node,
    Participant,
    Recommendation,
    Safeguard,
    Scenario,
    SeverityCategory,
    Step,
    Study,
)
from app.db.tracking import AUTHOR_KEY
from app.likelihood.types import StepKind
from app.routes.rendering import CAUTIONS
from app.services.record.revisions import freeze_revision
from tests.factories import make_node, make_scenario_tree, make_step
from tests.helpers import table_rows

MODEL_COLUMNS = {column.key for model in (Study, Node, Scenario, Step, Safeguard, Recommendation,
                                          SeverityCategory, Participant)
                 for column in model.__table__.columns}  # type: ignore[attr-defined]


def _log_rows(html: str) -> list[dict[str, str]]:
    header, *body = table_rows(html, "change-log")
    return [dict(zip(header, row, strict=True)) for row in body]


def _edit_the_demo_as_a_session_would(session: Session, study: Study) -> dict[str, str]:
    """One edit of each kind the log words specially; returns what some cells must read."""
    session.info[AUTHOR_KEY] = "Rosa Lind"
    scenario = session.exec(select(Scenario).where(Scenario.study_id == study.id)
                            .order_by(Scenario.id)).first()
    assert scenario is not None
    categories = session.exec(select(SeverityCategory).where(
        SeverityCategory.study_id == study.id)).all()
    before = next(c for c in categories if c.id == scenario.severity_category_id)
    after = next(c for c in categories if c.id != scenario.severity_category_id)
    scenario.severity_category_id = after.id or 0
    steps = session.exec(select(Step).where(Step.scenario_id == scenario.id)).all()
    ipl = next(s for s in steps if s.kind == StepKind.IPL)
    ipl.value, ipl.value_text, ipl.credited = 0.002, "2e-3", not ipl.credited
    ipl.typical_key = "bpcs_layer"
    ipl.proof_test = json.dumps({"method": "IEC 61508-6 Annex B", "architecture": "1oo2",
                                 "lambda_du": 2e-6, "lambda_dd": 0.0,
                                 "proof_test_interval_hours": 8760, "proof_test_coverage": 0.9,
                                 "pfd_avg": 0.0011, "typed": {"architecture": "1oo2"}})
    node = session.exec(select(Node).where(Node.study_id == study.id)).first()
    assert node is not None
    node.name = node.name + " (east)"
    action = session.exec(select(Recommendation).where(
        Recommendation.study_id == study.id, Recommendation.status == "open")).first()
    assert action is not None
    action.status = "in_progress"  # type: ignore[assignment]
    session.add(Participant(study_id=study.id or 0, name="Quentin Ash", role="Operator"))
    session.commit()
    session.delete(next(s for s in steps if s.kind != StepKind.INITIATING_EVENT and s is not ipl))
    session.commit()
    freeze_revision(session=session, study_id=study.id or 0, frozen_by="Rosa Lind",
                    values={"label": "Rev A", "signed_off_by": "Dana Whitlock", "note": ""})
    return {"Severity": f"{before.name} → {after.name}"}


def test_every_entry_of_the_edited_demo_reads_as_words(
    client: TestClient, session: Session, demo_study: Study
) -> None:
    expected = _edit_the_demo_as_a_session_would(session, demo_study)
    rows = _log_rows(client.get(f"/studies/{demo_study.id}/changes").text)
    assert len(rows) >= 9
    for row in rows:
        for column in ("Change", "Item", "Field", "Old → new"):
            text = row[column]
            assert "#" not in text and not re.search(r"\b\w+_\w+\b", text), (column, text)
        assert row["Field"] not in MODEL_COLUMNS, row  # 'Severity', never 'severity_category_id'
        assert not row["Item"].startswith(("step ", "scenario ", "node ")), row
    by_field = {row["Field"]: row for row in rows}
    assert by_field["Severity"]["Old → new"] == expected["Severity"]
    assert by_field["Severity"]["Item"].startswith("Scenario 1.1.1 — ")
    assert by_field["Proof-test inputs"]["Old → new"] == (
        "(empty) → 1oo2, λDU 2.0e-6/h, proof test every 8760 h, coverage 90 %: PFDavg 1.1e-3")
    assert re.fullmatch(r"Step IPL \d of scenario 1\.1\.1( — .+)?",
                        by_field["Value"]["Item"]), by_field["Value"]["Item"]
    assert by_field["Status"]["Old → new"] == "open → in progress"
    assert by_field["Credited"]["Old → new"] in ("yes → no", "no → yes")
    assert by_field["Typical-value row"]["Old → new"].startswith("(empty) → ")
    assert ("frozen", "Revision Rev A, signed off by Dana Whitlock") in {
        (r["Change"], r["Item"]) for r in rows}
    deleted = [r for r in rows if r["Change"] == "deleted"]
    assert deleted and deleted[0]["Item"].endswith("(no longer in the study)")


def test_typing_a_field_away_and_back_leaves_no_entry(client: TestClient, session: Session) -> None:
    scenario = make_scenario_tree(session)
    step = make_step(session, scenario, value=0.1, value_text="1 in 10", description="Alarm")
    url = f"/studies/{scenario.study_id}/steps/{step.id}/value"
    for typed in ("1 in 100", "1 in 10"):
        assert client.post(url, data={"value_text": typed}).status_code in (200, 303)
    fields = session.exec(select(ChangeLogEntry.field).where(
        ChangeLogEntry.entity == "step", ChangeLogEntry.action == "edit")).all()
    assert fields == []


def test_the_node_and_person_filters_and_the_csv_of_what_they_show(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    study = session.get(Study, scenario.study_id)
    assert study is not None
    session.info[AUTHOR_KEY] = "Olu"
    other = make_node(session, study, number="2", name="Stripper")
    other.design_intent = "Strip light ends"
    session.commit()
    html = client.get(f"/studies/{study.id}/changes", params={"node_id": str(other.id)}).text
    assert {r["Item"] for r in _log_rows(html)} == {"Node 2 — Stripper"}
    html = client.get(f"/studies/{study.id}/changes", params={"who": "Olu"}).text
    assert {r["Who"] for r in _log_rows(html)} == {"Olu"}
    assert '<option value="Olu" selected>Olu</option>' in html
    response = client.get(f"/studies/{study.id}/changes.csv", params={"who": "Olu"})
    assert response.headers["content-type"].startswith("text/csv")
    lines = list(csv.reader(io.StringIO(response.content.decode("utf-8-sig"))))
    assert lines[0] == ["When (UTC)", "Who", "Change", "Item", "Field", "Old value", "New value"]
    assert [line[1:5] for line in lines[1:-1]] == [
        ["Olu", "changed", "Node 2 — Stripper", "Design intent"],
        ["Olu", "added", "Node 2 — Stripper", ""]]
    assert lines[-1] == ["Cautions", CAUTIONS]
    assert client.get(f"/studies/{study.id}/changes.csv",
                      params={"to": "2026-01-01", "from": "2026-02-01"}).status_code == 422
