"""The one URL builder: paths of named routes, for redirects and (as `path_for`) templates.

Every link and redirect names its route; no module writes a path by hand. Paths carry no host,
so a redirect's Location and a link's href read "/studies/3/nodes/7".
"""

from typing import Any

from fastapi import Request


def path_for(request: Request, name: str, /, **params: Any) -> str:
    """The path of the named route (Any: route parameters are ints or text, as url_for takes)."""
    return str(request.app.url_path_for(name, **params))


def worksheet_url(request: Request, study_id: int, node_id: int, anchor: str = "") -> str:
    """Where a node's worksheet lives, optionally at one element."""
    path = path_for(request, "read_worksheet", study_id=study_id, node_id=node_id)
    return path + (f"#{anchor}" if anchor else "")


def empty_worksheet_url(request: Request, study_id: int) -> str:
    """The study's worksheet entry: the first node, or the page that adds one when it has none."""
    return path_for(request, "read_first_worksheet", study_id=study_id)
