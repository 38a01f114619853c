"""Typical values from published LOPA tables, each row with its source and how sure we are of it."""

from __future__ import annotations

from dataclasses import dataclass

from app.likelihood import sources
from app.likelihood.sources import Citation
from app.likelihood.types import IplType, StepKind


@dataclass(frozen=True)
class TypicalValue:
    """A published range [low, high] and the example value a LOPA would usually take."""

    key: str
    label: str
    kind: StepKind
    low: float
    high: float
    example: float
    source: str
    ipl_type: IplType | None = None
    citation: str = ""
    verify_against_copy: bool = False
    """citation: document, edition and table, with no status inside it; verify_against_copy:
    the value was not checked against the published text (source keeps the older one-string
    form for current pages)."""


# Document and table only: whether a row was checked against the published text is its
# verify_against_copy flag (rows REFERENCE.md marks as recalled carry it), never words here.
CCPS_2001_TABLE_5_1 = "CCPS, Layer of Protection Analysis (2001), Table 5.1"
CCPS_2001_CH6 = "CCPS, Layer of Protection Analysis (2001), ch. 6"
IEC_61511_BANDS = (
    "IEC 61511-1:2016, Table 4, low-demand SIL bands; "
    "example value at the band's conservative end unless a verified PFDavg is entered"
)
COX_LEES_ANG_1990 = (
    "Cox, Lees & Ang, Classification of Hazardous Locations (IChemE, 1990)"
)
NO_SOURCE = "common practice, no source"

_IE = StepKind.INITIATING_EVENT
_IPL = StepKind.IPL
_CM = StepKind.CONDITIONAL_MODIFIER
_EC = StepKind.ENABLING_CONDITION


def _row(key: str, label: str, kind: StepKind, values: tuple[float, float, float], source: str,
         cite: Citation, ipl_type: IplType | None = None) -> TypicalValue:
    low, high, example = values
    return TypicalValue(key, label, kind, low, high, example, source, ipl_type,
                        cite.text, cite.verify_against_copy)


def _initiating(key: str, label: str, low: float, high: float, example: float) -> TypicalValue:
    return _row(key, label, _IE, (low, high, example), CCPS_2001_TABLE_5_1,
                sources.CCPS_2001_TABLE_5_1)


def _ipl(key: str, label: str, band: tuple[float, float], example: float,
         ipl_type: IplType, source: str = CCPS_2001_CH6) -> TypicalValue:
    cite = sources.IEC_61511_2016_TABLE_4 if ipl_type is IplType.SIF else sources.CCPS_2001_CH6
    return _row(key, label, _IPL, (band[0], band[1], example), source, cite, ipl_type)


def _ignition(key: str, label: str, value: float) -> TypicalValue:
    return _row(key, label, _CM, (value, value, value), COX_LEES_ANG_1990,
                sources.COX_LEES_ANG_1990)


def _enabling(key: str, label: str, low: float, high: float, example: float) -> TypicalValue:
    return _row(key, label, _EC, (low, high, example), NO_SOURCE, sources.NO_SOURCE)


_INITIATING_EVENTS = (
    _initiating("bpcs_loop_failure", "BPCS instrument loop failure", 1e-2, 1.0, 1e-1),
    _initiating("regulator_failure", "Regulator failure", 1e-1, 1.0, 1e-1),
    _initiating("pump_seal_failure", "Pump seal failure", 1e-2, 1e-1, 1e-1),
    _initiating("cooling_water_failure", "Cooling water failure", 1e-2, 1.0, 1e-1),
    _initiating("hose_failure", "Unloading/loading hose failure", 1e-2, 1.0, 1e-1),
    _initiating("safety_valve_spurious", "Safety valve opens spuriously", 1e-4, 1e-2, 1e-2),
    _initiating("gasket_packing_blowout", "Gasket/packing blowout", 1e-6, 1e-2, 1e-2),
    _initiating("third_party_intervention", "Third-party intervention", 1e-4, 1e-2, 1e-2),
    _initiating("lightning_strike", "Lightning strike", 1e-4, 1e-3, 1e-3),
    _initiating("atmospheric_tank_failure", "Atmospheric tank failure", 1e-5, 1e-3, 1e-3),
    _initiating("piping_leak_100m", "Piping leak (10 % section), per 100 m", 1e-4, 1e-3, 1e-3),
    _initiating("piping_breach_100m", "Piping full breach, per 100 m", 1e-6, 1e-5, 1e-5),
    _initiating("vessel_residual_failure", "Pressure vessel residual failure", 1e-7, 1e-5, 1e-6),
    _row(
        "operator_routine_error",
        "Operator fails a routine procedure (per opportunity: multiply by tasks per year)",
        _IE, (1e-3, 1e-1, 1e-2), CCPS_2001_TABLE_5_1,
        Citation(sources.CCPS_2001_TABLE_5_1.text, verify_against_copy=True),
    ),
)

_IPLS = (
    _ipl("relief_valve", "Relief valve", (1e-5, 1e-1), 1e-2, IplType.RELIEF_DEVICE),
    _ipl("rupture_disc", "Rupture disc", (1e-5, 1e-1), 1e-2, IplType.RELIEF_DEVICE),
    _ipl("dike", "Dike or bund", (1e-3, 1e-2), 1e-2, IplType.PASSIVE),
    _ipl("open_vent", "Open vent (no valve)", (1e-3, 1e-2), 1e-2, IplType.PASSIVE),
    _ipl("flame_arrester", "Flame arrester", (1e-3, 1e-1), 1e-2, IplType.PASSIVE),
    _ipl("blast_wall", "Blast wall or bunker", (1e-3, 1e-2), 1e-3, IplType.PASSIVE),
    _ipl("bpcs_layer", "BPCS loop, independent of the cause", (1e-2, 1e-1), 1e-1, IplType.BPCS),
    _ipl("operator_response", "Operator response to an alarm, at least 10 min to act",
         (1e-1, 1.0), 1e-1, IplType.OPERATOR_RESPONSE),
    # Example values at the conservative end of each band: a SIL claim alone supports no more.
    _ipl("sif_sil1", "SIF, SIL 1 (example value 0.1 unless a verified PFDavg is entered)",
         (1e-2, 1e-1), 1e-1, IplType.SIF, IEC_61511_BANDS),
    _ipl("sif_sil2", "SIF, SIL 2 (example value 0.01 unless a verified PFDavg is entered)",
         (1e-3, 1e-2), 1e-2, IplType.SIF, IEC_61511_BANDS),
    _ipl("sif_sil3", "SIF, SIL 3 (example value 0.001 unless a verified PFDavg is entered)",
         (1e-4, 1e-3), 1e-3, IplType.SIF, IEC_61511_BANDS),
)

_MODIFIERS = (
    _ignition("ignition_gas_small", "Ignition, gas release below 1 kg/s", 0.01),
    _ignition("ignition_liquid_small", "Ignition, liquid release below 1 kg/s", 0.01),
    _ignition("ignition_gas_medium", "Ignition, gas release 1 to 50 kg/s", 0.07),
    _ignition("ignition_liquid_medium", "Ignition, liquid release 1 to 50 kg/s", 0.03),
    _ignition("ignition_gas_large", "Ignition, gas release above 50 kg/s", 0.3),
    _ignition("ignition_liquid_large", "Ignition, liquid release above 50 kg/s", 0.08),
)

# Fractions of the year at risk (hours at risk / 8760); illustrations, not published values.
_ENABLING_CONDITIONS = (
    _enabling("freezing_season", "Freezing weather, about three months a year", 0.1, 0.5, 0.25),
    _enabling("startup_days", "Plant in start-up, a few days a year", 0.003, 0.05, 0.01),
    _enabling("batch_step_at_risk", "Batch step at risk for part of each cycle", 0.05, 0.5, 0.2),
)

TYPICAL_VALUES: tuple[TypicalValue, ...] = (
    _INITIATING_EVENTS + _IPLS + _MODIFIERS + _ENABLING_CONDITIONS
)
_BY_KEY = {row.key: row for row in TYPICAL_VALUES}


def typical_by_key(key: str) -> TypicalValue | None:
    """The typical-value row with this key, or None."""
    return _BY_KEY.get(key)


def typical_for_kind(kind: StepKind) -> tuple[TypicalValue, ...]:
    """The typical-value rows for one kind of step, in table order."""
    return tuple(row for row in TYPICAL_VALUES if row.kind == kind)
