"""A download keeps nothing of the study in the server once its file is made: the per-scenario
caches a whole-study pass fills are empty again, and the spreadsheets stream from a file."""

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session

from app.db.models import Study
from app.services.exchange.exports import STUDY_SIZED_CACHES
from app.services.study.tree import load_study_tree


@pytest.mark.parametrize("file_format", ["csv", "xlsx", "json"])
def test_a_download_leaves_no_scenario_cached(client: TestClient, session: Session,
                                              demo_study: Study, file_format: str) -> None:
    load_study_tree(session, demo_study.id or 0)  # computes every scenario through the caches
    assert sum(cache.cache_info().currsize for cache in STUDY_SIZED_CACHES) > 0
    response = client.get(f"/studies/{demo_study.id}/export.{file_format}")
    assert response.status_code == 200
    assert response.headers["content-disposition"].endswith(f'.{file_format}"')
    assert [cache.cache_info().currsize for cache in STUDY_SIZED_CACHES] == [0, 0, 0, 0]


def test_the_spreadsheets_arrive_in_pieces_without_a_length(client: TestClient,
                                                           demo_study: Study) -> None:
    """Streamed from the temporary file (chunked): the server never holds the bytes whole."""
    response = client.get(f"/studies/{demo_study.id}/export.xlsx")
    assert response.status_code == 200
    assert "content-length" not in response.headers
    assert response.content[:2] == b"PK"  # a zip package, as every .xlsx is
