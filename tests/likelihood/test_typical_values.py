"""The typical-value table: every published row present, with its range, example and source."""

import pytest

from app.likelihood.types import IplType, StepKind
from app.likelihood.typical import TYPICAL_VALUES, typical_by_key, typical_for_kind

TABLE_5_1 = "CCPS, Layer of Protection Analysis (2001), Table 5.1"  # seen in a scan
CH_6 = "CCPS, Layer of Protection Analysis (2001), ch. 6"  # from memory; verify flag set
COX = "Cox, Lees & Ang, Classification of Hazardous Locations (IChemE, 1990)"  # from memory


@pytest.mark.parametrize(
    ("key", "low", "high", "example", "source"),
    [
        ("bpcs_loop_failure", 1e-2, 1.0, 1e-1, TABLE_5_1),
        ("regulator_failure", 1e-1, 1.0, 1e-1, TABLE_5_1),
        ("pump_seal_failure", 1e-2, 1e-1, 1e-1, TABLE_5_1),
        ("cooling_water_failure", 1e-2, 1.0, 1e-1, TABLE_5_1),
        ("hose_failure", 1e-2, 1.0, 1e-1, TABLE_5_1),
        ("safety_valve_spurious", 1e-4, 1e-2, 1e-2, TABLE_5_1),
        ("gasket_packing_blowout", 1e-6, 1e-2, 1e-2, TABLE_5_1),
        ("third_party_intervention", 1e-4, 1e-2, 1e-2, TABLE_5_1),
        ("lightning_strike", 1e-4, 1e-3, 1e-3, TABLE_5_1),
        ("atmospheric_tank_failure", 1e-5, 1e-3, 1e-3, TABLE_5_1),
        ("piping_leak_100m", 1e-4, 1e-3, 1e-3, TABLE_5_1),
        ("piping_breach_100m", 1e-6, 1e-5, 1e-5, TABLE_5_1),
        ("vessel_residual_failure", 1e-7, 1e-5, 1e-6, TABLE_5_1),
        ("operator_routine_error", 1e-3, 1e-1, 1e-2,
         "CCPS, Layer of Protection Analysis (2001), Table 5.1"),  # from memory
        ("relief_valve", 1e-5, 1e-1, 1e-2, CH_6),
        ("rupture_disc", 1e-5, 1e-1, 1e-2, CH_6),
        ("dike", 1e-3, 1e-2, 1e-2, CH_6),
        ("open_vent", 1e-3, 1e-2, 1e-2, CH_6),
        ("flame_arrester", 1e-3, 1e-1, 1e-2, CH_6),
        ("blast_wall", 1e-3, 1e-2, 1e-3, CH_6),
        ("bpcs_layer", 1e-2, 1e-1, 1e-1, CH_6),
        ("operator_response", 1e-1, 1.0, 1e-1, CH_6),
        ("ignition_gas_small", 0.01, 0.01, 0.01, COX),
        ("ignition_liquid_small", 0.01, 0.01, 0.01, COX),
        ("ignition_gas_medium", 0.07, 0.07, 0.07, COX),
        ("ignition_liquid_medium", 0.03, 0.03, 0.03, COX),
        ("ignition_gas_large", 0.3, 0.3, 0.3, COX),
        ("ignition_liquid_large", 0.08, 0.08, 0.08, COX),
    ],
)
def test_each_published_row_is_in_the_table(key, low, high, example, source):
    row = typical_by_key(key)
    assert row is not None
    assert (row.low, row.high, row.example, row.source) == (low, high, example, source)


@pytest.mark.parametrize(
    ("sil", "low", "high"), [(1, 1e-2, 1e-1), (2, 1e-3, 1e-2), (3, 1e-4, 1e-3)]
)
def test_sif_rows_follow_the_iec_61511_low_demand_bands(sil, low, high):
    row = typical_by_key(f"sif_sil{sil}")
    assert row is not None and (row.low, row.high, row.ipl_type) == (low, high, IplType.SIF)
    assert row.source.startswith("IEC 61511-1:2016")


def test_every_row_is_well_formed():
    for row in TYPICAL_VALUES:
        assert 0 < row.low <= row.example <= row.high, row.key
        assert row.kind is StepKind.INITIATING_EVENT or row.high <= 1, row.key
        assert (row.ipl_type is not None) == (row.kind is StepKind.IPL), row.key
        assert row.source, row.key
    assert len({row.key for row in TYPICAL_VALUES}) == len(TYPICAL_VALUES)


def test_unsourced_enabling_conditions_say_so():
    rows = typical_for_kind(StepKind.ENABLING_CONDITION)
    assert len(rows) >= 3
    assert {row.source for row in rows} == {"common practice, no source"}


def test_an_unknown_key_finds_nothing():
    assert typical_by_key("no_such_row") is None


@pytest.mark.parametrize(("sil", "example"), [(1, 0.1), (2, 0.01), (3, 0.001)])
def test_sif_rows_take_the_conservative_end_of_their_band_as_an_example_value(sil, example):
    # Issue 9, item 4: a SIL claim alone supports no better than the band's upper PFD edge
    # (IEC 61511-1:2016 Table 4 bands; values secondary). Worded "example value", not "usually".
    row = typical_by_key(f"sif_sil{sil}")
    assert row is not None and row.example == example == row.high
    assert "example value" in row.label and "usually" not in row.label


def test_citations_name_document_and_table_without_a_status_inside():
    # Issue 9, item 7: status moves to the separate verify_against_copy flag.
    for row in TYPICAL_VALUES:
        assert row.citation, row.key
        assert "from memory" not in row.citation and "secondary" not in row.citation, row.key
    seal = typical_by_key("pump_seal_failure")
    assert seal is not None
    assert (seal.citation, seal.verify_against_copy) == (
        "CCPS, Layer of Protection Analysis (AIChE, 2001), Table 5.1", False)  # seen in a scan
    relief = typical_by_key("relief_valve")
    assert relief is not None and relief.verify_against_copy  # CCPS ch. 6 values from memory
