"""The arithmetic remembered per set of numbers gives exactly what multiplying them out gives.

`demand.sif_demand_of`, `receptors._line_of` and `frequency._running_products` are
remembered on the numbers alone (each list of factors sorted, labels left out), so a study
that repeats a product computes it once. The reference here multiplies the exact decimal
values (Python's `fractions.Fraction` of each float's shortest text, the reading exact.py
documents) in the order the steps are given, with no cache, and rounds once with `float()`;
the remembered path must give the same floats (compared with ==, and -0.0/0.0 cannot arise:
every factor is positive), the same SIL target and the same formula, whatever the order and
labels of the steps, and whether the entry was fresh or found.
"""

import math
from fractions import Fraction

from hypothesis import given, settings
from hypothesis import strategies as st

from app.likelihood.demand import sif_demand, sif_demand_of
from app.likelihood.frequency import compute_scenario
from app.likelihood.receptors import assess_receptors
from app.likelihood.sil import sil_target
from app.likelihood.types import ModifierKind, Receptor, StepInput, StepKind, modifier_receptors

TYPICAL = (1.0, 0.5, 0.3, 0.25, 0.1, 0.05, 0.01, 1e-3, 1e-4)
probabilities = st.one_of(st.sampled_from(TYPICAL),
                          st.floats(min_value=1e-6, max_value=1.0, allow_subnormal=False))
frequencies = st.one_of(st.sampled_from((10.0, 2.0, 1.0, 0.5, 0.1, 0.01)),
                        st.floats(min_value=1e-5, max_value=20.0, allow_subnormal=False))
tolerables = st.one_of(st.sampled_from((1e-2, 1e-3, 1e-4, 1e-5, 1e-6)),
                       st.floats(min_value=1e-8, max_value=1.0, allow_subnormal=False))
labels = st.text(max_size=6)
receptor_sets = st.one_of(st.none(), st.frozensets(st.sampled_from(tuple(Receptor))))


@st.composite
def scenarios(draw: st.DrawFn) -> list[StepInput]:
    """One initiating event, enabling conditions, modifiers and layers, in any order."""
    steps = [StepInput(StepKind.INITIATING_EVENT, draw(frequencies), draw(labels))]
    steps += [StepInput(StepKind.ENABLING_CONDITION, draw(probabilities), draw(labels))
              for _ in range(draw(st.integers(0, 2)))]
    steps += [StepInput(StepKind.CONDITIONAL_MODIFIER, draw(probabilities), draw(labels),
                        modifier_kind=draw(st.none() | st.sampled_from(tuple(ModifierKind))),
                        receptors=draw(receptor_sets))
              for _ in range(draw(st.integers(0, 3)))]
    steps += [StepInput(StepKind.IPL, draw(probabilities), draw(labels),
                        credited=draw(st.booleans()), acts_after_sif=draw(st.booleans()))
              for _ in range(draw(st.integers(0, 4)))]
    return draw(st.permutations(steps))


def exact(value: float) -> Fraction:
    """A float read as its shortest decimal text, exactly."""
    return Fraction(repr(float(value)))


def product(values: list[float]) -> Fraction:
    """The exact product, multiplied in the order given."""
    return math.prod((exact(value) for value in values), start=Fraction(1))


def reference_products(steps: list[StepInput], receptor: Receptor | None
                       ) -> tuple[Fraction, Fraction, Fraction]:
    """Demand factors, the receptor's modifiers, and layers acting after an added function."""
    before = [s.value for s in steps if s.kind in (StepKind.INITIATING_EVENT,
                                                   StepKind.ENABLING_CONDITION)]
    before += [s.value for s in steps
               if s.kind == StepKind.IPL and s.credited and not s.acts_after_sif]
    modifiers = [s.value for s in steps if s.kind == StepKind.CONDITIONAL_MODIFIER
                 and (receptor is None or receptor in modifier_receptors(s))]
    after = [s.value for s in steps if s.kind == StepKind.IPL and s.credited and s.acts_after_sif]
    return product(before), product(modifiers), product(after)


def relabelled_reversed(steps: list[StepInput]) -> list[StepInput]:
    """The same numbers in the opposite order under other labels."""
    return [StepInput(s.kind, s.value, f"other {i}", s.credited, s.acts_after_sif,
                      s.modifier_kind, s.receptors) for i, s in enumerate(reversed(steps))]


@settings(max_examples=300, deadline=None)
@given(scenarios(), tolerables, st.none() | st.sampled_from(tuple(Receptor)))
def test_a_remembered_demand_equals_its_factors_multiplied_out(
    steps: list[StepInput], tolerable: float, receptor: Receptor | None
) -> None:
    demand, modifiers, after = reference_products(steps, receptor)
    mitigated = float(demand * modifiers * after)
    target = sil_target(mitigated, tolerable, demand_rate_per_year=float(demand),
                        mitigation_after_demand=float(modifiers * after))
    found = sif_demand(steps, tolerable, receptor)
    assert (found.demand_rate_per_year, found.modifier_product, found.after_layers_product,
            found.mitigated_frequency) == (float(demand), float(modifiers), float(after),
                                           mitigated)
    assert found.sil_target == target
    assert (found.required_rrf, found.required_pfh, found.demand_mode) == (
        target.required_rrf, target.required_pfh, target.demand_mode)
    sif_demand_of.cache_clear()  # computed afresh from the numbers in another order
    assert sif_demand(relabelled_reversed(steps), tolerable, receptor) == found


@settings(max_examples=300, deadline=None)
@given(scenarios(), tolerables)
def test_a_remembered_ladder_equals_the_running_exact_product(
    steps: list[StepInput], tolerable: float
) -> None:
    result = compute_scenario(steps, tolerable)
    order = (StepKind.INITIATING_EVENT, StepKind.ENABLING_CONDITION,
             StepKind.CONDITIONAL_MODIFIER, StepKind.IPL)
    counted = sorted((s for s in steps if s.credited or s.kind != StepKind.IPL),
                     key=lambda s: order.index(s.kind))
    running = [float(product([s.value for s in counted[:i + 1]])) for i in range(len(counted))]
    assert [(p.label, p.factor, p.frequency_after) for p in result.ladder] == [
        (s.label, s.value, after) for s, after in zip(counted, running, strict=True)]
    assert result.mitigated_frequency == float(product([s.value for s in counted]))


@settings(max_examples=300, deadline=None)
@given(scenarios(), st.dictionaries(st.sampled_from(tuple(Receptor)), tolerables, min_size=1))
def test_remembered_receptor_lines_equal_each_line_multiplied_out(
    steps: list[StepInput], targets: dict[Receptor, float]
) -> None:
    found = assess_receptors(steps, targets)
    for line in found.lines:
        demand, modifiers, after = reference_products(steps, line.receptor)
        mitigated = float(demand * modifiers * after)
        ratio = exact(mitigated) / exact(targets[line.receptor])
        assert (line.mitigated_frequency, line.modifier_product) == (mitigated, float(modifiers))
        assert line.ratio == float(ratio)
        assert line.gap_orders == math.log10(ratio.numerator) - math.log10(ratio.denominator)
    assert found.governing == max(found.lines, key=lambda line: line.ratio)
    assert assess_receptors(relabelled_reversed(steps), targets) == found
