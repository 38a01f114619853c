"""A snapshot part's key is the SHA-256 of its text as orjson writes it; files (and databases)
whose parts were keyed by Python's json.dumps text before still read, and a part whose value
orjson would write inexactly (an infinity written as null) is refused, not trusted."""

import hashlib
import json
from typing import Any

import pytest
from sqlmodel import Session, func, select

from app.db.models import Revision, Study
from app.db.snapshot_parts import legacy_part_text, part_digest, part_text, split_snapshot
from app.db.snapshot_store import load_snapshot
from app.services.exchange.study_file import StudyFileError, export_study
from app.services.exchange.study_file_revisions import HISTORY_KEYS
from app.services.exchange.study_import import import_study_text
from app.services.record.revisions import freeze_revision
from tests.helpers import TEST_AUTHOR
from tests.samples import free_the_title

Data = dict[str, Any]


def _freeze_two(session: Session, study_id: int) -> None:
    for label in ("Rev A", "Rev B"):
        freeze_revision(session=session, study_id=study_id, frozen_by=TEST_AUTHOR,
                        values={"label": label, "signed_off_by": "I. M."})


def test_a_parts_text_is_compact_json_with_floats_in_shortest_form() -> None:
    value = {"name": "Tank ü", "tolerable": 1e-05, "steps": [0.1, 2, True, None]}
    # Written out by hand: orjson spells 1e-05 as 0.00001; json.dumps (the legacy text) as
    # Python's repr does. Both read back as the same number.
    assert part_text(value) == '{"name":"Tank ü","tolerable":0.00001,"steps":[0.1,2,true,null]}'
    assert legacy_part_text(value) == ('{"name":"Tank ü","tolerable":1e-05,'
                                       '"steps":[0.1,2,true,null]}')
    assert json.loads(part_text(value)) == json.loads(legacy_part_text(value)) == value
    # hashlib's SHA-256 of the UTF-8 bytes, the key a part is stored and written under.
    assert part_digest(part_text(value)) == hashlib.sha256(
        part_text(value).encode("utf-8")).hexdigest()


def _as_written_before(data: Data) -> Data:
    """The file as the app wrote it when parts were keyed by json.dumps' text: every digest a
    manifest names, and every key of snapshot_parts, re-keyed to the legacy text's SHA-256."""
    content = {key: value for key, value in data.items() if key not in HISTORY_KEYS}
    new_live, legacy_live = (split_snapshot(content, text_of)[1]
                             for text_of in (part_text, legacy_part_text))
    rekey = {digest: part_digest(legacy_part_text(json.loads(text)))
             for digest, text in new_live.items()}
    rekey.update({digest: part_digest(legacy_part_text(value))
                  for digest, value in data["snapshot_parts"].items()})
    assert set(rekey.values()) & set(legacy_live) == {rekey[d] for d in new_live}
    old = json.loads(json.dumps(data))
    for revision in old["revisions"]:
        revision["snapshot_from_parts"] = {
            key: [rekey[d] for d in named] if isinstance(named, list) else rekey[named]
            for key, named in revision["snapshot_from_parts"].items()}
    old["snapshot_parts"] = {rekey[d]: value for d, value in data["snapshot_parts"].items()}
    return old


def test_a_file_keyed_by_the_legacy_text_imports_with_the_same_revisions(
        session: Session, demo_study: Study) -> None:
    study_id = demo_study.id or 0
    freeze_revision(session=session, study_id=study_id, frozen_by=TEST_AUTHOR,
                    values={"label": "Rev A", "signed_off_by": "I. M."})
    demo_study.facility = "Changed after Rev A"  # so Rev A has a part of its own in the file
    session.add(demo_study)
    session.commit()
    data = export_study(session, study_id)
    assert len(data["snapshot_parts"]) == 1  # the header Rev A froze
    old = _as_written_before(data)
    # The criteria's 1e-05 and the like are spelt otherwise, so some keys differ.
    assert old["revisions"] != data["revisions"]
    free_the_title(session, demo_study)
    copy = import_study_text(session, json.dumps(old))
    copied = export_study(session, copy.id or 0)
    assert [r["label"] for r in copied["revisions"]] == ["Rev A"]
    revisions = {r.study_id: r for r in session.exec(select(Revision)).all()}
    assert load_snapshot(session, revisions[copy.id or 0]) == load_snapshot(
        session, revisions[study_id])


def _refused(session: Session, data: Data) -> str:
    studies = session.exec(select(func.count()).select_from(Study)).one()
    with pytest.raises(StudyFileError) as refusal:
        import_study_text(session, json.dumps(data))
    assert session.exec(select(func.count()).select_from(Study)).one() == studies
    return str(refusal.value)


def _first_null_path(value: Any) -> list[Any] | None:
    """The path to the first null inside a part's value (depth first)."""
    items = value.items() if isinstance(value, dict) else enumerate(value)
    for key, child in items:
        if child is None:
            return [key]
        if isinstance(child, dict | list) and (found := _first_null_path(child)) is not None:
            return [key, *found]
    return None


def test_a_part_whose_null_became_infinity_is_refused(
        session: Session, demo_study: Study) -> None:
    study_id = demo_study.id or 0
    _freeze_two(session, study_id)
    demo_study.facility = "Changed after the revisions"
    session.add(demo_study)
    session.commit()
    data = export_study(session, study_id)
    digest, value = next((d, v) for d, v in data["snapshot_parts"].items()
                         if _first_null_path(v) is not None)
    *parents, last = _first_null_path(value) or []
    holder = value
    for key in parents:
        holder = holder[key]
    holder[last] = float("inf")  # orjson writes an infinity as null: the same text, the same key
    assert part_digest(part_text(value)) == digest
    message = _refused(session, data)
    assert f"snapshot_parts.{digest}: the part's content hashes to" in message
    assert "a part's key must be the SHA-256 of its compact JSON text" in message


def test_a_part_with_an_integer_beyond_64_bits_is_refused_naming_the_rule(
        session: Session, demo_study: Study) -> None:
    study_id = demo_study.id or 0
    _freeze_two(session, study_id)
    demo_study.facility = "Changed after the revisions"
    session.add(demo_study)
    session.commit()
    data = export_study(session, study_id)
    digest = next(iter(data["snapshot_parts"]))
    data["snapshot_parts"][digest] = {"huge": 2 ** 70}
    message = _refused(session, data)
    assert f"snapshot_parts.{digest}: the part's content hashes to" in message
