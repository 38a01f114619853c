"""A SIF as subsystems (sensors, logic solver, final elements), each with its own architecture.

The function's PFDavg is the sum of its subsystems' (IEC 61508-6 Annex B approach;
recalled). The SIL it supports is the lower of the SIL its PFDavg supports (IEC 61511-1:2016
Table 4, low demand) and the SIL its hardware fault tolerance allows (IEC 61511-1:2016, 11.4,
Table 6; recalled, not checked against the standard). Systematic capability is a separate
requirement outside this calculation.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from enum import StrEnum

from app.likelihood import sources
from app.likelihood.proof_test import (
    Architecture,
    SifInputs,
    SimplifiedCheck,
    pfd_avg,
    simplified_check,
)
from app.likelihood.sil import SIL_PFD_RANGES, pfd_band
from app.likelihood.types import DemandMode, input_error
from app.likelihood.validation import at_least

__all__ = [
    "HFT_BY_ARCHITECTURE",
    "SYSTEMATIC_CAPABILITY_NOTE",
    "SifVerification",
    "Subsystem",
    "SubsystemResult",
    "SubsystemRole",
    "minimum_hft",
    "sil_allowed_by_hft",
    "sil_supported_by_pfd",
    "verify_sif",
]

SYSTEMATIC_CAPABILITY_NOTE = (
    "Systematic capability (the SC of each device and the way the function was specified, "
    "designed and maintained) is outside this calculation; confirm it separately."
)


class SubsystemRole(StrEnum):
    """The three parts of a safety instrumented function."""

    SENSORS = "sensors"
    LOGIC_SOLVER = "logic_solver"
    FINAL_ELEMENTS = "final_elements"


HFT_BY_ARCHITECTURE: dict[Architecture, int] = {
    Architecture.ONE_OO_ONE: 0,
    Architecture.ONE_OO_TWO: 1,
    Architecture.TWO_OO_TWO: 0,
    Architecture.TWO_OO_THREE: 1,
}
"""Hardware fault tolerance: how many channel failures a MooN arrangement survives (N - M)."""

# IEC 61511-1:2016, 11.4, Table 6 (recalled, not checked against the standard): minimum HFT per SIL.
_MIN_HFT_LOW = {1: 0, 2: 0, 3: 1, 4: 2}
_MIN_HFT_HIGH = {1: 0, 2: 1, 3: 1, 4: 2}


def minimum_hft(sil: int, mode: DemandMode) -> int:
    """The least hardware fault tolerance a subsystem needs to claim this SIL."""
    table = _MIN_HFT_LOW if mode is DemandMode.LOW else _MIN_HFT_HIGH
    if sil not in table:
        raise input_error("sil_range", f"a SIL runs from 1 to 4 (got {sil}).", label="SIL")
    return table[sil]


def sil_allowed_by_hft(hft: int, mode: DemandMode) -> int:
    """The highest SIL a subsystem of this HFT may claim (SIL 1 needs no fault tolerance)."""
    return max(sil for sil in (1, 2, 3, 4) if minimum_hft(sil, mode) <= hft)


def sil_supported_by_pfd(pfd: float) -> int | None:
    """The low-demand SIL a PFDavg supports: SIL 4 at most, None at 0.1 or more."""
    if at_least(pfd, SIL_PFD_RANGES[1][1]):
        return None
    return pfd_band(pfd) or 4  # below the SIL 4 band still claims SIL 4 at most


@dataclass(frozen=True)
class Subsystem:
    """One part of the function with its own channels, voting and proof test."""

    role: SubsystemRole
    inputs: SifInputs
    label: str = ""

    @property
    def hft(self) -> int:
        """Hardware fault tolerance of this subsystem's architecture."""
        return HFT_BY_ARCHITECTURE[self.inputs.architecture]


@dataclass(frozen=True)
class SubsystemResult:
    """One subsystem's PFDavg, HFT, the SIL that HFT allows and the simplified-equation check."""

    subsystem: Subsystem
    pfd_avg: float
    hft: int
    sil_by_hft: int
    simplified: SimplifiedCheck


@dataclass(frozen=True)
class SifVerification:
    """The function's PFDavg (sum), the SIL by PFD, by HFT, the one supported, and notes."""

    subsystems: tuple[SubsystemResult, ...]
    pfd_avg: float
    demand_mode: DemandMode
    sil_by_pfd: int | None
    sil_by_hft: int
    sil_supported: int | None
    governed_by_hft: bool
    systematic_capability_note: str
    hft_citation: str
    hft_verify_against_copy: bool


def _result(subsystem: Subsystem, mode: DemandMode) -> SubsystemResult:
    return SubsystemResult(subsystem, pfd_avg(subsystem.inputs), subsystem.hft,
                           sil_allowed_by_hft(subsystem.hft, mode),
                           simplified_check(subsystem.inputs))


def _check_roles(subsystems: Sequence[Subsystem]) -> None:
    roles = [s.role for s in subsystems]
    if not roles or len(set(roles)) != len(roles):
        raise input_error(
            "subsystem_roles",
            "a SIF needs one entry per subsystem (sensors, logic solver, final elements), "
            "each role once.",
            label="Subsystems",
        )


def verify_sif(
    subsystems: Sequence[Subsystem], mode: DemandMode = DemandMode.LOW
) -> SifVerification:
    """Sum the subsystems' PFDavg and cap the SIL it supports by the weakest subsystem's HFT."""
    _check_roles(subsystems)
    results = tuple(_result(s, mode) for s in subsystems)
    total = sum(r.pfd_avg for r in results)
    by_pfd = sil_supported_by_pfd(total)
    by_hft = min(r.sil_by_hft for r in results)
    supported = None if by_pfd is None else min(by_pfd, by_hft)
    return SifVerification(
        subsystems=results,
        pfd_avg=total,
        demand_mode=mode,
        sil_by_pfd=by_pfd,
        sil_by_hft=by_hft,
        sil_supported=supported,
        governed_by_hft=by_pfd is not None and by_hft < by_pfd,
        systematic_capability_note=SYSTEMATIC_CAPABILITY_NOTE,
        hft_citation=sources.IEC_61511_2016_TABLE_6.text,
        hft_verify_against_copy=sources.IEC_61511_2016_TABLE_6.verify_against_copy,
    )
