"""Citations users see: document, edition and clause or table, with a separate flag for values
not yet checked against the published text (shown as VERIFY_MARKER, never inside the citation).
"""

from __future__ import annotations

from dataclasses import dataclass

VERIFY_MARKER = "verify against your copy"


@dataclass(frozen=True)
class Citation:
    """Where a value or rule comes from; verify_against_copy: not checked against the text."""

    text: str
    verify_against_copy: bool = False

    def display(self) -> str:
        """The citation as one line, the marker after it in brackets when set."""
        return f"{self.text} [{VERIFY_MARKER}]" if self.verify_against_copy else self.text


NO_SOURCE = Citation("Common practice, no published source")

IEC_61511_2016_BPCS_LAYER = Citation("IEC 61511-1:2016, clause 9.3", verify_against_copy=True)
IEC_61511_2003_BPCS_CAUSE = Citation("IEC 61511-1:2003, clause 8.2.2", verify_against_copy=True)
IEC_61511_2016_TABLE_4 = Citation(
    "IEC 61511-1:2016, Table 4 (low demand SIL bands)", verify_against_copy=True
)
IEC_61511_2016_TABLE_5 = Citation(
    "IEC 61511-1:2016, Table 5 (high demand SIL bands)", verify_against_copy=True
)
IEC_61511_2016_TABLE_6 = Citation(
    "IEC 61511-1:2016, clause 11.4, Table 6 (minimum hardware fault tolerance)",
    verify_against_copy=True,
)
IEC_61511_2016_MODES = Citation(
    "IEC 61511-1:2016, clause 3.2 (modes of operation)", verify_against_copy=True
)
IEC_61508_6_2010_ANNEX_B = Citation(
    "IEC 61508-6:2010, Annex B, B.3.2.2 (simplified equations)", verify_against_copy=True
)
CCPS_2001_CH6 = Citation(
    "CCPS, Layer of Protection Analysis (AIChE, 2001), chapter 6", verify_against_copy=True
)
CCPS_2001_TABLE_5_1 = Citation("CCPS, Layer of Protection Analysis (AIChE, 2001), Table 5.1")
CCPS_2013_MODIFIERS = Citation(
    "CCPS, Guidelines for Enabling Conditions and Conditional Modifiers in LOPA (2013), "
    "chapter 2",
    verify_against_copy=True,
)
HSE_PSLG_2009_APP_2 = Citation(
    "HSE/PSLG, Safety and environmental standards for fuel storage sites, final report "
    "(2009), Appendix 2"
)
COX_LEES_ANG_1990 = Citation(
    "Cox, Lees & Ang, Classification of Hazardous Locations (IChemE, 1990)",
    verify_against_copy=True,
)
