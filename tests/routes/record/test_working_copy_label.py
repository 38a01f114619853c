"""The study's revision label and its frozen revisions are one concept (issue 12)."""

from fastapi.testclient import TestClient

from app.db.models import Study


def test_study_pages_say_working_copy_since_the_newest_frozen_revision(
    client: TestClient, demo_study: Study
) -> None:
    study_id = demo_study.id
    before = client.get(f"/studies/{study_id}").text
    assert f"revision {demo_study.revision_label}" in before
    assert "working copy since" not in before

    for label in ("Rev A", "Rev B"):
        frozen = client.post(f"/studies/{study_id}/revisions",
                             data={"label": label, "signed_off_by": "Dana Whitlock", "note": ""})
        assert frozen.status_code == 200

    overview = client.get(f"/studies/{study_id}").text
    assert "working copy since Rev B" in overview
    assert f"revision {demo_study.revision_label}" not in overview
    assert "working copy since Rev B" in client.get("/").text
    assert "working copy since Rev B" in client.get(f"/studies/{study_id}/risk").text
