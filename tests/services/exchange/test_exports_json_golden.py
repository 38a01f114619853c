"""The JSON export is byte for byte what the code wrote before its speed-up (issue 14).

Each golden file was exported by the old code (see golden/README.md): the demo study and an
invented study with two revisions (shared snapshot parts), an edit between them and estimate
rounds. Importing the file and exporting it again must give the same bytes: the study, its
history, the revision parts and `computed_figures` (read from the stored results the import
computed) in the same order, with the same number spellings.
"""

import gzip
from pathlib import Path

import pytest
from sqlmodel import Session, select

from app.db.models import ScenarioResultRow
from app.routes.rendering import templates
from app.services.exchange import exports
from app.services.exchange.export_source import MissingStoredResultError, stored_scenarios
from app.services.exchange.exports import ExportFormat, build_export
from app.services.exchange.study_import import import_study_text

GOLDEN = Path(__file__).parent / "golden"


def _export(session: Session, study_id: int) -> bytes:
    return build_export(session=session, study_id=study_id, export_format=ExportFormat.JSON,
                        env=templates.env).content


@pytest.mark.parametrize("name", ["demo", "generated"])
@pytest.mark.parametrize("per_piece", [7, 500])  # many pieces; one piece for all figures
def test_the_export_is_the_old_codes_bytes(session: Session, monkeypatch: pytest.MonkeyPatch,
                                           name: str, per_piece: int) -> None:
    golden = gzip.decompress((GOLDEN / f"{name}.json.gz").read_bytes())
    monkeypatch.setattr(exports, "FIGURES_PER_PIECE", per_piece)
    study = import_study_text(session, golden)
    exported = _export(session, study.id or 0)
    assert len(exported) == len(golden)
    assert exported == golden


def test_a_changed_export_fails_the_comparison(session: Session) -> None:
    """The comparison can fail: a study changed after import no longer exports the file."""
    golden = gzip.decompress((GOLDEN / "demo.json.gz").read_bytes())
    study = import_study_text(session, golden)
    study.scope = f"{study.scope} (changed)"
    session.add(study)
    session.commit()
    assert _export(session, study.id or 0) != golden


def test_a_scenario_without_its_stored_results_is_an_error_not_a_gap(session: Session) -> None:
    """The exports read each scenario with its stored row in one outer join: a missing row
    (a broken invariant: the study is current) stops the export naming the scenario, rather
    than leaving the scenario out or computing it silently."""
    study = import_study_text(session, gzip.decompress((GOLDEN / "demo.json.gz").read_bytes()))
    victim = session.exec(select(ScenarioResultRow).where(
        ScenarioResultRow.study_id == study.id)).first()
    assert victim is not None
    session.delete(victim)
    session.commit()
    with pytest.raises(MissingStoredResultError, match=f"scenario {victim.scenario_id} "):
        list(stored_scenarios(session, study.id or 0))
