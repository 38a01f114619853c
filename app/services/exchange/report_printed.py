"""A scenario as the report prints it: plain words and the ladder's geometry, nothing else.

`report_scenarios.py` words each scenario of a report into these records (the only place that
decides what a scenario's pages say); `report_pages.py` draws them. They hold no database rows,
so they cross into the layout processes as they are (pickled) and those processes import
neither the app's models nor its templates.
"""

from dataclasses import dataclass

from app.services.worksheet.ladder import LadderBand, LadderView

Run = tuple[str, str]
"""A piece of running text and its style (report_type.STYLES): "" plain, "B" bold, "key" a
small grey label, "heading" a scenario's heading, "status-meets", "status-short" or
"status-unknown" its coloured verdict."""


@dataclass(frozen=True)
class PrintedStep:
    """One row of a scenario's steps table."""

    kind: str
    description: str
    """The description, then its basis and typical-value row on lines of their own."""
    typed: str
    value: str
    credited: str
    is_credited: bool


@dataclass(frozen=True)
class PrintedScenario:
    """One scenario: a heading, cause and consequence, steps, checks, figures, ladder."""

    anchor: str
    state: str
    """'meets', 'short' or 'unknown': the colour of its heading rule and verdict."""
    heading: tuple[Run, ...]
    cause_consequence: tuple[Run, ...]
    steps: tuple[PrintedStep, ...]
    warnings: tuple[Run, ...]
    figures: tuple[Run, ...]
    """The results as one run of text; or the words saying why there are none."""
    safeguards: str
    ladder: LadderView | None = None
    band: LadderBand | None = None


@dataclass(frozen=True)
class PrintedNode:
    """A node's heading (or "(continued)" when a part goes on with it) and its scenarios."""

    title: str
    lines: tuple[str, ...]
    scenarios: tuple[PrintedScenario, ...]


@dataclass(frozen=True)
class PrintedPart:
    """What one part of scenario pages prints, with every page's running header and footer."""

    study_title: str
    revision: str
    signature: str
    cautions: str
    section_title: str
    """'3 · Scenarios by node' on the first part of scenarios, '' on the ones after."""
    nodes: tuple[PrintedNode, ...]
    document_title: str
    needs_cjk: bool = False
    """Whether any text is Chinese, Japanese or Korean (the fallback font is large to load)."""
