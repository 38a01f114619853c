"""The revision comparison shows what changed in estimate rounds, agreements and the word
scale between a frozen revision and the live study (or another revision).

The agreed value's figures are checked against scipy.stats.gmean of the typed estimates.
"""

import json

from fastapi.testclient import TestClient
from scipy.stats import gmean
from sqlmodel import Session, col, select

from app.db.models import EstimateRound, Study
from app.likelihood.estimates import EstimateUnit
from app.likelihood.numbers import format_number
from app.services.estimates import agreeing, answers, rounds, word_list
from app.services.estimates.agreeing import AgreementForm
from app.services.estimates.answers import Answerer
from app.services.exchange.study_file import export_study
from app.services.record.comparison import SEP, diff_studies
from app.services.record.revisions import freeze_revision
from tests.helpers import TEST_AUTHOR, table_rows


def _second_round_on_the_ullage_step(session: Session, study_id: int) -> list[float]:
    """Run round 2 on the demo's agreed ullage round and agree its geometric mean."""
    first = session.exec(select(EstimateRound).where(
        EstimateRound.study_id == study_id, col(EstimateRound.step_id).is_not(None))
        .order_by(col(EstimateRound.id))).first()
    assert first is not None and first.question.startswith("What is the probability that the "
                                                            "tank has less")
    again = rounds.open_next_round(session=session, study_id=study_id,
                                   round_id=first.id or 0)
    typed = {"A. Okafor": "0.2", "Wren Halvorsen-Pike": "0.1", "Desmond Achterberg": "0.4"}
    for person, text in typed.items():
        answers.give_estimate(session=session, study_id=study_id, round_id=again.id or 0,
                              answerer=Answerer(person, None), text=text)
    rounds.reveal_round(session=session, study_id=study_id, round_id=again.id or 0)
    agreeing.agree_round(session=session, study_id=study_id, round_id=again.id or 0,
                         form=AgreementForm("geometric_mean"))
    return [0.2, 0.1, 0.4]


def test_a_new_round_its_agreement_and_a_word_change_are_listed(
        session: Session, demo_study: Study) -> None:
    study_id = demo_study.id or 0
    frozen = freeze_revision(session=session, study_id=study_id, frozen_by=TEST_AUTHOR,
                             values={"label": "Rev A", "signed_off_by": "I. M."})
    values = _second_round_on_the_ullage_step(session, study_id)
    word_list.save_word_list(session=session, study_id=study_id,
                             unit=EstimateUnit.PROBABILITY,
                             text="rare = 1e-3\nunlikely = 1e-2\npossible = 0.1\nlikely = 0.3")
    diff = diff_studies(json.loads(frozen.snapshot),
                        export_study(session, study_id, with_history=False))
    added = diff.section("Estimate rounds")
    assert [(c.kind, c.where.rsplit(SEP, 1)[-1]) for c in added] == [("added", "round 2")]
    assert "enabling condition 'Ullage less than one tanker load" in added[0].where
    mean = format_number(float(gmean(values)))  # 2.0e-1: by hand (0.2·0.1·0.4)^(1/3) = 0.2
    step_value = [c for c in diff.section("Steps") if c.field == "value"]
    assert [(c.before, c.after) for c in step_value] == [("3.0e-1", mean)]
    words = diff.section("Word scale")
    assert [(c.where, c.field, c.before, c.after) for c in words] == [
        ("Word 'likely' (probability)", "value", "5.0e-1", "3.0e-1")]


def test_the_compare_page_has_a_table_of_round_changes(
        client: TestClient, session: Session, demo_study: Study) -> None:
    study_id = demo_study.id or 0
    frozen = freeze_revision(session=session, study_id=study_id, frozen_by=TEST_AUTHOR,
                             values={"label": "Rev A", "signed_off_by": "I. M."})
    _second_round_on_the_ullage_step(session, study_id)
    page = client.get(f"/studies/{study_id}/revisions/compare",
                      params={"from": frozen.id, "to": "live"}).text
    rows = table_rows(page, "changes-estimate-rounds")
    assert rows[0] == ["Change", "Where", "Field", "Before", "After"]
    assert rows[1][0] == "added" and rows[1][1].endswith("round 2")
