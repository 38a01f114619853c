"""Deleting worksheet rows with everything under them, and undoing the last delete.

A delete stores the removed subtree as JSON in DeletedItem; undo re-creates it (with new ids,
children re-linked) and drops the stored item, so each delete can be undone once.
"""

import json
from collections import Counter
from dataclasses import dataclass
from typing import Any

from sqlmodel import Session, col, select

from app.db.models import DeletedItem, Recommendation, RecommendationScenario, utc_now
from app.likelihood.types import StepKind
from app.services.study.tree import NotFoundError, get_study
from app.services.worksheet.structure import KINDS, StructureInputError, get_row, kind_of

# Any in this module: a removed subtree mixes five table models and is stored as JSON (both
# boundaries).

CHILDREN: dict[str, tuple[tuple[str, str], ...]] = {
    "node": (("deviation", "node_id"),),
    "deviation": (("scenario", "deviation_id"),),
    "scenario": (("step", "scenario_id"), ("safeguard", "scenario_id")),
}
DELETE_ORDER = ("step", "safeguard", "scenario", "deviation", "node")
NOT_COPIED = {"id", "version", "updated_at"}


class NothingToUndoError(LookupError):
    """There is no stored delete to undo."""


@dataclass(frozen=True)
class DeleteCounts:
    """What goes with a row when it is deleted."""

    deviations: int = 0
    scenarios: int = 0
    steps: int = 0
    safeguards: int = 0


def _plural(count: int, word: str) -> str:
    return f"{count} {word}" if count == 1 else f"{count} {word}s"


def delete_question(kind_name: str, label: str, counts: DeleteCounts) -> str:
    """The question asked before a delete, saying what goes with the row."""
    parts = [_plural(n, word) for n, word in (
        (counts.deviations, "deviation"), (counts.scenarios, "scenario"),
        (counts.steps, "step"), (counts.safeguards, "safeguard")) if n]
    joined = f" and its {', '.join(parts)}" if parts else ""
    return f"Delete {kind_name} {label}{joined}?"


def _children(session: Session, kind_name: str, row: Any) -> list[tuple[str, Any]]:
    found = []
    for child_kind, parent_field in CHILDREN.get(kind_name, ()):
        model: Any = KINDS[child_kind].model
        for child in session.exec(select(model).where(getattr(model, parent_field) == row.id)
                                  .order_by(model.position, model.id)).all():
            found.append((child_kind, child))
            found.extend(_children(session, child_kind, child))
    return found


def _dump(kind_name: str, row: Any) -> dict[str, Any]:
    data = row.model_dump(mode="json", warnings=False)  # kind is stored as plain text
    return {"kind": kind_name, "old_id": data["id"],
            "data": {k: v for k, v in data.items() if k not in NOT_COPIED}}


def _links(session: Session, scenario_ids: list[int]) -> list[dict[str, int]]:
    links = session.exec(select(RecommendationScenario).where(
        col(RecommendationScenario.scenario_id).in_(scenario_ids))).all()
    return [{"recommendation_id": link.recommendation_id, "scenario_id": link.scenario_id}
            for link in links]


def _label(kind_name: str, row: Any) -> str:
    if kind_name == "node":
        return f"{row.number} {row.name}".strip()
    text = (getattr(row, "description", "") or getattr(row, "cause", "")
            or f"{getattr(row, 'guideword', '')} {getattr(row, 'parameter', '')}".strip())
    return f"'{text[:80]}'" if text else f"#{row.id}"


PARENT_KINDS = {"node_id": "node", "deviation_id": "deviation", "scenario_id": "scenario"}


def _parent_stamp(session: Session, kind: Any, row: Any) -> dict[str, Any] | None:
    """Which parent the row hung from, by id and creation time (ids can be reused)."""
    if kind.parent_field is None:
        return None
    parent_kind = PARENT_KINDS[kind.parent_field]
    parent = session.get(KINDS[parent_kind].model, getattr(row, kind.parent_field))
    if parent is None:
        raise NotFoundError(f"The {parent_kind} of this {kind.name} no longer exists.")
    return {"kind": parent_kind, "id": parent.id,
            "created_at": parent.model_dump(mode="json")["created_at"]}


def _check_parent(session: Session, entry: dict[str, Any], stamp: dict[str, Any] | None) -> None:
    if stamp is None:
        return
    parent = session.get(KINDS[stamp["kind"]].model, stamp["id"])
    if parent is None or parent.model_dump(mode="json")["created_at"] != stamp["created_at"]:
        raise NothingToUndoError(f"The {entry['kind']} cannot come back: its {stamp['kind']} "
                                 "has been deleted since.")


def delete_row(*, session: Session, study_id: int, kind_name: str, row_id: int,
               author: str = "") -> DeletedItem:
    """Delete a row and everything under it, keeping a copy so the delete can be undone."""
    kind = kind_of(kind_name)
    row = get_row(session, kind, study_id, row_id)
    if kind.name == "step" and row.kind == StepKind.INITIATING_EVENT:
        raise StructureInputError("kind", "a scenario always keeps exactly one initiating "
                                  "event: change its value instead of deleting it.")
    subtree = [(kind.name, row), *_children(session, kind.name, row)]
    scenario_ids = [r.id for k, r in subtree if k == "scenario"]
    payload = {"rows": [_dump(k, r) for k, r in subtree],
               "links": _links(session, scenario_ids), "parent": _parent_stamp(session, kind, row)}
    item = DeletedItem(study_id=study_id, author=author, entity=kind.name,
                       label=f"{kind.name} {_label(kind.name, row)}"[:300],
                       payload=json.dumps(payload))
    # Without ORM relationships the flush would not know to delete children first.
    for level in DELETE_ORDER:
        for doomed_kind, doomed in subtree:
            if doomed_kind == level:
                session.delete(doomed)
        session.flush()
    session.add(item)
    session.commit()
    session.refresh(item)
    return item


def last_deleted(*, session: Session, study_id: int) -> DeletedItem | None:
    """The newest delete of the study that can still be undone."""
    return session.exec(select(DeletedItem).where(DeletedItem.study_id == study_id)
                        .order_by(col(DeletedItem.id).desc()).limit(1)).first()


def _restore_row(session: Session, entry: dict[str, Any], new_ids: dict[tuple[str, int], int]
                 ) -> Any:
    kind = KINDS[entry["kind"]]
    data = dict(entry["data"])
    if kind.parent_field:
        parent_kind = PARENT_KINDS[kind.parent_field]
        old_parent = data[kind.parent_field]
        data[kind.parent_field] = new_ids.get((parent_kind, old_parent), old_parent)
    row = kind.model.model_validate({**data, "updated_at": utc_now()})
    session.add(row)
    session.flush()
    new_ids[(kind.name, entry["old_id"])] = row.id
    return row


def undo_last_delete(*, session: Session, study_id: int) -> tuple[str, Any]:
    """Re-create what the study's last delete removed; returns its kind and its top row."""
    get_study(session, study_id)
    item = last_deleted(session=session, study_id=study_id)
    if item is None:
        raise NothingToUndoError("There is no delete to undo.")
    payload = json.loads(item.payload)
    _check_parent(session, payload["rows"][0], payload.get("parent"))
    new_ids: dict[tuple[str, int], int] = {}
    restored = [_restore_row(session, entry, new_ids) for entry in payload["rows"]]
    for link in payload["links"]:
        scenario_id = new_ids[("scenario", link["scenario_id"])]
        if session.get(Recommendation, link["recommendation_id"]) is not None:
            session.add(RecommendationScenario(recommendation_id=link["recommendation_id"],
                                               scenario_id=scenario_id))
    session.delete(item)
    session.commit()
    session.refresh(restored[0])
    return payload["rows"][0]["kind"], restored[0]



def question_for(*, session: Session, study_id: int, kind_name: str, row_id: int) -> str:
    """The delete question for one stored row, counting what goes with it."""
    kind = kind_of(kind_name)
    row = get_row(session, kind, study_id, row_id)
    found = Counter(child_kind for child_kind, _ in _children(session, kind.name, row))
    counts = DeleteCounts(deviations=found["deviation"], scenarios=found["scenario"],
                          steps=found["step"], safeguards=found["safeguard"])
    return delete_question(kind.name, _label(kind.name, row), counts)
