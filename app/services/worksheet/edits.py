"""Field edits on the worksheet, read top-down: parse → guard → save (or 409) → reply.

`edit_step_value` is the keystroke path of a step's typed value; `edit_field` saves any other
field of a worksheet row, and every field of a whole-row form (only the ones the person
changed). Both save through `services/study/conflicts.guarded_save` and answer with one flat
`FieldReply` for worksheet/field_reply.html: saved, invalid (422), changed by someone else since
the page loaded (409, with both values), or the row is gone (409, who deleted it and when).
"""

from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import Any

from sqlmodel import Session

from app.db.compare_and_set import SaveOutcome
from app.db.models import SeverityCategory, Step
from app.db.queries import fetch_rows_of_study
from app.likelihood.numbers import format_number
from app.likelihood.types import LikelihoodInputError
from app.likelihood.word_scale import WordedNumber
from app.services.study.conflicts import (
    KEEP_MINE,
    TAKE_THEIRS,
    FieldConflict,
    GoneRow,
    GuardedResult,
    PageEdit,
    as_text,
    changed_fields,
    claim_keystroke,
    gone_row,
    guarded_save,
    log_resolution,
    remember_written,
)
from app.services.study.listing import NodeTotals
from app.services.study.remembered import remembering_per_request
from app.services.study.stored_results import stored_totals
from app.services.study.tree import NotFoundError
from app.services.study.word_scale import basis_with_word, read_step_text
from app.services.worksheet.page import ScenarioView, located_scenario, plain_value
from app.services.worksheet.structure import (
    RowKind,
    StructureInputError,
    get_row,
    kind_of,
    node_id_of,
    parse_step_value,
    read_row_changes,
    step_label,
)

# Any in this module: a row is one of five table models and form changes are raw values (both
# boundaries).

FIELD_PREFIX = {"node": "node", "deviation": "dev", "scenario": "sc", "step": "step",
                "safeguard": "sg"}
SAVED = "saved"
# A step's number is shown and compared as the text typed; `value` follows from it.
SHOWN_FIELD = {"value": "value_text"}
# A scenario's ratings are stored as category ids; a conflict names the categories.
CATEGORY_FIELDS = frozenset({"severity_category_id", "environment_category_id",
                             "asset_category_id"})
NOT_RATED = "not rated"


@dataclass(frozen=True)
class FieldReply:
    """The answer to one field edit: the field's line, the recomputed scenario and the totals.

    `scenario` is None for node and deviation fields, whose edits change no figure. `conflict`
    or `gone` (409) replace the line with what happened; `version` (after a clean save) and
    `saved_text` update the page's hidden version and original of the field.
    """

    field_id: str
    said: str
    error: str
    node_id: int
    scenario: ScenarioView | None
    node_totals: NodeTotals | None
    study_totals: NodeTotals | None
    study_id: int = 0
    row_key: str = ""
    field: str = ""
    conflict: FieldConflict | None = None
    gone: GoneRow | None = None
    version: int | None = None
    page_version: int | None = None
    saved_text: str | None = None

    @property
    def status_code(self) -> int:
        """409 for a conflict or a deleted row, 422 for invalid text, else 200."""
        if self.conflict or self.gone:
            return 409
        return 422 if self.error else 200


def field_id(kind_name: str, row_id: int, field: str) -> str:
    """The HTML id of a worksheet field ("step-12-value_text")."""
    return f"{FIELD_PREFIX[kind_name]}-{row_id}-{field}"


@remembering_per_request
def edit_step_value(*, session: Session, study_id: int, step_id: int, text: str,
                    edit: PageEdit | None = None) -> FieldReply | None:
    """Save a step's value if it parses; None when a newer edit of it was already seen."""
    edit = edit or PageEdit()
    step: Step | None = _existing(session, "step", study_id, step_id)
    if step is None:
        return _gone_reply(session, "step", study_id, step_id, "value_text")
    fid = field_id("step", step_id, "value_text")
    worded = _parse_typed_value(session, step, text)
    accepted, written = _claim(session, study_id, step_id, edit)
    if not accepted:
        session.rollback()
        return None
    if isinstance(worded, LikelihoodInputError):
        session.commit()  # keeps the sequence number: an older keystroke stays older
        fallback = (f"{step_label(step)}: no value given yet" if step.value is None else
                    f"{step_label(step)}: using last valid value {format_number(step.value)}")
        return _reply(session, "step", step, fid, error=worded.message, fallback=fallback)
    parsed = worded.number
    word_note = {"basis": basis_with_word(step.basis, worded)} if worded.word else {}
    originals = _original_value(step, edit)
    result = guarded_save(session, Step, step_id, replace(edit, originals=originals),
                          {"value": parsed.value, "value_text": parsed.text, **word_note},
                          {"value_text": written, "value": _number_text(step, written)})
    if result.outcome is SaveOutcome.SAVED and edit.client:
        remember_written(session, entity="step", row_id=step_id, name="value_text",
                         client=edit.client, text=parsed.text)
    return _after_save(session, "step", step, fid, result, said=parsed.plain,
                       page_version=edit.version)


def _claim(session: Session, study_id: int, step_id: int,
           edit: PageEdit) -> tuple[bool, str | None]:
    if not edit.client or edit.seq is None:
        return True, None  # a plain form post carries no sequence: always current
    return claim_keystroke(session, study_id=study_id, entity="step", row_id=step_id,
                           name="value_text", client=edit.client, seq=edit.seq)


def _number_text(step: Step, text: str | None) -> str | None:
    """The number a page's own earlier text stands for, as compared text."""
    if text is None:
        return None
    return as_text(parse_step_value(step.kind, text).value)


def _original_value(step: Step, edit: PageEdit) -> dict[str, Any]:
    """The page's original text read as a number, so `value` and `value_text` compare alike."""
    if "value_text" not in edit.originals:
        return {}
    try:
        parsed = parse_step_value(step.kind, str(edit.originals["value_text"]))
    except LikelihoodInputError:
        return {}
    return {"value": parsed.value, "value_text": parsed.text}


def _parse_typed_value(session: Session, step: Step,
                       text: str) -> WordedNumber | LikelihoodInputError:
    """The typed text read as the step's kind needs (a frequency or a probability, or a word
    on the team's adopted scale), or why not."""
    try:
        return read_step_text(session, step, text, step_label(step))
    except LikelihoodInputError as err:
        return err


@remembering_per_request
def edit_field(*, session: Session, study_id: int, kind_name: str, row_id: int,
               changes: Mapping[str, Any], edit: PageEdit | None = None,
               resolution: str = "") -> FieldReply:
    """Save the fields the person changed, or say which rule the first bad one breaks.

    `resolution` answers an earlier conflict: "keep" saves the sent value over the other
    person's (the sent originals are theirs), "take" saves nothing; both are logged.
    """
    edit = edit or PageEdit()
    kind = kind_of(kind_name)
    row = _existing(session, kind_name, study_id, row_id)
    sent = next(iter(changes), "")
    if row is None:
        return _gone_reply(session, kind_name, study_id, row_id, sent)
    try:
        values = read_row_changes(session, kind, row, changes)
        originals = _read_originals(session, kind, row, edit.originals)
    except StructureInputError as err:
        session.rollback()
        return _reply(session, kind_name, row, field_id(kind_name, row_id, err.field),
                      error=err.message)
    if resolution in (KEEP_MINE, TAKE_THEIRS):
        _log_choice(session, row, values, originals, kept_mine=resolution == KEEP_MINE)
    values = {} if resolution == TAKE_THEIRS else changed_fields(values, originals)
    result = (guarded_save(session, kind.model, row_id, replace(edit, originals=originals),
                           values) if values else GuardedResult(SaveOutcome.SAVED))
    said = plain_value(row) if (kind_name, sent) == ("step", "value_text") else SAVED
    reply = _after_save(session, kind_name, row, field_id(kind_name, row_id, sent), result,
                        said=said, page_version=edit.version)
    return _with_error_factor_note(reply, sent, row_id)


def _with_error_factor_note(reply: FieldReply, sent: str, step_id: int) -> FieldReply:
    """After a saved EF, the line under it says which EF now applies and where it came from."""
    spread = reply.scenario.item.spread if reply.scenario else None
    if sent != "error_factor" or spread is None or reply.error or reply.status_code != 200:
        return reply
    return replace(reply, said=spread.note_of(step_id))


def _existing(session: Session, kind_name: str, study_id: int, row_id: int) -> Any:
    """The row, or None when it no longer exists (another study's row is NotFoundError)."""
    # Held while get_row runs: the session keeps loaded rows only while something refers to
    # them, so a dropped result would be read again.
    loaded = session.get(kind_of(kind_name).model, row_id)
    if loaded is None:
        return None
    return get_row(session, kind_of(kind_name), study_id, row_id)


def _read_originals(session: Session, kind: RowKind, row: Any,
                    originals: Mapping[str, Any]) -> dict[str, Any]:
    """The values the page was loaded with, read like the person's own (unreadable: unknown)."""
    known: dict[str, Any] = {}
    for name, text in originals.items():
        try:
            known.update(read_row_changes(session, kind, row, {name: text}))
        except StructureInputError:
            continue
    return known


def _log_choice(session: Session, row: Any, values: Mapping[str, Any],
                originals: Mapping[str, Any], *, kept_mine: bool) -> None:
    for name, value in values.items():
        if name not in SHOWN_FIELD:
            log_resolution(session, row, name, kept_mine=kept_mine,
                           theirs=as_text(originals.get(name)), mine=as_text(value))


def _after_save(session: Session, kind_name: str, row: Any, fid: str, result: GuardedResult,
                *, said: str, page_version: int | None) -> FieldReply:
    """Commit a save and reply, or roll back and say what stopped it."""
    row_id = int(row.id)
    if result.outcome is SaveOutcome.DELETED:
        session.rollback()
        return _gone_reply(session, kind_name, int(row.study_id), row_id, fid.split("-", 2)[2])
    if result.outcome is SaveOutcome.CHANGED_SINCE:
        session.rollback()
        conflict = _shown_conflict(session, int(row.study_id), result.conflicts)
        field = SHOWN_FIELD.get(conflict.field, conflict.field)
        return _reply(session, kind_name, row, field_id(kind_name, row_id, field),
                      conflict=conflict, page_version=page_version)
    _commit_keeping_row(session, row)
    field = fid.split("-", 2)[2]
    return _reply(session, kind_name, row, fid, said=said,
                  version=int(row.version) if result.clean else None,
                  saved_text=as_text(getattr(row, field, None)))


def _commit_keeping_row(session: Session, row: Any) -> None:
    """Commit, keeping the saved row as it was written (it was re-read under the guard's lock;
    a value the database computes, such as a raised version, is still read back on first use),
    so the reply does not read it again. Every other loaded row expires as usual."""
    expiring, session.expire_on_commit = session.expire_on_commit, False
    try:
        session.commit()
    finally:
        session.expire_on_commit = expiring
    for loaded in list(session.identity_map.values()):
        if loaded is not row:
            session.expire(loaded)


def _shown_conflict(session: Session, study_id: int,
                    conflicts: tuple[FieldConflict, ...]) -> FieldConflict:
    """The conflict to show at a field: the typed text rather than the number behind it, a
    category's name rather than its id."""
    shown = [c for c in conflicts if c.field not in SHOWN_FIELD]
    conflict = (shown or list(conflicts))[0]
    if conflict.field not in CATEGORY_FIELDS:
        return conflict
    names = {str(c.id): c.name for c in fetch_rows_of_study(session, SeverityCategory, study_id)}
    return conflict.named({"": NOT_RATED, **names})


def _gone_reply(session: Session, kind_name: str, study_id: int, row_id: int,
                field: str) -> FieldReply:
    """The answer to an edit of a row someone deleted: who, when, and whether undo can help."""
    gone = gone_row(session, study_id, kind_of(kind_name).model, row_id)
    if gone is None:
        raise NotFoundError(f"There is no {kind_name} {row_id} in study {study_id}.")
    fid = field_id(kind_name, row_id, field or "row")
    return FieldReply(fid, "", "", 0, None, None, None, study_id=study_id,
                      row_key=f"{FIELD_PREFIX[kind_name]}-{row_id}",
                      field=field, gone=gone)


def _reply(session: Session, kind_name: str, row: Any, fid: str, *, said: str = "",
           error: str = "", fallback: str = "", conflict: FieldConflict | None = None,
           version: int | None = None, page_version: int | None = None,
           saved_text: str | None = None) -> FieldReply:
    """The reply from what is saved: the row's scenario recomputed (if any) and the totals.

    `row` is any worksheet row (its model depends on `kind_name`).
    """
    study_id: int = row.study_id
    scenario_id = _scenario_id_of(kind_name, row)
    scenario: ScenarioView | None = None
    if scenario_id is None:
        node_id = node_id_of(session, kind_name, row)
    else:
        scenario, node = located_scenario(session=session, study_id=study_id,
                                          scenario_id=scenario_id, fallback=fallback)
        node_id = node.id or 0
        # Worked out now, inside the keystroke's own remembering (remembered.py), not later
        # while the reply is drawn: the reply shows it, and the process keeps nothing of it.
        _ = scenario.item.spread
    node_totals, study_totals = stored_totals(session, study_id, node_id)
    return FieldReply(fid, said, error, node_id, scenario, node_totals,
                      study_totals, study_id=study_id,
                      row_key=f"{FIELD_PREFIX[kind_name]}-{row.id}",
                      field=fid.split("-", 2)[2], conflict=conflict, version=version,
                      page_version=page_version, saved_text=saved_text)


def _scenario_id_of(kind_name: str, row: Any) -> int | None:
    """The scenario a row belongs to (None for nodes and deviations)."""
    if kind_name == "scenario":
        return int(row.id)
    scenario_id: int | None = getattr(row, "scenario_id", None)
    return scenario_id
