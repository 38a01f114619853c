"""Checks on the protection layers a scenario credits: they warn, and never block a result."""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import replace

from app.likelihood import sources
from app.likelihood.check_base import (
    CauseType,
    CheckedStep,
    CheckWarning,
    credited_ipls,
    same_tag,
    warn,
)
from app.likelihood.checks_credit import CREDIT_RULES
from app.likelihood.checks_human import HUMAN_RULES
from app.likelihood.checks_independence import INDEPENDENCE_RULES
from app.likelihood.sil import SIL_PFD_RANGES
from app.likelihood.sources import Citation
from app.likelihood.types import IplType, StepKind
from app.likelihood.typical import typical_by_key
from app.likelihood.validation import at_least, at_most

__all__ = ["CauseType", "CheckWarning", "CheckedStep", "IplType", "check_scenario"]

BPCS_PFD_FLOOR = 0.1
OPERATOR_PFD_FLOOR = 0.1
OPERATOR_MINUTES_FLOOR = 10.0

BPCS_SOURCE = "IEC 61511-1:2016, clause 9.3"
# Checked against a secondary account, not the book: its citation carries the verify flag.
INDEPENDENCE_SOURCE = "CCPS, Layer of Protection Analysis (2001), ch. 6"
OPERATOR_SOURCE = "CCPS, Layer of Protection Analysis (2001), ch. 6"
SIL_BAND_SOURCE = "IEC 61511-1:2016, Table 4, low demand"


def _warn(
    rule: str, step: CheckedStep, sentence: str, source: str, cite: Citation
) -> CheckWarning:
    """A warning for an older rule: its one-string source kept, the citation beside it."""
    return warn(rule, step, sentence, cite, source)


def _same_tag(a: str, b: str) -> bool:
    return same_tag(a, b)


def _credited_ipls(
    steps: Sequence[CheckedStep], ipl_type: IplType | None = None
) -> list[CheckedStep]:
    return credited_ipls(steps, ipl_type)


def _bpcs_pfd_floor(steps: Sequence[CheckedStep]) -> list[CheckWarning]:
    return [
        _warn("bpcs_pfd_floor", s,
              f"a BPCS layer is credited with PFD {s.value:g}, a risk reduction over 10; that "
              f"needs a BPCS designed and managed to IEC 61511. Take 0.1 or use a SIF.",
              BPCS_SOURCE, sources.IEC_61511_2016_BPCS_LAYER)
        for s in _credited_ipls(steps, IplType.BPCS)
        if not at_least(s.value, BPCS_PFD_FLOOR)
    ]


def _cause_is_layer(steps: Sequence[CheckedStep]) -> list[CheckWarning]:
    causes = [s.cause_system_tag for s in steps
              if s.kind == StepKind.INITIATING_EVENT and s.cause_system_tag.strip()]
    return [
        _warn("cause_is_layer", s,
              f"runs on '{s.system_tag.strip()}', the system whose failure is the initiating "
              f"event; a layer must be independent of the cause. Do not credit it.",
              INDEPENDENCE_SOURCE, sources.CCPS_2001_CH6)
        for s in _credited_ipls(steps)
        if any(_same_tag(s.system_tag, cause) for cause in causes)
    ]


def _shared_bpcs(steps: Sequence[CheckedStep]) -> list[CheckWarning]:
    warnings: list[CheckWarning] = []
    first_on: dict[str, CheckedStep] = {}
    for s in _credited_ipls(steps, IplType.BPCS):
        tag = s.system_tag.strip().casefold()  # an untagged BPCS counts as the plant's one BPCS
        if tag not in first_on:
            first_on[tag] = s
            continue
        where = f"'{s.system_tag.strip()}'" if tag else "the BPCS (no tag given)"
        warnings.append(_warn(
            "shared_bpcs", s,
            f"shares {where} with '{first_on[tag].label}'; two layers on one BPCS are not "
            f"independent. Credit only one of them.",
            BPCS_SOURCE, sources.IEC_61511_2016_BPCS_LAYER,
        ))
    return warnings


def _operator_time(step: CheckedStep) -> CheckWarning | None:
    if step.time_available_minutes is not None:
        return None  # judged by the time-available rules in checks_human
    minutes = step.response_time_minutes
    if minutes is not None and minutes >= OPERATOR_MINUTES_FLOOR:
        return None
    given = "not given" if minutes is None else f"{minutes:g} min"
    return _warn("operator_time", step,
                 f"an operator response needs at least 10 minutes to act (time {given}).",
                 OPERATOR_SOURCE, sources.CCPS_2001_CH6)


def _operator_pfd_floor(step: CheckedStep) -> CheckWarning | None:
    if at_least(step.value, OPERATOR_PFD_FLOOR):
        return None
    return _warn("operator_pfd_floor", step,
                 f"an operator response is credited with PFD {step.value:g}; 0.1 is the best "
                 f"usually allowed.",
                 OPERATOR_SOURCE, sources.CCPS_2001_CH6)


def _operator_checks(steps: Sequence[CheckedStep]) -> list[CheckWarning]:
    found = (
        check(s)
        for s in _credited_ipls(steps, IplType.OPERATOR_RESPONSE)
        for check in (_operator_time, _operator_pfd_floor)
    )
    return [warning for warning in found if warning is not None]


def _sil_claim_problem(step: CheckedStep) -> str | None:
    sil = step.sil_claimed
    if sil is None:
        return None
    if sil not in SIL_PFD_RANGES:
        return f"claims SIL {sil}, but low-demand SILs run from 1 to 4."
    low, _ = SIL_PFD_RANGES[sil]
    if at_least(step.value, low):
        return None
    return f"claims SIL {sil}, whose PFD is at least {low:g}, but is credited with {step.value:g}."


def _sil_claim_mismatch(steps: Sequence[CheckedStep]) -> list[CheckWarning]:
    found = [(s, _sil_claim_problem(s)) for s in _credited_ipls(steps)]
    return [
        _warn("sil_claim_mismatch", s, problem, SIL_BAND_SOURCE, sources.IEC_61511_2016_TABLE_4)
        for s, problem in found
        if problem is not None
    ]


def _outside_typical(step: CheckedStep) -> CheckWarning | None:
    row = typical_by_key(step.typical_key) if step.typical_key else None
    if row is None or (at_least(step.value, row.low) and at_most(step.value, row.high)):
        return None
    published = f"{row.low:g}" if row.low == row.high else f"{row.low:g} to {row.high:g}"
    return _warn("outside_typical_range", step,
                 f"{step.value:g} is outside the typical value for '{row.label}' ({published}); "
                 f"say why in the notes.",
                 row.source, Citation(row.citation, row.verify_against_copy))


def _outside_typical_range(steps: Sequence[CheckedStep]) -> list[CheckWarning]:
    found = (_outside_typical(s) for s in steps)
    return [warning for warning in found if warning is not None]


_RULES: tuple[Callable[[Sequence[CheckedStep]], list[CheckWarning]], ...] = (
    _bpcs_pfd_floor,
    _cause_is_layer,
    _shared_bpcs,
    _operator_checks,
    _sil_claim_mismatch,
    _outside_typical_range,
    *INDEPENDENCE_RULES,
    *CREDIT_RULES,
    *HUMAN_RULES,
)


def _with_index(warning: CheckWarning, steps: Sequence[CheckedStep]) -> CheckWarning:
    index = next((i for i, s in enumerate(steps) if s is warning.step), None)
    return replace(warning, step_index=index)


def check_scenario(steps: Sequence[CheckedStep]) -> list[CheckWarning]:
    """Every warning the IPL checks raise for a scenario, grouped by rule in a fixed order."""
    return [_with_index(warning, steps) for rule in _RULES for warning in rule(steps)]
