"""Agreeing a round: the value taken and the basis sentence recorded on the step."""

import pytest

from app.likelihood.agreement import (
    Agreement,
    AgreementMethod,
    Dissent,
    agreed_value,
    agreement_basis,
)
from app.likelihood.estimates import EstimateUnit, round_stats
from app.likelihood.types import LikelihoodInputError

# Six estimates from 1e-3 to 1e-2. Geometric mean by hand: their product is
# (1e-3 * 1e-2) ** 3 = 1e-15, whose sixth root is 10**-2.5 = 3.162e-3.
SIX = [1e-3, 1e-2, 1e-3, 1e-2, 1e-3, 1e-2]
ROUND_TWO = round_stats(SIX, EstimateUnit.PER_YEAR)


def test_the_issue_example_reads_as_one_sentence_with_the_dissent():
    agreement = Agreement(
        2, ROUND_TWO, AgreementMethod.GEOMETRIC_MEAN,
        dissents=(Dissent("J. Doe", "vendor data says 1e-4"),),
    )  # fmt: skip
    assert agreed_value(agreement) == pytest.approx(10**-2.5, rel=1e-12)
    assert agreement_basis(agreement) == (
        "agreed in round 2 from 6 estimates, 1.0e-3 to 1.0e-2, geometric mean 3.2e-3; "
        "J. Doe dissents: vendor data says 1e-4"
    )


def test_the_median_method_takes_the_median():
    figures = round_stats([1e-3, 2e-3, 8e-3], EstimateUnit.PROBABILITY)
    agreement = Agreement(1, figures, AgreementMethod.MEDIAN)
    assert agreed_value(agreement) == 2e-3
    assert agreement_basis(agreement) == (
        "agreed in round 1 from 3 estimates, 1.0e-3 to 8.0e-3, median 2.0e-3"
    )


def test_a_typed_value_is_recorded_with_the_geometric_mean_beside_it():
    agreement = Agreement(3, ROUND_TWO, AgreementMethod.TYPED, typed_value=5e-3)
    assert agreed_value(agreement) == 5e-3
    assert agreement_basis(agreement) == (
        "agreed in round 3 from 6 estimates, 1.0e-3 to 1.0e-2, "
        "typed value 5.0e-3 (geometric mean 3.2e-3)"
    )


def test_one_estimate_and_several_dissents_some_without_a_reason():
    figures = round_stats([0.1], EstimateUnit.PROBABILITY)
    agreement = Agreement(
        1, figures, AgreementMethod.GEOMETRIC_MEAN,
        dissents=(Dissent("  A.  Smith ", ""), Dissent("B. Lee", " site data:\n 1 in 20 ")),
    )  # fmt: skip
    assert agreement_basis(agreement) == (
        "agreed in round 1 from 1 estimate, all 1.0e-1, geometric mean 1.0e-1; "
        "A. Smith dissents; B. Lee dissents: site data: 1 in 20"
    )


@pytest.mark.parametrize(
    ("agreement", "rule", "message"),
    [
        (Agreement(0, ROUND_TWO, AgreementMethod.MEDIAN), "round_number",
         "Round: a round number starts at 1 (got 0)."),
        (Agreement(1, ROUND_TWO, AgreementMethod.TYPED), "typed_value_required",
         "Agreed value: agreeing on a typed value needs the value."),
        (Agreement(1, ROUND_TWO, AgreementMethod.TYPED, typed_value=-1.0), "frequency_positive",
         "Agreed value: a frequency must be a finite number of events per year above 0 (got -1)."),
        (Agreement(1, ROUND_TWO, AgreementMethod.MEDIAN, dissents=(Dissent(" "),)),
         "dissent_person", "Dissent: a dissent needs the person's name."),
    ],
)  # fmt: skip
def test_an_agreement_that_breaks_a_rule_is_refused(agreement, rule, message):
    with pytest.raises(LikelihoodInputError) as raised:
        agreement_basis(agreement)
    assert (raised.value.rule, raised.value.message) == (rule, message)


def test_a_typed_probability_above_one_is_refused():
    figures = round_stats([0.1, 0.2], EstimateUnit.PROBABILITY)
    with pytest.raises(LikelihoodInputError) as raised:
        agreed_value(Agreement(1, figures, AgreementMethod.TYPED, typed_value=2.0))
    assert raised.value.rule == "probability_range"
