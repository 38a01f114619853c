"""Checks on what a credit claims: a BPCS cause claimed rarer than the standard allows, a SIF
with no SIL or beyond SIL 3, an untyped IPL, an IPL at PFD 1. They warn, never block."""

from __future__ import annotations

from collections.abc import Callable, Sequence

from app.likelihood import sources
from app.likelihood.check_base import (
    CauseType,
    CheckedStep,
    CheckWarning,
    credited_ipls,
    initiating_events,
    warn,
)
from app.likelihood.types import IplType
from app.likelihood.units import HOURS_PER_YEAR
from app.likelihood.validation import at_least

__all__ = ["BPCS_CAUSE_FLOOR_PER_YEAR", "CREDIT_RULES"]

BPCS_CAUSE_FLOOR_PER_HOUR = 1e-5
BPCS_CAUSE_FLOOR_PER_YEAR = BPCS_CAUSE_FLOOR_PER_HOUR * HOURS_PER_YEAR
"""A BPCS failure rate claimed below 1e-5 per hour (0.0876 per year) needs justification
(IEC 61511-1:2003, 8.2.2; secondary)."""

SIF_PFD_FLOOR = 1e-4
"""A single SIF credited better than SIL 3 (PFD below 1e-4): common practice, no source."""


def _is_bpcs_cause(step: CheckedStep) -> bool:
    return step.cause_type is CauseType.BPCS_FAILURE or step.typical_key == "bpcs_loop_failure"


def _bpcs_cause_floor(steps: Sequence[CheckedStep]) -> list[CheckWarning]:
    return [
        warn("bpcs_cause_floor", s,
             f"a BPCS failure is claimed at {s.value:g} per year, rarer than 1e-5 per hour "
             f"({BPCS_CAUSE_FLOOR_PER_YEAR:.3g} per year); that needs justification.",
             sources.IEC_61511_2003_BPCS_CAUSE)
        for s in initiating_events(steps)
        if _is_bpcs_cause(s) and not at_least(s.value, BPCS_CAUSE_FLOOR_PER_YEAR)
    ]


def _sif_claims(steps: Sequence[CheckedStep]) -> list[CheckWarning]:
    warnings = []
    for s in credited_ipls(steps, IplType.SIF):
        if s.sil_claimed is None:
            warnings.append(warn(
                "sif_no_sil", s,
                f"a SIF is credited with PFD {s.value:g} but no SIL is claimed; state the SIL "
                f"its verification supports.",
                sources.IEC_61511_2016_TABLE_4))
        if not at_least(s.value, SIF_PFD_FLOOR):
            warnings.append(warn(
                "sif_beyond_sil3", s,
                f"a SIF is credited with PFD {s.value:g}, better than 1e-4 (beyond SIL 3); "
                f"one function rarely supports that. Take 1e-4 or justify it.",
                sources.NO_SOURCE))
    return warnings


def _ipl_untyped(steps: Sequence[CheckedStep]) -> list[CheckWarning]:
    return [
        warn("ipl_untyped", s,
             "no IPL type is given, so the rules for its kind cannot be checked; choose one.",
             sources.NO_SOURCE)
        for s in credited_ipls(steps) if s.ipl_type is None
    ]


def _ipl_pfd_one(steps: Sequence[CheckedStep]) -> list[CheckWarning]:
    return [
        warn("ipl_pfd_one", s,
             "credited at PFD 1, which reduces nothing; set its PFD or leave it uncredited.",
             sources.NO_SOURCE)
        for s in credited_ipls(steps) if at_least(s.value, 1.0)
    ]


CREDIT_RULES: tuple[Callable[[Sequence[CheckedStep]], list[CheckWarning]], ...] = (
    _bpcs_cause_floor,
    _sif_claims,
    _ipl_untyped,
    _ipl_pfd_one,
)
