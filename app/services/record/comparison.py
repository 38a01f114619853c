"""What changed between two versions of a study, given as two study-file dicts (no database).

Rows are matched by a stable key within their parent, never by database id:
node by number; deviation by guideword + parameter within its node; scenario by cause text
within its deviation; step by kind + description within its scenario; severity category by
name; action by its text; participant by name; session day by date. Keys compare with case
and runs of spaces ignored. A row whose key finds no partner is paired with the unmatched row
at the same position in its list, if there is one (so an edited cause reads as a change, not
as a removal and an addition); otherwise it is added or removed.
"""

import math
from collections import defaultdict, deque
from collections.abc import Callable, Hashable, Sequence
from dataclasses import dataclass, field
from typing import Any

from app.likelihood.completeness import incomplete_words, missing_inputs
from app.likelihood.frequency import compute_scenario
from app.likelihood.numbers import format_number
from app.likelihood.types import LikelihoodInputError, StepInput, StepKind, step_kind_words
from app.services.record.comparison_rounds import round_changes
from app.services.study.results import INCOMPLETE

# Any in this module: both sides are study-file JSON objects (the file boundary).

Row = dict[str, Any]
MATCHING_RULE = __doc__.split("\n\n", 1)[1].strip() if __doc__ else ""

HEADER_FIELDS = ("title", "facility", "scope", "revision_label", "criteria_basis",
                 *(f"error_factor_default_{kind.value}" for kind in StepKind))
CATEGORY_FIELDS = ("description", "tolerable_frequency", "receptor")
NODE_FIELDS = ("number", "name", "design_intent", "drawing_reference")
DEVIATION_FIELDS = ("guideword", "parameter", "description")
SCENARIO_FIELDS = ("cause", "consequence", "notes")
SEVERITY_FIELDS = ("severity", "environment_severity", "asset_severity")
STEP_FIELDS = ("kind", "description", "value", "credited", "basis", "ipl_type", "system_tag",
               "sil_claimed", "response_time_minutes", "error_factor")
ACTION_FIELDS = ("owner", "due_date", "status", "status_reason", "expected_rrf", "scenarios")
PARTICIPANT_FIELDS = ("role", "discipline", "company")
DAY_FIELDS = ("note", "attendees")
# Joins the parts of a row's place in the study, as in a breadcrumb trail.
SEP = " \N{SINGLE RIGHT-POINTING ANGLE QUOTATION MARK} "



def normalised(text: Any) -> str:
    """Text as a matching key: case and runs of whitespace ignored."""
    return " ".join(str(text or "").split()).casefold()


def match_rows(
    before: Sequence[Row], after: Sequence[Row], key: Callable[[Row], Hashable]
) -> list[tuple[Row | None, Row | None]]:
    """Pair rows by key, then unmatched ones by position; unpaired rows pair with None."""
    waiting: dict[Hashable, deque[int]] = defaultdict(deque)
    for index, row in enumerate(after):
        waiting[key(row)].append(index)
    partner: dict[int, int] = {}
    for index, row in enumerate(before):
        if waiting[key(row)]:
            partner[index] = waiting[key(row)].popleft()
    free_after = set(range(len(after))) - set(partner.values())
    for index in range(len(before)):
        if index not in partner and index in free_after:
            partner[index] = index
            free_after.discard(index)
    # In the old order (kept or removed), then the additions in their new order.
    pairs: list[tuple[Row | None, Row | None]] = [
        (row, after[partner[i]] if i in partner else None) for i, row in enumerate(before)
    ]
    return pairs + [(None, after[j]) for j in sorted(free_after)]


@dataclass(frozen=True)
class ScenarioNumbers:
    """A scenario's computed numbers in one version (None where it cannot be computed)."""

    mitigated_frequency: float | None
    tolerable_frequency: float | None
    gap_orders: float | None
    meets_target: bool | None
    sil_label: str
    error: str = ""


def governing_tolerable(scenario: Row, categories: dict[str, Row]) -> float | None:
    """The lowest tolerable frequency among the scenario's severity ratings."""
    rated = [categories[ref]["tolerable_frequency"]
             for ref in (scenario.get(name) for name in SEVERITY_FIELDS) if ref in categories]
    return min(rated, default=None)


def file_scenario_missing(scenario: Row) -> tuple[str, ...]:
    """What a study file's scenario still needs (the rule of services/study/completeness.py,
    read from the file's fields)."""
    frequency_given = all(step.get("value") is not None for step in scenario.get("steps", [])
                          if step.get("kind") == StepKind.INITIATING_EVENT.value)
    return missing_inputs(initiating_frequency_given=frequency_given,
                          severity_given=bool(scenario.get("severity")
                                              or scenario.get("people_not_rated")))


def scenario_numbers(scenario: Row, categories: dict[str, Row]) -> ScenarioNumbers:
    """Compute a scenario of a study file against its governing tolerable frequency."""
    if missing := file_scenario_missing(scenario):
        return ScenarioNumbers(None, None, None, None, "",
                               f"{INCOMPLETE}: {incomplete_words(missing)}")
    tolerable = governing_tolerable(scenario, categories)
    if tolerable is None:
        return ScenarioNumbers(None, None, None, None, "", "no severity category")
    steps = [StepInput(kind=StepKind(step["kind"]), value=float(step["value"]),
                       label=step.get("description", ""), credited=step.get("credited", True))
             for step in scenario.get("steps", [])]
    try:
        result = compute_scenario(steps, tolerable)
    except LikelihoodInputError as err:
        return ScenarioNumbers(None, tolerable, None, None, "", err.message)
    return ScenarioNumbers(result.mitigated_frequency, tolerable, result.gap_orders,
                           result.meets_target, result.sil_target.label)


def categories_by_ref(study: Row) -> dict[str, Row]:
    """The study file's severity categories keyed by ref."""
    return {c["ref"]: c for c in study.get("severity_categories", [])}


@dataclass(frozen=True)
class Change:
    """One difference: `kind` is added, removed or changed; `field` only for changed."""

    section: str
    kind: str
    where: str
    field: str = ""
    before: str = ""
    after: str = ""


@dataclass(frozen=True)
class ScenarioEffect:
    """How a scenario's mitigated frequency and gap moved between the versions."""

    where: str
    before: ScenarioNumbers | None
    after: ScenarioNumbers | None

    @property
    def orders_change(self) -> float | None:
        """log10(after / before) of the mitigated frequency; negative means lower risk."""
        old = self.before.mitigated_frequency if self.before else None
        new = self.after.mitigated_frequency if self.after else None
        return math.log10(new / old) if old and new else None


@dataclass
class StudyDiff:
    """Every change found, in section order, and the effect on each changed scenario."""

    changes: list[Change] = field(default_factory=list)
    effects: list[ScenarioEffect] = field(default_factory=list)

    def section(self, name: str) -> list[Change]:
        """The changes of one section."""
        return [change for change in self.changes if change.section == name]


def shown(value: Any) -> str:
    """A value as the comparison page prints it."""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float | int):
        return format_number(float(value))
    return "—" if value in (None, "") else str(value)


def _compare_fields(diff: StudyDiff, section: str, where: str, old: Row, new: Row,
                    names: Sequence[str]) -> bool:
    changed = False
    for name in names:
        if old.get(name) != new.get(name):
            before, after = shown(old.get(name)), shown(new.get(name))
            if before == after:  # two figures hide the difference: show more
                before, after = f"{old.get(name):.6g}", f"{new.get(name):.6g}"
            diff.changes.append(Change(section, "changed", where, name, before, after))
            changed = True
    return changed


def _added_or_removed(diff: StudyDiff, section: str, where: str, old: Row | None,
                      label: str) -> None:
    kind = "removed" if old is not None else "added"
    diff.changes.append(Change(section, kind, f"{where}{label}"))


class _Differ:
    """Walks two study files side by side, filling one StudyDiff."""

    def __init__(self, before: Row, after: Row) -> None:
        self.before, self.after = before, after
        self.old_categories = categories_by_ref(before)
        self.new_categories = categories_by_ref(after)
        self.diff = StudyDiff()

    def run(self) -> StudyDiff:
        _compare_fields(self.diff, "Study", "Study header", self.before["study"],
                        self.after["study"], HEADER_FIELDS)
        self._categories()
        for old, new in match_rows(self.before.get("nodes", []), self.after.get("nodes", []),
                                   lambda n: normalised(n["number"])):
            self._node(old, new)
        self._actions()
        self._attendance()
        return self.diff

    def _actions(self) -> None:
        old_causes, new_causes = _scenario_causes(self.before), _scenario_causes(self.after)
        pairs = match_rows(self.before.get("recommendations", []),
                           self.after.get("recommendations", []), lambda a: normalised(a["text"]))
        for old, new in pairs:
            either = new or old
            assert either is not None
            where = f"Action '{either['text'][:80]}'"
            if old is None or new is None:
                _added_or_removed(self.diff, "Actions", "", old, where)
                continue
            _compare_fields(self.diff, "Actions", where,
                            _addressed(old, old_causes), _addressed(new, new_causes),
                            ACTION_FIELDS)
            if normalised(old["text"]) != normalised(new["text"]):
                _compare_fields(self.diff, "Actions", where, old, new, ("text",))

    def _attendance(self) -> None:
        for old, new in match_rows(self.before.get("participants", []),
                                   self.after.get("participants", []),
                                   lambda p: normalised(p["name"])):
            either = new or old
            assert either is not None
            where = f"Participant {either['name']}"
            if old is None or new is None:
                _added_or_removed(self.diff, "Participants", "", old, where)
            else:
                _compare_fields(self.diff, "Participants", where, old, new,
                                ("name", *PARTICIPANT_FIELDS))
        old_names, new_names = _people(self.before), _people(self.after)
        for old, new in match_rows(self.before.get("session_days", []),
                                   self.after.get("session_days", []), lambda d: d["day"]):
            either = new or old
            assert either is not None
            where = f"Session day {either['day']}"
            if old is None or new is None:
                _added_or_removed(self.diff, "Session days", "", old, where)
            else:
                _compare_fields(self.diff, "Session days", where, _present(old, old_names),
                                _present(new, new_names), ("day", *DAY_FIELDS))

    def _categories(self) -> None:
        pairs = match_rows(self.before.get("severity_categories", []),
                           self.after.get("severity_categories", []),
                           lambda c: normalised(c["name"]))
        for old, new in pairs:
            either = new or old
            assert either is not None
            if old is None or new is None:
                _added_or_removed(self.diff, "Criteria", "", old, f"Category '{either['name']}'")
            else:
                names = ("name", *CATEGORY_FIELDS)
                _compare_fields(self.diff, "Criteria", f"Category '{new['name']}'", old, new, names)

    def _node(self, old: Row | None, new: Row | None) -> None:
        either = new or old
        assert either is not None
        where = f"Node {either['number']}"
        if old is None or new is None:
            _added_or_removed(self.diff, "Nodes", "", old, f"{where} · {either['name']}")
            self._scenarios_of_lone_node(where, old, new)
            return
        _compare_fields(self.diff, "Nodes", where, old, new, NODE_FIELDS)
        for old_dev, new_dev in match_rows(old.get("deviations", []), new.get("deviations", []),
                                           _deviation_key):
            self._deviation(where, old_dev, new_dev)

    def _scenarios_of_lone_node(self, where: str, old: Row | None, new: Row | None) -> None:
        for deviation in (old or new or {}).get("deviations", []):
            self._deviation(where, deviation if old else None, deviation if new else None)

    def _deviation(self, node_where: str, old: Row | None, new: Row | None) -> None:
        either = new or old
        assert either is not None
        where = f"{node_where}{SEP}{either['guideword']} {either['parameter']}"
        if old is None or new is None:
            _added_or_removed(self.diff, "Deviations", "", old, where)
        else:
            _compare_fields(self.diff, "Deviations", where, old, new, DEVIATION_FIELDS)
        pairs = match_rows((old or {}).get("scenarios", []), (new or {}).get("scenarios", []),
                           lambda s: normalised(s["cause"]))
        for old_scenario, new_scenario in pairs:
            self._scenario(where, old_scenario, new_scenario)

    def _severity_names(self, scenario: Row, categories: dict[str, Row]) -> Row:
        return {name: categories[ref]["name"] if ref in categories else None
                for name, ref in ((n, scenario.get(n)) for n in SEVERITY_FIELDS)}

    def _scenario(self, deviation_where: str, old: Row | None, new: Row | None) -> None:
        either = new or old
        assert either is not None
        where = f"{deviation_where}{SEP}'{either['cause'] or either['consequence']}'"
        old_numbers = scenario_numbers(old, self.old_categories) if old else None
        new_numbers = scenario_numbers(new, self.new_categories) if new else None
        if old is None or new is None:
            _added_or_removed(self.diff, "Scenarios", "", old, where)
        else:
            _compare_fields(self.diff, "Scenarios", where, old, new, SCENARIO_FIELDS)
            _compare_fields(self.diff, "Scenarios", where,
                            self._severity_names(old, self.old_categories),
                            self._severity_names(new, self.new_categories), SEVERITY_FIELDS)
            self._steps(where, old, new)
            self._safeguards(where, old, new)
        if old_numbers != new_numbers:
            self.diff.effects.append(ScenarioEffect(where, old_numbers, new_numbers))

    def _steps(self, where: str, old: Row, new: Row) -> None:
        for old_step, new_step in match_rows(old.get("steps", []), new.get("steps", []),
                                             _step_key):
            either = new_step or old_step
            assert either is not None
            label = f"{where}{SEP}{step_kind_words(either['kind'])}" \
                    f" '{either.get('description', '')}'"
            if old_step is None or new_step is None:
                _added_or_removed(self.diff, "Steps", "", old_step, label)
            else:
                _compare_fields(self.diff, "Steps", label, old_step, new_step, STEP_FIELDS)

    def _safeguards(self, where: str, old: Row, new: Row) -> None:
        old_texts = [s["description"] for s in old.get("safeguards", [])]
        new_texts = [s["description"] for s in new.get("safeguards", [])]
        for text in old_texts:
            if text not in new_texts:
                self.diff.changes.append(Change("Safeguards", "removed", f"{where}{SEP}'{text}'"))
        for text in new_texts:
            if text not in old_texts:
                self.diff.changes.append(Change("Safeguards", "added", f"{where}{SEP}'{text}'"))


def _scenario_causes(study: Row) -> dict[str, str]:
    """Scenario ref -> its cause text: refs are renumbered per file, the cause is the key."""
    return {s["ref"]: s.get("cause") or s.get("consequence") or s["ref"]
            for n in study.get("nodes", []) for d in n.get("deviations", [])
            for s in d.get("scenarios", [])}


def _addressed(action: Row, causes: dict[str, str]) -> Row:
    """The action with the scenarios it addresses as their causes, in a stable order."""
    named = sorted(causes.get(ref, ref) for ref in action.get("scenarios", []))
    return {**action, "scenarios": "; ".join(named)}


def _people(study: Row) -> dict[str, str]:
    return {p["ref"]: p["name"] for p in study.get("participants", [])}


def _present(day: Row, names: dict[str, str]) -> Row:
    """The session day with its attendees as names, in a stable order."""
    return {**day, "attendees": ", ".join(sorted(names.get(r, r)
                                                 for r in day.get("attendees", [])))}


def _deviation_key(row: Row) -> Hashable:
    return normalised(row["guideword"]), normalised(row["parameter"])


def _step_key(row: Row) -> Hashable:
    return row["kind"], normalised(row.get("description"))


def diff_studies(before: Row, after: Row) -> StudyDiff:
    """Every difference between two study files, and each affected scenario's numbers."""
    diff = _Differ(before, after).run()
    diff.changes.extend(Change(*raw) for raw in round_changes(before, after))
    return diff
