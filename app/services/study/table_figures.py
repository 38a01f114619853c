"""What the spreadsheet exports show of one scenario's results, laid out flat and stored.

The CSV, the workbook and the JSON file's `computed_figures` show, per scenario, the governing
result as credited, each rated receptor's line, the figures with flagged credits withdrawn,
the governing line's uncertainty (issue 13), each step's error factor and the IPL-check
warnings. `table_figures` lays these out from a computed assessment as plain named tuples;
`scenario_columns` stores them as JSON in `scenario_result.table_figures` (positional lists,
the names are the tuples' fields), so an export of any size reads and formats them and
computes nothing per scenario (issue 14). The from-scratch export path (a computed study tree)
builds the same record with the same function, and the exports' comparison tests require
the two to write the same files.

Change a field here (or what one holds) and raise RESULTS_VERSION (stored_results.py): every
study's stored rows are rebuilt once.
"""

import json
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, fields
from typing import Any, NamedTuple

import orjson

from app.likelihood.check_base import CheckWarning
from app.likelihood.types import SilStatus, StepKind
from app.services.study.results import Assessment, required_rrf_cell
from app.services.study.spread import ScenarioSpread


class TableResult(NamedTuple):
    """The governing result as credited: its products, verdict, target and added function."""

    enabling_product: float
    modifier_product: float
    ipl_product: float
    mitigated_frequency: float
    ratio: float
    gap_orders: float
    required_rrf_cell: float | str  # "none needed" where the scenario meets target
    sil_label: str
    demand_mode: str  # DemandMode's value
    meets_target: bool
    demand_rate: float | None  # on an added SIF (None: no demand computed)
    demand_formula: str
    governing: str  # the governing receptor's value
    needs_function: bool  # the gap asks for an added safety function
    required_rrf: float
    required_pfd: float | None
    required_pfh: float | None


class TableLine(NamedTuple):
    """One rated receptor's line."""

    receptor: str
    mitigated_frequency: float
    tolerable_frequency: float
    ratio: float
    sil_label: str


class TableWithdrawn(NamedTuple):
    """The governing result with the flagged credits withdrawn (PFD 1)."""

    mitigated_frequency: float
    ratio: float
    sil_label: str
    meets_target: bool


class TableSpread(NamedTuple):
    """The governing line's lognormal as credited."""

    median: float
    p05: float
    p95: float
    mean: float
    error_factor: float
    probability_meets_target: float
    confidence: str  # VerdictConfidence's value


class StepFactor(NamedTuple):
    """One step's error factor and where it came from ("EF 3, typed")."""

    step_id: int | None
    factor: float | None
    note: str


class TableWarning(NamedTuple):
    """One IPL-check warning: step, rule, sentence, citation (or source) and its flags."""

    step_label: str
    rule: str
    message: str
    citation: str
    verify_against_copy: bool
    withdraws_credit: bool


@dataclass(frozen=True)
class TableFigures:
    """One scenario's figures as the export tables read them (`result` None: no figures),
    with what the scenario table shows of its steps (so the CSV reads no step)."""

    initiating_description: str  # the first initiating event's ("" without one)
    initiating_value: float | None
    credited_ipls: int
    result: TableResult | None
    lines: tuple[TableLine, ...]
    withdrawn: TableWithdrawn | None
    withdrawn_labels: tuple[str, ...]
    spread: TableSpread | None
    step_factors: tuple[StepFactor, ...]
    warnings: tuple[TableWarning, ...]

    def json(self) -> str:
        """The stored form: each record as a list in field order."""
        return json.dumps([getattr(self, item.name) for item in fields(self)],
                          separators=(",", ":"))

    @classmethod
    def read(cls, text: str, *, with_steps: bool = True) -> "TableFigures":
        """The stored form read back (the numbers as they were: JSON floats round-trip).
        `with_steps` False: the step factors and warnings left empty, for a reader of the
        scenario table alone (the CSV, the JSON file's figures: most of the records)."""
        (description, value, credited, result, lines, withdrawn, labels, spread, factors,
         warnings) = _stored_lists(text)
        return cls(description, value, credited, TableResult(*result) if result else None,
                   tuple(TableLine(*line) for line in lines),
                   TableWithdrawn(*withdrawn) if withdrawn else None, tuple(labels),
                   TableSpread(*spread) if spread else None,
                   tuple(StepFactor(*factor) for factor in factors) if with_steps else (),
                   tuple(TableWarning(*warning) for warning in warnings) if with_steps else ())


def _stored_lists(text: str) -> Any:
    """The stored text parsed: by orjson (a sixth of json.loads' time, the same values: both
    read each JSON number to the nearest float), else by json.loads, which also reads the
    NaN and Infinity that json.dumps may have written and integers beyond 64 bits."""
    try:
        return orjson.loads(text)
    except orjson.JSONDecodeError:
        return json.loads(text)


def table_warnings(warnings: Sequence[CheckWarning]) -> tuple[TableWarning, ...]:
    """The warnings as the tables list them."""
    return tuple(TableWarning(w.step_label, w.rule, w.message, w.citation or w.source,
                              w.verify_against_copy, w.withdraws_credit) for w in warnings)


def table_figures(steps: Iterable[Any], assessment: Assessment | None,
                  spread: ScenarioSpread | None, warnings: Sequence[CheckWarning]
                  ) -> TableFigures:
    """A scenario's export figures from its steps (stored rows or objects), its computed
    assessment (None: not computed), its spread as credited and its warnings."""
    initiating, credited_ipls = None, 0
    for step in sorted(steps, key=lambda s: (s.position, s.id or 0)):
        if step.kind == StepKind.INITIATING_EVENT and initiating is None:
            initiating = step
        elif step.kind == StepKind.IPL and step.credited:
            credited_ipls += 1
    head = (initiating.description if initiating else "",
            initiating.value if initiating else None, credited_ipls)
    if assessment is None:
        return TableFigures(*head, None, (), None, (), None, (), table_warnings(warnings))
    credited = assessment.as_credited
    withdrawn = assessment.withdrawn.result if assessment.withdrawn else None
    return TableFigures(
        *head,
        _result(credited.result, str(credited.governing.receptor.value)),
        tuple(TableLine(str(line.receptor.value), line.mitigated_frequency,
                        line.tolerable_frequency, line.ratio, line.demand.sil_target.label)
              for line in credited.receptors.lines),
        TableWithdrawn(withdrawn.mitigated_frequency, withdrawn.ratio,
                       withdrawn.sil_target.label, withdrawn.meets_target) if withdrawn else None,
        tuple(assessment.withdrawn_labels), _spread(spread),
        tuple(StepFactor(n.step_id, n.factor.value, n.note) for n in spread.notes)
        if spread else (), table_warnings(warnings))


def _result(result: Any, governing: str) -> TableResult:
    target, demand = result.sil_target, result.demand
    return TableResult(
        result.enabling_product, result.modifier_product, result.ipl_product,
        result.mitigated_frequency, result.ratio, result.gap_orders, required_rrf_cell(result),
        target.label, str(target.demand_mode.value), result.meets_target,
        demand.demand_rate_per_year if demand else None, demand.formula if demand else "",
        governing, target.status is not SilStatus.NONE_NEEDED, target.required_rrf,
        target.required_pfd, target.required_pfh)


def _spread(spread: ScenarioSpread | None) -> TableSpread | None:
    if spread is None:
        return None
    d = spread.governing.distribution
    return TableSpread(d.median, d.p05, d.p95, d.mean, d.error_factor,
                       d.probability_meets_target, str(d.confidence.value))
