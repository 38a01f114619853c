"""The JSON study file is written while it is sent (issue 14): the pieces, put together, are
byte for byte the whole file dumped at once, with computed_figures computed from scratch
(`load_study_tree`, every scenario computed from its steps, not read from scenario_result)."""

import json

import pytest
from sqlmodel import Session

from app.db.models import Study
from app.routes.rendering import CAUTIONS, templates
from app.services.exchange import exports
from app.services.exchange.export_tables import computed_figures
from app.services.exchange.exports import ExportFormat, Piece, build_export, study_json_bytes
from app.services.exchange.study_file import export_study
from app.services.exchange.study_import import import_study_text
from app.services.study.tree import load_study_tree
from bench.generate import study_text
from tests.samples import free_the_title


def _whole_file(session: Session, study_id: int) -> bytes:
    """The file as one dump, the way the export wrote it before it was streamed."""
    figures = computed_figures(load_study_tree(session, study_id))
    return study_json_bytes({**export_study(session, study_id), "cautions": CAUTIONS,
                             "computed_figures": figures})


def _pieces(session: Session, study_id: int) -> list[Piece]:
    export = build_export(session=session, study_id=study_id, export_format=ExportFormat.JSON,
                          env=templates.env)
    return list(export.chunks())


@pytest.mark.parametrize("per_piece", [7, 240, 500])  # a short last piece; exactly one; more
def test_the_pieces_are_the_whole_file(session: Session, monkeypatch: pytest.MonkeyPatch,
                                       per_piece: int) -> None:
    study = import_study_text(session, study_text(240).encode())
    monkeypatch.setattr(exports, "FIGURES_PER_PIECE", per_piece)
    pieces = _pieces(session, study.id or 0)
    assert b"".join(pieces) == _whole_file(session, study.id or 0)
    assert len(pieces) == 2 + -(-240 // per_piece)  # the study, each batch of figures, the end
    assert len(json.loads(b"".join(pieces))["computed_figures"]) == 240


def test_a_study_without_scenarios_has_an_empty_figures_list(
        session: Session, demo_study: Study) -> None:
    data = export_study(session, demo_study.id or 0, with_history=False)
    data.update(nodes=[], recommendations=[], estimate_rounds=[])
    free_the_title(session, demo_study)
    empty = import_study_text(session, json.dumps(data).encode())
    whole = b"".join(_pieces(session, empty.id or 0))
    assert whole == _whole_file(session, empty.id or 0)
    assert json.loads(whole)["computed_figures"] == []
