"""The actions page: each recommendation with the gap of the scenarios it addresses.

An action's expected risk reduction factor (RRF) closes a scenario's gap when the scenario's
mitigated frequency divided by that RRF reaches the tolerable frequency, i.e. when
log10(RRF) >= the gap in orders of magnitude. Each action is judged on its own.
"""

import math
from dataclasses import dataclass
from datetime import date

from sqlmodel import Session

from app.db.models import Study
from app.services.record.action_inputs import ActionOrder
from app.services.record.actions import STATUS_LABELS, ActionEntry, list_actions
from app.services.study.conflicts import FieldConflict
from app.services.study.spread import action_effect
from app.services.study.tree import ScenarioBranch, load_study_tree

# Products of decimals sit a hair off exact powers of ten; a closure within this is a closure.
CLOSE_TOLERANCE_ORDERS = 1e-9


@dataclass(frozen=True)
class ScenarioChoice:
    """A scenario as the link select names it."""

    scenario_id: int
    label: str


@dataclass(frozen=True)
class AddressedScenario:
    """One addressed scenario: its current gap and whether the action's RRF would close it."""

    scenario_id: int
    label: str
    gap_orders: float | None
    mitigated_frequency: float | None
    tolerable_frequency: float | None
    frequency_after: float | None
    closes: bool | None
    verdict: str
    p_meets_before: float | None = None
    """P(meets target) now, from the steps' error factors (issue 13); None without figures."""
    p_meets_after: float | None = None
    """P(meets target) with the scenario's median divided by the action's expected RRF."""


@dataclass(frozen=True)
class ActionRow:
    """One line of the actions table, display-ready."""

    entry: ActionEntry
    status_label: str
    rrf_orders: float | None
    addressed: tuple[AddressedScenario, ...]
    link_choices: tuple[ScenarioChoice, ...]


@dataclass(frozen=True)
class ActionsPage:
    """Everything the actions page shows."""

    study: Study
    today: date
    rows: tuple[ActionRow, ...]
    overdue_count: int
    scenario_choices: tuple[ScenarioChoice, ...]
    order: ActionOrder = ActionOrder.DUE

    @property
    def in_team_order(self) -> bool:
        """True when rows follow the team's order (and so can be moved)."""
        return self.order == ActionOrder.TEAM

    @property
    def order_query(self) -> str:
        """What every link and form of the page carries to stay in this order."""
        return order_query(self.order)


def order_query(order: ActionOrder) -> str:
    """'?order=team' for the team order; nothing for the default order by due date."""
    return f"?order={order.value}" if order == ActionOrder.TEAM else ""


def scenario_label(node_number: str, item: ScenarioBranch) -> str:
    """'Node 1 · Overfill: cause text' as lists and selects show a scenario."""
    cause = item.scenario.cause or item.scenario.consequence or f"scenario {item.scenario.id}"
    return f"Node {node_number} · {cause[:90]}"


def rrf_orders(rrf: float | None) -> float | None:
    """An RRF as orders of magnitude of risk reduction (RRF 1000 -> 3.0)."""
    return math.log10(rrf) if rrf else None


def judge_closure(item: ScenarioBranch, label: str,
                  expected_rrf: float | None) -> AddressedScenario:
    """The scenario's gap and what the expected RRF would do to it."""
    result = item.outcome.result
    scenario_id = item.scenario.id or 0
    if result is None:
        return AddressedScenario(scenario_id, label, None, None, None, None, None,
                                 f"gap unknown: {item.outcome.error}")
    if expected_rrf is None:
        closes, after, verdict = None, None, "no expected RRF given"
    else:
        after = result.mitigated_frequency / expected_rrf
        remaining = result.gap_orders - math.log10(expected_rrf)
        closes = remaining <= CLOSE_TOLERANCE_ORDERS
        verdict = ("would close the gap" if closes
                   else f"would not close the gap: {remaining:+.1f} orders remain")
    if result.meets_target:
        verdict = "already meets target"
    before, after_p = _probabilities(item, expected_rrf)
    return AddressedScenario(scenario_id, label, result.gap_orders, result.mitigated_frequency,
                             result.tolerable_frequency, after, closes, verdict,
                             before, after_p)


def _probabilities(item: ScenarioBranch,
                   expected_rrf: float | None) -> tuple[float | None, float | None]:
    """P(meets target) before and after the action's credit, judged on the distribution."""
    if item.spread is None or item.spread.governing.distribution.sigma == 0:
        return None, None  # exact figures: the verdict above says it all
    before = item.spread.governing.distribution.probability_meets_target
    effect = action_effect(item.spread, expected_rrf)
    return before, effect.after if effect else None


def read_actions_page(
    *, session: Session, study_id: int, today: date, order: ActionOrder = ActionOrder.DUE
) -> ActionsPage:
    """The study's actions in the chosen order, each with its addressed scenarios' gaps."""
    tree = load_study_tree(session, study_id)
    listing = list_actions(session=session, study_id=study_id, today=today, order=order)
    scenarios = {
        item.scenario.id: (scenario_label(node.node.number, item), item)
        for node in tree.nodes for item in node.scenario_branches()
    }
    choices = tuple(ScenarioChoice(sid, label) for sid, (label, _) in scenarios.items() if sid)
    rows = []
    for entry in listing.entries:
        rrf = entry.action.expected_rrf
        addressed = tuple(judge_closure(scenarios[sid][1], scenarios[sid][0], rrf)
                          for sid in entry.scenario_ids if sid in scenarios)
        free = tuple(c for c in choices if c.scenario_id not in entry.scenario_ids)
        rows.append(ActionRow(entry, STATUS_LABELS[entry.action.status], rrf_orders(rrf),
                              addressed, free))
    return ActionsPage(tree.study, today, tuple(rows), listing.overdue_count, choices, order)


@dataclass(frozen=True)
class ActionForm:
    """An add or edit form as typed, with the one error to show beside its field."""

    action_id: int | None = None
    values: dict[str, str] | None = None
    error_field: str = ""
    error: str = ""
    conflicts: tuple[FieldConflict, ...] = ()  # someone saved these fields since (409)
    page_version: int | None = None  # what the page was loaded with, kept through a conflict
    originals: dict[str, str] | None = None

    def value(self, name: str, default: str = "") -> str:
        """The typed text of a field, or the default when nothing was typed."""
        return (self.values or {}).get(name, default)
