"""The words of the report's scenario pages: each scenario of a part as `PrintedScenario` records,
drawn by `report_pages.py`. The only code that says what a scenario's pages print (the HTML
report carries the front and back matter only).

Numbers go through the app's one formatter (the template environment's filters `sci`,
`orders`, `required_rrf`, `percent`), check titles come from `risk/_warnings.html` and the
cautions from the environment's globals, so the pages say what the screens say.
"""

import re
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from typing import Any

from jinja2 import Environment

from app.services.exchange.report import Report, ReportNode, ReportScenario, ReportStep
from app.services.exchange.report_printed import (
    PrintedNode,
    PrintedPart,
    PrintedScenario,
    PrintedStep,
    Run,
)
from app.services.study.results import Assessment

SCENARIOS_TITLE = "3 · Scenarios by node"
TIMES, EN_DASH = "\N{MULTIPLICATION SIGN}", "\N{EN DASH}"


@dataclass(frozen=True)
class Words:
    """The app's formatters and vocabularies, taken once from the template environment."""

    sci: Callable[[float | None], str]
    orders: Callable[[float | None], str]
    required_rrf: Callable[[Any], str]
    percent: Callable[[float], str]
    confidence: dict[Any, str]
    check_titles: dict[str, str]
    cautions: str

    @classmethod
    def of(cls, env: Environment) -> "Words":
        """The words the templates use."""
        filters = env.filters
        return cls(filters["sci"], filters["orders"], filters["required_rrf"],
                   filters["percent"], env.globals["confidence_words"],  # type: ignore[arg-type]
                   dict(env.get_template("risk/_warnings.html").module.check_titles),  # type: ignore[attr-defined]
                   str(env.globals["cautions"]))

    def check_title(self, rule: str) -> str:
        """A check's title, or its rule name in words."""
        return self.check_titles.get(rule, rule.replace("_", " ").capitalize())


def printed_part(report: Report, nodes: Sequence[ReportNode], *, words: Words,
                 continued: bool, first: bool) -> PrintedPart:
    """Some nodes' scenarios as the pages print them: `continued` when the first node goes on
    from the part before, `first` on the first part of scenarios."""
    printed = tuple(_printed_node(node, words, continued=continued and number == 0)
                    for number, node in enumerate(nodes))
    return PrintedPart(
        study_title=report.study.title, revision=f"Revision {report.signature.label}",
        signature=report.signature.footer, cautions=words.cautions,
        section_title=SCENARIOS_TITLE if first else "", nodes=printed,
        document_title=f"{report.study.title} · study report",
        needs_cjk=any(_is_cjk(text) for text in _texts(printed)))


def _texts(nodes: tuple[PrintedNode, ...]) -> Iterator[str]:
    for node in nodes:
        yield node.title
        yield from node.lines
        for scenario in node.scenarios:
            yield from (text for _style, text in scenario.heading + scenario.cause_consequence
                        + scenario.warnings + scenario.figures)
            yield scenario.safeguards
            for step in scenario.steps:
                yield from (step.kind, step.description, step.typed, step.credited)


def _is_cjk(text: str) -> bool:
    """Whether the text has a character of the CJK blocks (U+2E80 to U+FFEF, which DejaVu
    lacks; the fallback font is then loaded)."""
    return _CJK.search(text) is not None


_CJK = re.compile("[\u2e80-\uffef]")


def _printed_node(node: ReportNode, words: Words, *, continued: bool) -> PrintedNode:
    scenarios = tuple(printed_scenario(entry, words) for entry in node.scenarios)
    if continued:
        return PrintedNode(f"Node {node.label} (continued)", (), scenarios)
    drawing = node.node.drawing_reference
    intent = node.node.design_intent + (f" · drawing {drawing}" if drawing else "")
    totals = node.totals
    counts = (f"{totals.scenario_count} scenarios · {totals.short_count} short of target · "
              f"{totals.short_withdrawn_count} short with flagged credits withdrawn"
              + (f" · {totals.incomplete_count} incomplete" if totals.incomplete_count else "")
              + " (sums per category: see the risk picture)")
    return PrintedNode(f"Node {node.label}", (intent, counts), scenarios)


def printed_scenario(entry: ReportScenario, words: Words) -> PrintedScenario:
    """One scenario's heading, steps, checks and figures in words."""
    outcome = entry.item.outcome
    result = outcome.result
    state = "unknown" if result is None else ("meets" if result.meets_target else "short")
    category = outcome.governing_category.name if outcome.governing_category else "no severity"
    scenario = entry.item.scenario
    safeguards = "; ".join(s.description for s in entry.item.safeguards)
    return PrintedScenario(
        anchor=f"scenario-{entry.ref}", state=state,
        heading=((f"status-{state}", _verdict(entry, words)),
                 ("heading", f" {entry.ref} · {entry.deviation} · {category}")),
        cause_consequence=(("B", "Cause: "), ("", scenario.cause + "\n"),
                           ("B", "Consequence: "), ("", scenario.consequence)),
        steps=tuple(_printed_step(step, words) for step in entry.steps),
        warnings=_warnings(entry, words), figures=_figures(entry, words),
        safeguards=f"Other safeguards (not credited): {safeguards}" if safeguards else "",
        ladder=entry.ladder, band=entry.band)


def _verdict(entry: ReportScenario, words: Words) -> str:
    outcome = entry.item.outcome
    result = outcome.result
    if result is None:
        return "◌ incomplete" if outcome.incomplete else "? not computed"
    return "● meets target" if result.meets_target else f"▲ short {TIMES}{words.sci(result.ratio)}"


def _printed_step(step: ReportStep, words: Words) -> PrintedStep:
    lines = [step.description, f"Basis: {step.basis or 'none recorded'}"]
    if step.typical:
        lines.append(f"Typical-value row: {step.typical}")
    credited = "yes" if step.credited else f"no: {step.not_credited_because}"
    return PrintedStep(step.kind, "\n".join(lines), step.value_text, words.sci(step.value),
                       credited, step.credited)


def _warnings(entry: ReportScenario, words: Words) -> tuple[Run, ...]:
    runs: list[Run] = []
    for number, warning in enumerate(entry.warnings):
        place = f" ({warning.step_label})" if warning.step_label else ""
        verify = " [verify against your copy]" if warning.verify_against_copy else ""
        runs += [("B", ("\n" if number else "") + f"⚠ {words.check_title(warning.rule)}"),
                 ("", f"{place}: {warning.message} "),
                 ("key", f"Source: {warning.citation or warning.source}{verify}")]
    return tuple(runs)


def _figures(entry: ReportScenario, words: Words) -> tuple[Run, ...]:
    outcome = entry.item.outcome
    result = outcome.result
    if result is None:
        if outcome.incomplete:
            missing = " and the ".join(outcome.missing)
            return (("", f"◌ Incomplete: {outcome.error}. Give the {missing} to see its "
                         "figures."),)
        return (("", f"Not computed: {outcome.error}"),)
    runs: list[Run] = [
        ("key", "Mitigated frequency "), ("B", f"{words.sci(result.mitigated_frequency)} /yr"),
        ("key", " · Target (tolerable) "), ("", f"{words.sci(result.tolerable_frequency)} /yr"),
        ("key", " · Gap "), ("", f"{words.orders(result.gap_orders)} orders of magnitude"),
        ("key", " · Required RRF "), ("", words.required_rrf(result)),
        ("key", " · Additional SIF: required SIL "),
        ("", f"{result.sil_target.label} ({entry.demand_mode})")]
    if result.demand:
        runs += [("key", " · Demand on an added SIF "), ("", result.demand.formula)]
    if outcome.assessment:
        runs += _receptor_runs(entry, outcome.assessment, words)
    return tuple(runs)


def _receptor_runs(entry: ReportScenario, assessment: Assessment,
                   words: Words) -> list[Run]:
    runs: list[Run] = []
    governing = assessment.as_credited.governing.receptor
    for line in assessment.as_credited.receptors.lines:
        governs = " (governs)" if line.receptor == governing else ""
        runs += [("key", f" · {line.receptor.value.capitalize()}{governs} "),
                 ("", f"{words.sci(line.mitigated_frequency)} /yr against "
                      f"{words.sci(line.tolerable_frequency)} /yr · "
                      f"{line.demand.sil_target.label}")]
    spread = entry.item.spread
    if spread:
        d = spread.governing.distribution
        notes = "; ".join(f"{n.label or n.kind.label}: {n.note}" for n in spread.notes)
        runs += [("key", " · Uncertainty (entered values as medians) "),
                 ("", f"median {words.sci(d.median)} /yr · 5{EN_DASH}95 % {words.sci(d.p05)} to "
                      f"{words.sci(d.p95)} /yr · mean {words.sci(d.mean)} /yr · P(meets "
                      f"target) {words.percent(d.probability_meets_target)} · "
                      f"{words.confidence[d.confidence]}"),
                 ("key", " · Error factors "), ("", notes)]
    if assessment.withdrawn:
        w = assessment.withdrawn.result
        verdict = "meets target" if w.meets_target else f"short {TIMES}{words.sci(w.ratio)}"
        runs += [("key", " · ⚑ With flagged credits withdrawn "),
                 ("", f"{', '.join(assessment.withdrawn_labels)} at PFD 1: "
                      f"{words.sci(w.mitigated_frequency)} /yr · {verdict} · "
                      f"{w.sil_target.label}")]
    return runs
