"""Deleting worksheet rows with everything under them, and undoing deletes, per person.

A delete stores the removed subtree as JSON in DeletedItem with its author; undo brings back
that person's newest delete: it re-creates the rows (with new ids, children re-linked, the top
row back at its old position among its present siblings) and drops the stored item. When what
the rows depend on is gone (their parent, or a scenario's risk category, deleted since) the
undo refuses, naming what is missing; the item is set aside with that reason, so it never
stands in the way of the person's older deletes or anyone else's.
"""

import json
from collections import Counter
from dataclasses import dataclass, field
from typing import Any

from sqlmodel import Session, col, select

from app.db.models import (
    ChangeLogEntry,
    DeletedItem,
    Recommendation,
    RecommendationScenario,
    SeverityCategory,
    utc_now,
)
from app.likelihood.types import StepKind
from app.services.study.tree import NotFoundError, get_study
from app.services.worksheet.structure import (
    CATEGORY_FIELDS,
    KINDS,
    StructureInputError,
    get_row,
    kind_of,
    siblings,
)

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
    """There is no stored delete to undo, or this one cannot come back (the message says why)."""


@dataclass(frozen=True)
class UndoState:
    """What the undo bar shows one person: their newest delete and whose deletes remain."""

    mine: DeletedItem | None = None
    others: tuple[tuple[str, int], ...] = ()  # (author, count of deletes they can undo)
    set_aside: tuple[DeletedItem, ...] = field(default=())  # this person's, cannot come back

    @property
    def shown(self) -> bool:
        """True when there is anything to say."""
        return bool(self.mine or self.others or self.set_aside)


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
        raise NothingToUndoError(f"The {entry['kind']} cannot come back: "
                                 f"{_deleted_since(session, stamp['kind'], stamp['id'])}; "
                                 "undo that delete first.")


def _check_categories(session: Session, rows: list[dict[str, Any]]) -> None:
    """Every risk category a restored scenario is rated against must still exist."""
    for entry in rows:
        if entry["kind"] != "scenario":
            continue
        for category_field in CATEGORY_FIELDS:
            category_id = entry["data"].get(category_field)
            if category_id is not None and session.get(SeverityCategory, category_id) is None:
                raise NothingToUndoError(
                    f"The scenario '{entry['data'].get('cause', '')[:60]}' cannot come back: "
                    f"{_deleted_since(session, 'severity category', category_id)}; add the "
                    "category again under Risk criteria, or rate the scenario afresh.")


def _deleted_since(session: Session, entity: str, row_id: int) -> str:
    """'its … was deleted since by … at …', read from the change log."""
    entry = session.exec(select(ChangeLogEntry).where(
        ChangeLogEntry.entity == entity, ChangeLogEntry.entity_id == row_id,
        ChangeLogEntry.action == "delete").order_by(col(ChangeLogEntry.id).desc())).first()
    if entry is None:
        return f"{entity} #{row_id} no longer exists"
    who = entry.author or "someone without a name"
    return (f"{entry.summary or entity} was deleted since by {who} at "
            f"{entry.at:%Y-%m-%d %H:%M} UTC")


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


def last_deleted(*, session: Session, study_id: int, author: str) -> DeletedItem | None:
    """This person's newest delete that can still be tried (set-aside ones are skipped)."""
    return session.exec(select(DeletedItem).where(
        DeletedItem.study_id == study_id, DeletedItem.author == author,
        DeletedItem.blocked_reason == "").order_by(col(DeletedItem.id).desc()).limit(1)).first()


def undo_state(*, session: Session, study_id: int, author: str) -> UndoState:
    """The undo bar for one person: their newest delete, others' counts, what was set aside."""
    items = session.exec(select(DeletedItem).where(DeletedItem.study_id == study_id)
                         .order_by(col(DeletedItem.id).desc())).all()
    waiting = [i for i in items if not i.blocked_reason]
    mine = next((i for i in waiting if i.author == author), None)
    others = Counter(i.author for i in waiting if i.author != author)
    return UndoState(mine=mine, others=tuple(sorted(others.items())),
                     set_aside=tuple(i for i in items if i.blocked_reason and i.author == author))


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


def undo_last_delete(*, session: Session, study_id: int, author: str) -> tuple[str, Any]:
    """Re-create this person's newest delete; returns its kind and its top row.

    NothingToUndoError when there is none, or when it cannot come back: then it is set aside
    with the reason (committed), so the next undo goes on to the person's older deletes.
    """
    get_study(session, study_id)
    item = last_deleted(session=session, study_id=study_id, author=author)
    if item is None:
        raise NothingToUndoError("You have no delete to undo.")
    payload = json.loads(item.payload)
    try:
        _check_parent(session, payload["rows"][0], payload.get("parent"))
        _check_categories(session, payload["rows"])
    except NothingToUndoError as err:
        item.blocked_reason = str(err)[:500]
        session.add(item)
        session.commit()
        raise
    restored = _restore(session, payload)
    session.delete(item)
    session.commit()
    session.refresh(restored)
    return payload["rows"][0]["kind"], restored


def _restore(session: Session, payload: dict[str, Any]) -> Any:
    """The stored rows back, the top one at its old place among its siblings; returns it."""
    new_ids: dict[tuple[str, int], int] = {}
    restored = [_restore_row(session, entry, new_ids) for entry in payload["rows"]]
    for link in payload["links"]:
        scenario_id = new_ids[("scenario", link["scenario_id"])]
        if session.get(Recommendation, link["recommendation_id"]) is not None:
            session.add(RecommendationScenario(recommendation_id=link["recommendation_id"],
                                               scenario_id=scenario_id))
    top = restored[0]
    _put_back_in_place(session, payload["rows"][0]["kind"], top,
                       int(payload["rows"][0]["data"].get("position", 0)))
    return top


def _put_back_in_place(session: Session, kind_name: str, row: Any, position: int) -> None:
    """Renumber the siblings 0, 1, 2 … with the row at its old position (or last)."""
    others = [r for r in siblings(session, KINDS[kind_name], row) if r is not row]
    index = min(max(position, 0), len(others))
    for number, sibling in enumerate([*others[:index], row, *others[index:]]):
        if sibling.position != number:
            sibling.position = number
            session.add(sibling)
    session.flush()


def question_for(*, session: Session, study_id: int, kind_name: str, row_id: int) -> str:
    """The delete question for one stored row, counting what goes with it."""
    kind = kind_of(kind_name)
    row = get_row(session, kind, study_id, row_id)
    found = Counter(child_kind for child_kind, _ in _children(session, kind.name, row))
    counts = DeleteCounts(deviations=found["deviation"], scenarios=found["scenario"],
                          steps=found["step"], safeguards=found["safeguard"])
    return delete_question(kind.name, _label(kind.name, row), counts)
