"""Figures with the credits the IPL checks doubt withdrawn (PFD taken as 1), beside the figures
as credited, so no headline can say "meets target" while its own checks reject a credit."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace

from app.likelihood.check_base import CheckedStep, CheckWarning
from app.likelihood.checks import check_scenario
from app.likelihood.frequency import compute_scenario
from app.likelihood.receptors import ReceptorAssessment, assess_receptors
from app.likelihood.types import Receptor, ScenarioResult

__all__ = [
    "CreditComparison",
    "ReceptorComparison",
    "compare_credits",
    "compare_receptor_credits",
    "withdraw_flagged_credits",
]


@dataclass(frozen=True)
class CreditComparison:
    """The scenario as credited and with flagged credits withdrawn, and why."""

    as_credited: ScenarioResult
    withdrawn: ScenarioResult
    warnings: tuple[CheckWarning, ...]
    withdrawn_indices: tuple[int, ...]
    withdrawn_labels: tuple[str, ...]

    @property
    def has_warnings(self) -> bool:
        """True when any check warned, whether or not it withdrew a credit."""
        return bool(self.warnings)

    @property
    def verdict_changes(self) -> bool:
        """True when withdrawing the flagged credits turns "meets target" into "does not"."""
        return self.as_credited.meets_target != self.withdrawn.meets_target


@dataclass(frozen=True)
class ReceptorComparison:
    """Per-receptor figures as credited and with flagged credits withdrawn."""

    as_credited: ReceptorAssessment
    withdrawn: ReceptorAssessment
    warnings: tuple[CheckWarning, ...]
    withdrawn_indices: tuple[int, ...]


def _flagged_indices(warnings: Sequence[CheckWarning]) -> tuple[int, ...]:
    found = {w.step_index for w in warnings if w.withdraws_credit and w.step_index is not None}
    return tuple(sorted(found))


def withdraw_flagged_credits(
    steps: Sequence[CheckedStep], warnings: Sequence[CheckWarning]
) -> list[CheckedStep]:
    """The steps with each credited IPL a warning doubts set to PFD 1 (a rung that reduces
    nothing, so the ladder still shows the layer)."""
    flagged = set(_flagged_indices(warnings))
    return [replace(s, value=1.0) if i in flagged else s for i, s in enumerate(steps)]


def compare_credits(steps: Sequence[CheckedStep], tolerable_frequency: float) -> CreditComparison:
    """Check the scenario, then compute it as credited and with the flagged credits withdrawn."""
    warnings = tuple(check_scenario(steps))
    indices = _flagged_indices(warnings)
    withdrawn = withdraw_flagged_credits(steps, warnings)
    return CreditComparison(
        as_credited=compute_scenario([s.to_step_input() for s in steps], tolerable_frequency),
        withdrawn=compute_scenario([s.to_step_input() for s in withdrawn], tolerable_frequency),
        warnings=warnings,
        withdrawn_indices=indices,
        withdrawn_labels=tuple(steps[i].label for i in indices),
    )


def compare_receptor_credits(
    steps: Sequence[CheckedStep], tolerable_by_receptor: Mapping[Receptor, float | None]
) -> ReceptorComparison:
    """Per-receptor figures as credited and with the flagged credits withdrawn."""
    warnings = tuple(check_scenario(steps))
    withdrawn = withdraw_flagged_credits(steps, warnings)
    return ReceptorComparison(
        as_credited=assess_receptors([s.to_step_input() for s in steps], tolerable_by_receptor),
        withdrawn=assess_receptors([s.to_step_input() for s in withdrawn], tolerable_by_receptor),
        warnings=warnings,
        withdrawn_indices=_flagged_indices(warnings),
    )
