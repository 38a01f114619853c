"""Jinja2 with named fragment blocks, and the number filters every template uses."""

import math
import re
from collections.abc import Mapping
from typing import Any

from fastapi import Request
from jinja2 import pass_context
from jinja2_fragments.fastapi import Jinja2Blocks
from markupsafe import Markup
from starlette.responses import Response
from starlette.routing import NoMatchFound

from app.likelihood.numbers import (
    format_error_factor,
    format_number,
    format_one_in,
    format_orders,
    format_rrf,
    probability_text,
)
from app.likelihood.types import ScenarioResult, StepKind, step_kind_words
from app.likelihood.uncertainty import VERDICT_CONFIDENCE_LABELS
from app.routes import urls
from app.services.study.results import required_rrf_cell
from app.services.study.spread import MEDIAN_NOTE
from app.services.study.tree import WorksheetSpot
from app.settings import PROJECT_ROOT

# Any in this module: template contexts and route parameters are whatever Jinja2 and Starlette
# take (the template boundary).

CAUTIONS = (
    "Tallyroom is decision support for a competent review team. Its results are only as good "
    "as the inputs the team agrees. LOPA is an order-of-magnitude method: read each figure to "
    "its decade, not its digits. Follow your company's standards, local regulations, the "
    "IEC 61511 safety lifecycle and competent professional judgement."
)
# The room view's one line (a projector has no room for the paragraph, which it keeps in the
# line's title): the same cautions, each in a word or two.
ROOM_CAUTION = (
    "Decision support for a competent team · order-of-magnitude figures from agreed inputs · "
    "company standards, regulations, IEC 61511 and judgement decide"
)

# Explicit bidirectional formatting characters: embeddings and overrides (closed by PDF,
# U+202C) and isolates (closed by PDI, U+2069).
_BIDI_CONTROLS = re.compile("[\u202a-\u202e\u2066-\u2069]")
_EMBEDDINGS, _ISOLATES = "\u202a\u202b\u202d\u202e", "\u2066\u2067\u2068"
FIRST_STRONG_ISOLATE, POP_ISOLATE, POP_EMBEDDING = "\u2068", "\u2069", "\u202c"


def isolate_bidi(value: Any) -> Any:
    """Text holding bidirectional controls, closed and isolated so it cannot reorder its
    neighbours on the page (every `{{ }}` output passes here; idempotent, so text saved back
    from a form does not grow)."""
    if not isinstance(value, str) or isinstance(value, Markup) or not _BIDI_CONTROLS.search(
            value):
        return value
    open_marks: list[str] = []
    for char in value:
        if char in _EMBEDDINGS or char in _ISOLATES:
            open_marks.append(char)
        elif char in (POP_EMBEDDING, POP_ISOLATE) and open_marks:
            open_marks.pop()
    closed = value + "".join(POP_ISOLATE if mark in _ISOLATES else POP_EMBEDDING
                             for mark in reversed(open_marks))
    if closed == value and value.startswith(FIRST_STRONG_ISOLATE) and value.endswith(
            POP_ISOLATE):
        return value
    return FIRST_STRONG_ISOLATE + closed + POP_ISOLATE


templates = Jinja2Blocks(directory=str(PROJECT_ROOT / "templates"))
templates.env.finalize = isolate_bidi
# Templates change only with a release: without this every render (and every include in it)
# asks the file system whether its file changed.
templates.env.auto_reload = False


def sci(value: float | None) -> str:
    """Scientific notation with two significant figures ('—' when missing)."""
    return "—" if value is None or not math.isfinite(value) else format_number(value)


def orders(value: float | None) -> str:
    """A gap in orders of magnitude with its sign ('+1.4')."""
    return "—" if value is None or not math.isfinite(value) else format_orders(value)


def rrf(value: float | None) -> str:
    """A risk reduction factor as a whole number with thousands separators ('1,200')."""
    return "—" if value is None or not math.isfinite(value) else format_rrf(value)


def required_rrf(result: ScenarioResult) -> str:
    """A scenario's required added RRF as every export writes it ('none needed' when met)."""
    cell = required_rrf_cell(result)
    return cell if isinstance(cell, str) else rrf(cell)


@pass_context
def _template_path_for(context: Mapping[str, Any], name: str, /, **params: Any) -> str:
    """app.routes.urls.path_for for templates: a named route's path, without the host."""
    return urls.path_for(context["request"], name, **params)


@pass_context
def worksheet_path(context: Mapping[str, Any], spot: WorksheetSpot) -> str:
    """A link to a row on the worksheet; inside the PDF (no request, no site) only its anchor."""
    request = context.get("request")
    if request is None:
        return f"#{spot.anchor}"
    return urls.worksheet_url(request, spot.study_id, spot.node_id, spot.anchor)


templates.env.filters.update(sci=sci, one_in=format_one_in, orders=orders, rrf=rrf,
                             required_rrf=required_rrf,
                             percent=probability_text, ef=format_error_factor,
                             kind_words=step_kind_words)
templates.env.globals.update(confidence_words=VERDICT_CONFIDENCE_LABELS, median_note=MEDIAN_NOTE)
templates.env.globals.update(cautions=CAUTIONS, room_caution=ROOM_CAUTION,
                             step_kinds=tuple(StepKind),
                             path_for=_template_path_for, worksheet_path=worksheet_path)


def compile_templates() -> int:
    """Compile every template now (the server's warm-up), so no request pays for it; how many."""
    names = templates.env.list_templates(extensions=["html"])
    for name in names:
        templates.env.get_template(name)
    return len(names)


def is_htmx(request: Request) -> bool:
    """True when htmx sent the request (it wants a fragment, not a page)."""
    return request.headers.get("HX-Request") == "true"


def render(
    request: Request,
    name: str,
    context: dict[str, Any],
    *,
    block: str | None = None,
    blocks: list[str] | None = None,
    status_code: int = 200,
) -> Response:
    """Render a page, or only its named blocks; one URL may serve both, so vary on HX-Request."""
    kwargs: dict[str, Any] = {"status_code": status_code}
    if blocks:
        kwargs["block_names"] = blocks
    elif block:
        kwargs["block_name"] = block
    response = templates.TemplateResponse(request, name, context, **kwargs)
    response.headers["Vary"] = "HX-Request"
    return response


# The study pages' shared navigation: (label, route name). A link shows once its route exists,
# so each area adds itself by registering a route with this name.
STUDY_NAV = [
    ("Overview", "read_study"),
    ("Worksheet", "read_first_worksheet"),
    ("Room view", "read_room"),
    ("Estimate rounds", "read_rounds"),
    ("Word scale", "read_word_scale"),
    ("Risk criteria", "read_criteria"),
    ("Risk picture", "read_risk_picture"),
    ("SIF proof test", "read_proof_test"),
    ("Actions", "read_actions"),
    ("Attendance", "read_attendance"),
    ("Change log", "read_change_log"),
    ("Revisions", "read_revisions"),
    ("Export", "read_exports"),
]


def study_nav(request: Request, study_id: int) -> list[tuple[str, str, bool]]:
    """(label, url, current) of every study page that exists in this app."""
    # Ask the router itself: FastAPI 0.16x wraps included routers, hiding route names.
    # Paths, not full URLs, so the template can mark the current page.
    links = []
    for label, name in STUDY_NAV:
        try:
            path = request.url_for(name, study_id=study_id).path
        except NoMatchFound:
            continue
        links.append((label, path, _is_current(request, name, path)))
    return links


def _is_current(request: Request, name: str, path: str) -> bool:
    """The tab of this page; every node's worksheet belongs to the Worksheet tab."""
    here = request.url.path
    if name == "read_first_worksheet":
        return here == path or "/nodes/" in here
    return here == path


templates.env.globals.update(study_nav=study_nav)
