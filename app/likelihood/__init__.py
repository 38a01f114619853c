"""Pure LOPA likelihood arithmetic: standard library only, frozen dataclasses in and out.

The names most callers need are re-exported here; the submodules hold the rest (conversions,
proof_test, typical). Nothing in this package touches the web, the database or templates.
"""

from app.likelihood.checks import CheckedStep, CheckWarning, check_scenario
from app.likelihood.frequency import compute_scenario
from app.likelihood.numbers import (
    ParsedNumber,
    format_number,
    format_one_in,
    parse_frequency,
    parse_probability,
)
from app.likelihood.sil import HOURS_PER_YEAR, sil_for_rrf, sil_target
from app.likelihood.types import (
    STEP_KIND_LABELS,
    DemandMode,
    IplType,
    LadderPoint,
    LikelihoodInputError,
    ScenarioResult,
    SilStatus,
    SilTarget,
    StepInput,
    StepKind,
)
from app.likelihood.validation import validate_frequency, validate_probability

__all__ = [
    "HOURS_PER_YEAR",
    "STEP_KIND_LABELS",
    "CheckWarning",
    "CheckedStep",
    "DemandMode",
    "IplType",
    "LadderPoint",
    "LikelihoodInputError",
    "ParsedNumber",
    "ScenarioResult",
    "SilStatus",
    "SilTarget",
    "StepInput",
    "StepKind",
    "check_scenario",
    "compute_scenario",
    "format_number",
    "format_one_in",
    "parse_frequency",
    "parse_probability",
    "sil_for_rrf",
    "sil_target",
    "validate_frequency",
    "validate_probability",
]
