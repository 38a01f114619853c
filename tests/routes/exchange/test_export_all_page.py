"""The "export all studies" page: linked from the study list, one archive of every study file."""

import io
import zipfile

from fastapi.testclient import TestClient
from sqlmodel import Session

from app.routes.rendering import CAUTIONS
from app.services.exchange.exports import study_json_bytes
from app.services.exchange.study_file import export_study
from tests.factories import make_scenario_tree
from tests.helpers import attrs_of, text_of


def test_the_study_list_links_to_the_page_and_the_page_downloads_every_study(
    client: TestClient, session: Session,
) -> None:
    first = make_scenario_tree(session, title="Feed area (invented)").study_id
    second = make_scenario_tree(session, title="Flare header (invented)").study_id

    listing = client.get("/").text
    page = client.get(attrs_of(listing, "export-all-link")["href"])
    assert page.status_code == 200
    assert "Feed area (invented) · 1 nodes · 1 scenarios" in text_of(page.text,
                                                                       "export-all-studies")
    download = client.get(attrs_of(page.text, "export-all-download")["href"])

    assert download.status_code == 200
    assert download.headers["content-type"] == "application/zip"
    assert 'filename="tallyroom-all-studies.zip"' in download.headers["content-disposition"]
    with zipfile.ZipFile(io.BytesIO(download.content)) as archive:
        assert archive.namelist() == [
            f"studies/tallyroom-{first}-feed-area-invented.json",
            f"studies/tallyroom-{second}-flare-header-invented.json", "README.txt"]
        # The same bytes `tallyroom export-all` and the per-study JSON export write.
        for name, study_id in zip(archive.namelist(), (first, second), strict=False):
            assert archive.read(name) == study_json_bytes(export_study(session, study_id))
        assert CAUTIONS in archive.read("README.txt").decode()
