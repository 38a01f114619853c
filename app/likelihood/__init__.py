"""Pure LOPA likelihood arithmetic: standard library only, frozen dataclasses in and out.

The names most callers need are re-exported here; the submodules hold the rest (conversions,
proof_test, sif_verification, typical, checks_*). Nothing in this package touches the web,
the database or templates.
"""

from app.likelihood.check_base import CauseType
from app.likelihood.checks import CheckedStep, CheckWarning, check_scenario
from app.likelihood.demand import SifDemand, sif_demand
from app.likelihood.frequency import compute_scenario
from app.likelihood.numbers import (
    ParsedNumber,
    format_number,
    format_one_in,
    parse_frequency,
    parse_probability,
)
from app.likelihood.receptors import ReceptorAssessment, ReceptorLine, assess_receptors
from app.likelihood.sil import sil_for_rrf, sil_target
from app.likelihood.sources import VERIFY_MARKER, Citation
from app.likelihood.types import (
    STEP_KIND_LABELS,
    DemandMode,
    IplType,
    LadderPoint,
    LikelihoodInputError,
    ModifierKind,
    Receptor,
    ScenarioResult,
    SilStatus,
    SilTarget,
    StepInput,
    StepKind,
    modifier_receptors,
)
from app.likelihood.units import HOURS_PER_MONTH, HOURS_PER_WEEK, HOURS_PER_YEAR
from app.likelihood.validation import validate_frequency, validate_probability
from app.likelihood.withdrawn import CreditComparison, compare_credits, withdraw_flagged_credits

__all__ = [
    "HOURS_PER_MONTH",
    "HOURS_PER_WEEK",
    "HOURS_PER_YEAR",
    "STEP_KIND_LABELS",
    "VERIFY_MARKER",
    "CauseType",
    "CheckWarning",
    "CheckedStep",
    "Citation",
    "CreditComparison",
    "DemandMode",
    "IplType",
    "LadderPoint",
    "LikelihoodInputError",
    "ModifierKind",
    "ParsedNumber",
    "Receptor",
    "ReceptorAssessment",
    "ReceptorLine",
    "ScenarioResult",
    "SifDemand",
    "SilStatus",
    "SilTarget",
    "StepInput",
    "StepKind",
    "assess_receptors",
    "check_scenario",
    "compare_credits",
    "compute_scenario",
    "format_number",
    "format_one_in",
    "modifier_receptors",
    "parse_frequency",
    "parse_probability",
    "sif_demand",
    "sil_for_rrf",
    "sil_target",
    "validate_frequency",
    "validate_probability",
    "withdraw_flagged_credits",
]
