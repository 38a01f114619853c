"""Independence checks beyond identical tags: shared loop numbers, shared final elements, and an
operator response to a BPCS alarm credited beside a BPCS layer. They warn, never block."""

from __future__ import annotations

import re
from collections.abc import Callable, Sequence

from app.likelihood import sources
from app.likelihood.check_base import (
    CheckedStep,
    CheckWarning,
    credited_ipls,
    initiating_events,
    same_tag,
    warn,
)
from app.likelihood.types import IplType

__all__ = ["INDEPENDENCE_RULES", "loop_number"]

_DIGITS = re.compile(r"\d{3,}")


def loop_number(tag: str) -> str:
    """The loop number in an instrument tag: its last run of 3 or more digits ("LIC-101" -> "101").

    Tags of one loop share it (LIC-101, LAH-101, LV-101A); common practice, no source. Shorter
    runs are system names (DCS-1, SIS-2), not loops. Leading zeros are dropped so "LT-0101" and
    "LIC-101" match; "" when the tag has no such run.
    """
    found = _DIGITS.findall(tag)
    return str(int(found[-1])) if found else ""


def _shares_loop(a: str, b: str) -> bool:
    number = loop_number(a)
    return bool(number) and not same_tag(a, b) and number == loop_number(b)


def _shared_loop_number(steps: Sequence[CheckedStep]) -> list[CheckWarning]:
    causes = [s.cause_system_tag for s in initiating_events(steps) if s.cause_system_tag.strip()]
    layers = [s for s in credited_ipls(steps) if s.system_tag.strip()]
    warnings = []
    for i, layer in enumerate(layers):
        tags = [*causes, *(earlier.system_tag for earlier in layers[:i])]
        shared = next((tag for tag in tags if _shares_loop(layer.system_tag, tag)), None)
        if shared is not None:
            warnings.append(warn(
                "shared_loop_number", layer,
                f"'{layer.system_tag.strip()}' shares loop {loop_number(shared)} with "
                f"'{shared.strip()}'; one loop is one system. Show the layer is independent "
                f"or do not credit it.",
                sources.NO_SOURCE,
            ))
    return warnings


def _shared_final_element(steps: Sequence[CheckedStep]) -> list[CheckWarning]:
    causes = [(s.label or "the initiating event", s.final_element_tag)
              for s in initiating_events(steps) if s.final_element_tag.strip()]
    warnings, seen = [], list(causes)
    for layer in credited_ipls(steps):
        tag = layer.final_element_tag
        if not tag.strip():
            continue
        other = next((name for name, t in seen if same_tag(t, tag)), None)
        if other is not None:
            warnings.append(warn(
                "shared_final_element", layer,
                f"acts through '{tag.strip()}', the final element of '{other}' too; a failure "
                f"of that element defeats both. Do not credit both.",
                sources.CCPS_2001_CH6,
            ))
        seen.append((layer.label, tag))
    return warnings


def _alarm_depends_on(operator: CheckedStep, bpcs: CheckedStep) -> bool:
    if operator.alarm_on_bpcs is not None:
        return operator.alarm_on_bpcs
    return bool(operator.system_tag.strip()) and same_tag(operator.system_tag, bpcs.system_tag)


def _operator_on_bpcs(steps: Sequence[CheckedStep]) -> list[CheckWarning]:
    layers = credited_ipls(steps, IplType.BPCS)
    warnings = []
    for operator in credited_ipls(steps, IplType.OPERATOR_RESPONSE):
        bpcs = next((b for b in layers if _alarm_depends_on(operator, b)), None)
        if bpcs is not None:
            warnings.append(warn(
                "operator_on_bpcs", operator,
                f"responds to an alarm on the BPCS, and '{bpcs.label}' is a BPCS layer too; "
                f"both depend on the BPCS. Credit one of them, or alarm from another system.",
                sources.IEC_61511_2016_BPCS_LAYER,
            ))
    return warnings


INDEPENDENCE_RULES: tuple[Callable[[Sequence[CheckedStep]], list[CheckWarning]], ...] = (
    _shared_loop_number,
    _shared_final_element,
    _operator_on_bpcs,
)
