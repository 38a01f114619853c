"""The one URL builder: paths of named routes, for redirects and (as `path_for`) templates.

Every link and redirect names its route; no module writes a path by hand. Paths carry no host,
so a redirect's Location and a link's href read "/studies/3/nodes/7".
"""

import re
from typing import Any
from weakref import WeakKeyDictionary

from fastapi import FastAPI, Request

# Each app's path templates by route name and parameter names. The framework's url_path_for
# tries every route in turn, which made a 500-scenario worksheet (tens of thousands of links)
# spend most of its time finding routes; the template is asked of it once.
_TEMPLATES: WeakKeyDictionary[FastAPI, dict[tuple[str, tuple[str, ...]], list[str]]] = (
    WeakKeyDictionary())
# Stand-in values whose digits cannot occur in a route's own text.
_MARK = 987_654_321_000
_MARKS = re.compile(r"(987654321\d{3})")


def path_for(request: Request, name: str, /, **params: Any) -> str:
    """The path of the named route (Any: route parameters are ints or text, as url_for takes)."""
    texts = {key: str(value) for key, value in params.items()}
    if any(not text or "/" in text for text in texts.values()):
        return str(request.app.url_path_for(name, **params))  # let the framework refuse it
    keys = tuple(sorted(params))
    parts = _template(request.app, name, keys)
    return "".join(texts[keys[int(part)]] if index % 2 else part
                   for index, part in enumerate(parts))


def _template(app: FastAPI, name: str, keys: tuple[str, ...]) -> list[str]:
    """The route's path split around its parameters: text, parameter index, text, ..."""
    templates = _TEMPLATES.setdefault(app, {})
    if (name, keys) not in templates:
        marked = str(app.url_path_for(name, **{key: _MARK + i for i, key in enumerate(keys)}))
        parts = _MARKS.split(marked)  # odd places hold the marks, in the path's own order
        templates[(name, keys)] = [str(int(part) - _MARK) if index % 2 else part
                                   for index, part in enumerate(parts)]
    return templates[(name, keys)]


def worksheet_url(request: Request, study_id: int, node_id: int, anchor: str = "") -> str:
    """Where a node's worksheet lives, optionally at one element."""
    path = path_for(request, "read_worksheet", study_id=study_id, node_id=node_id)
    return path + (f"#{anchor}" if anchor else "")


def empty_worksheet_url(request: Request, study_id: int) -> str:
    """The study's worksheet entry: the first node, or the page that adds one when it has none."""
    return path_for(request, "read_first_worksheet", study_id=study_id)
