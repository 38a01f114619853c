"""What a scenario needs before it has figures: an initiating frequency and a severity.

A new scenario starts with neither. A stand-in value (once a year, the severity of the row
above) would put a target, a gap and a SIL on the projector that nobody agreed, so until the
team gives both the scenario is *incomplete*: no frequency, no target, no SIL. Pages and
exports say so, and rankings, sums and SIL counts leave it out and say how many they left out.
"""

from collections.abc import Sequence

INITIATING_FREQUENCY = "initiating event frequency"
SEVERITY = "severity"


def missing_inputs(*, initiating_frequency_given: bool,
                   severity_given: bool) -> tuple[str, ...]:
    """The inputs still to give, in the order a team gives them (empty when complete)."""
    missing = []
    if not initiating_frequency_given:
        missing.append(INITIATING_FREQUENCY)
    if not severity_given:
        missing.append(SEVERITY)
    return tuple(missing)


def incomplete_words(missing: Sequence[str]) -> str:
    """'no initiating event frequency and no severity yet' for the missing inputs."""
    return " and ".join(f"no {name}" for name in missing) + " yet"


def left_out_words(count: int) -> str:
    """What a ranking, sum or count says about the incomplete scenarios it leaves out."""
    if count == 0:
        return ""
    noun = "scenario" if count == 1 else "scenarios"
    return f"{count} incomplete {noun} left out (no initiating frequency or severity yet)"
