"""One scenario's results as a stored row, and the stored row read back as results.

`scenario_columns` computes a scenario through the results core (`results.outcome_of`, the
same cached arithmetic and governing-receptor rule as the worksheet) and lays the result out
as the columns of `scenario_result`: the scalars that counts and ranking read, and `figures`,
JSON of the governing result and every receptor line, as credited and with flagged credits
withdrawn. `StoredFigures.read` turns that JSON back into the core's own result types, so a
page drawn from stored rows uses the same templates as one drawn from a fresh computation.

A later field (an uncertainty band, say) goes under `extra` in the JSON, or a new column when
a sum or a ranking needs it, and RESULTS_VERSION (stored_results.py) is raised. What the
spreadsheet exports show is stored apart, flat, in `table_figures` (table_figures.py).
"""

import json
from collections.abc import Mapping
from dataclasses import dataclass, fields, is_dataclass
from functools import lru_cache
from typing import Any

from app.likelihood.demand import SifDemand
from app.likelihood.receptors import ReceptorLine
from app.likelihood.types import DemandMode, Receptor, ScenarioResult, SilStatus, SilTarget
from app.services.study.completeness import is_incomplete
from app.services.study.results import (
    Assessment,
    Figures,
    assessment_of_fresh,
    assessment_of_rows,
    outcome_of,
    receptor_categories,
    targets_of,
    warnings_of,
)
from app.services.study.spread import (
    NO_INPUTS,
    ErrorFactorInputs,
    ScenarioSpread,
    scenario_spread,
)
from app.services.study.table_figures import table_figures

# Any in this module: plain rows from SQLAlchemy carry no column types, and the JSON is untyped.


def _sil_target(data: Mapping[str, Any]) -> SilTarget:
    return SilTarget(**{**data, "status": SilStatus(data["status"]),
                        "demand_mode": DemandMode(data["demand_mode"])})


def _demand(data: Mapping[str, Any]) -> SifDemand:
    return SifDemand(**{**data, "demand_mode": DemandMode(data["demand_mode"]),
                        "sil_target": _sil_target(data["sil_target"])})


LEAVES = frozenset({float, int, str, bool, type(None)})


_FIELD_NAMES: dict[type, tuple[str, ...] | None] = {}


def _field_names(kind: type) -> tuple[str, ...] | None:
    """A dataclass's field names; None for any other type (remembered per type)."""
    if kind not in _FIELD_NAMES:
        _FIELD_NAMES[kind] = (tuple(item.name for item in fields(kind))
                              if is_dataclass(kind) else None)
    return _FIELD_NAMES[kind]


def _plain(value: Any, *, leave_out: str = "") -> Any:
    """dataclasses.asdict for the frozen result types, without its deep copies (it was half
    the time of storing a large study's results); the JSON written is the same."""
    kind = type(value)
    if kind in LEAVES:
        return value
    if kind is tuple or kind is list:
        return [_plain(item) for item in value]
    if kind in SHARED_RESULTS and not leave_out:
        return _plain_shared(value)
    names = _field_names(kind)
    if names is None:
        return value  # an enumeration: written as its text
    return {name: _plain(getattr(value, name)) for name in names if name != leave_out}


SHARED_RESULTS = frozenset({SifDemand, ReceptorLine})
"""Result types the arithmetic remembers per set of numbers, so one object serves many
scenarios: laid out once each (the dicts are only ever read, by json.dumps)."""


@lru_cache(maxsize=65_536)
def _plain_shared(value: Any) -> Any:
    names = _field_names(type(value)) or ()
    return {name: _plain(getattr(value, name)) for name in names}


def _result_data(result: ScenarioResult) -> dict[str, Any]:
    # The worksheet draws the ladder from the live computation.
    data: dict[str, Any] = _plain(result, leave_out="ladder")
    return data


def _result(data: Mapping[str, Any]) -> ScenarioResult:
    demand = data.get("demand")
    return ScenarioResult(**{**data, "ladder": (), "sil_target": _sil_target(data["sil_target"]),
                             "demand": _demand(demand) if demand else None})


def _line(data: Mapping[str, Any]) -> ReceptorLine:
    return ReceptorLine(**{**data, "receptor": Receptor(data["receptor"]),
                           "demand": _demand(data["demand"])})


@dataclass(frozen=True)
class StoredLine:
    """One receptor line of a stored scenario, with the category it is judged against."""

    line: ReceptorLine
    category_id: int


@dataclass(frozen=True)
class StoredFigures:
    """One way of crediting a stored scenario: the governing result and every receptor line."""

    result: ScenarioResult
    governing: Receptor
    category_id: int
    lines: tuple[StoredLine, ...]

    @classmethod
    def read(cls, data: Mapping[str, Any]) -> "StoredFigures":
        """The figures from their JSON form."""
        return cls(_result(data["result"]), Receptor(data["governing"]),
                   int(data["category_id"]),
                   tuple(StoredLine(_line(line), int(line_category))
                         for line, line_category in zip(data["lines"], data["line_categories"],
                                                        strict=True)))


def _figures_data(figures: Figures, rated: Mapping[Receptor, Any]) -> dict[str, Any]:
    lines = figures.receptors.lines
    return {"result": _result_data(figures.result), "governing": figures.governing.receptor,
            "category_id": rated[figures.governing.receptor].id,
            "lines": [_plain(line) for line in lines],
            "line_categories": [rated[line.receptor].id for line in lines]}


def figures_json(assessment: Assessment, rated: Mapping[Receptor, Any]) -> str:
    """The stored `figures` column: as credited, withdrawn (or null), and `extra` for later."""
    withdrawn = assessment.withdrawn
    return json.dumps({
        "credited": _figures_data(assessment.as_credited, rated),
        "withdrawn": _figures_data(withdrawn, rated) if withdrawn is not None else None,
        "withdrawn_labels": list(assessment.withdrawn_labels),
        "extra": {},
    }, separators=(",", ":"))


SIL_BANDS = ("Below SIL 1", "SIL 1", "SIL 2", "SIL 3", "SIL 4", "Beyond one function")
"""The bands added functions are counted in, weakest first."""


def sil_band(target: SilTarget) -> str:
    """The band the risk picture counts an added function in: 'SIL 2', 'Below SIL 1',
    'Beyond one function' (or the target's own label for any other status)."""
    if target.status is SilStatus.SIL:
        return f"SIL {target.sil}"
    if target.status is SilStatus.BELOW_SIL1:
        return "Below SIL 1"
    return "Beyond one function" if target.status is SilStatus.BEYOND_ONE_FUNCTION \
        else target.label


def _withdrawn_columns(assessment: Assessment, rated: Mapping[Receptor, Any]) -> dict[str, Any]:
    """The governing category, gap, band and demand mode drawn with flagged credits withdrawn
    (only for a scenario a check flags; the others are drawn as credited either way)."""
    withdrawn = assessment.withdrawn
    if withdrawn is None:
        return {"withdrawn_category_id": None, "withdrawn_gap_orders": None,
                "withdrawn_sil_band": "", "withdrawn_demand_mode": ""}
    target = withdrawn.result.sil_target
    return {"withdrawn_category_id": rated[withdrawn.governing.receptor].id,
            "withdrawn_gap_orders": withdrawn.result.gap_orders,
            "withdrawn_sil_band": sil_band(target),
            "withdrawn_demand_mode": str(target.demand_mode)}


def _spread_columns(spread: ScenarioSpread | None) -> dict[str, Any]:
    """The governing line's uncertainty as credited (None where no spread can be drawn)."""
    if spread is None:
        return dict(SPREAD_NONE)
    line = spread.governing
    d = line.distribution
    return {"uncertain": line.uncertain, "p_meets": d.probability_meets_target,
            "spread_median": d.median, "spread_p05": d.p05, "spread_p95": d.p95}


SPREAD_NONE: dict[str, Any] = {"uncertain": False, "p_meets": None, "spread_median": None,
                               "spread_p05": None, "spread_p95": None}


def scenario_columns(rating: Any, steps: tuple[Any, ...], categories: Mapping[int, Any],
                     inputs: ErrorFactorInputs = NO_INPUTS, *,
                     remember: bool = True) -> dict[str, Any]:
    """One scenario computed from plain rows, as the columns of its stored row.

    remember False: nothing kept per scenario (a whole study computed once); the same figures.
    """
    people_not_rated = bool(rating.people_not_rated)
    assessment, category, error = outcome_of(
        rating, steps, categories, people_not_rated=people_not_rated,
        assessed=assessment_of_rows if remember else assessment_of_fresh)
    # The assessment holds the same checks' warnings; only an uncomputed scenario runs them.
    warnings = list(assessment.warnings) if assessment is not None else warnings_of(steps)
    if assessment is None or category is None:
        return {**NOT_COMPUTED, "incomplete": is_incomplete(rating, steps), "error": error,
                "warning_count": len(warnings),
                "table_figures": table_figures(steps, None, None, warnings).json()}
    rated = receptor_categories(rating, categories, people_not_rated=people_not_rated)
    spread = scenario_spread(steps, targets_of(rated), inputs,
                             assessment.as_credited.receptors, remember=remember)
    return {**_computed_columns(assessment, category, rated),
            **_withdrawn_columns(assessment, rated), "warning_count": len(warnings),
            **_spread_columns(spread),
            "table_figures": table_figures(steps, assessment, spread, warnings).json()}


def _computed_columns(assessment: Assessment, category: Any,
                      rated: Mapping[Receptor, Any]) -> dict[str, Any]:
    result = assessment.as_credited.result
    withdrawn = assessment.withdrawn.result if assessment.withdrawn else None
    return {"computed": True, "incomplete": False, "short": not result.meets_target,
            "flagged": withdrawn is not None,
            "short_withdrawn": not (withdrawn or result).meets_target, "category_id": category.id,
            "gap_orders": result.gap_orders,
            "receptor": str(assessment.as_credited.governing.receptor),
            "mitigated_frequency": result.mitigated_frequency,
            "tolerable_frequency": result.tolerable_frequency, "ratio": result.ratio,
            "sil_label": result.sil_target.label,
            "demand_mode": str(result.sil_target.demand_mode),
            "withdrawn_mitigated_frequency": withdrawn.mitigated_frequency if withdrawn else None,
            "withdrawn_ratio": withdrawn.ratio if withdrawn else None, "error": "",
            "sil_band": sil_band(result.sil_target),
            "figures": figures_json(assessment, rated)}


NOT_COMPUTED: dict[str, Any] = {
    "computed": False, "incomplete": False, "short": False, "flagged": False,
    "short_withdrawn": False,
    "category_id": None, "gap_orders": None, "receptor": "", "mitigated_frequency": None,
    "tolerable_frequency": None, "ratio": None, "sil_label": "", "demand_mode": "",
    "withdrawn_mitigated_frequency": None, "withdrawn_ratio": None, "figures": "{}",
    "sil_band": "", "withdrawn_category_id": None, "withdrawn_gap_orders": None,
    "withdrawn_sil_band": "", "withdrawn_demand_mode": "", **SPREAD_NONE}


@dataclass(frozen=True)
class StoredResult:
    """A scenario's stored row, read back: figures as credited and withdrawn, or the error."""

    scenario_id: int
    node_id: int
    credited: StoredFigures | None
    withdrawn: StoredFigures | None
    withdrawn_labels: tuple[str, ...]
    error: str
    incomplete: bool = False  # no figures because frequency or severity is still missing

    @classmethod
    def of_row(cls, row: Any) -> "StoredResult":
        """Read one scenario_result row."""
        data = json.loads(row.figures) if row.computed else {}
        withdrawn = data.get("withdrawn")
        return cls(int(row.scenario_id), int(row.node_id),
                   StoredFigures.read(data["credited"]) if data else None,
                   StoredFigures.read(withdrawn) if withdrawn else None,
                   tuple(data.get("withdrawn_labels", ())), str(row.error),
                   bool(getattr(row, "incomplete", False)))  # label-only rows leave it out

    def figures(self, *, withdrawn: bool) -> StoredFigures | None:
        """As credited, or with flagged credits withdrawn where a check flags one."""
        if withdrawn and self.withdrawn is not None:
            return self.withdrawn
        return self.credited
