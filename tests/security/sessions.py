"""How tests get a session and its CSRF token: the way a browser does, from a page."""

import re

from fastapi.testclient import TestClient

from app.access.csrf import HEADER

_META = re.compile(r'<meta name="csrf-token" content="([^"]+)">')


def page_token(html: str) -> str:
    """The CSRF token a page carries in its <meta name="csrf-token">."""
    found = _META.search(html)
    assert found, "the page has no csrf-token meta tag"
    return found.group(1)


def attach_token(client: TestClient, path: str = "/") -> str:
    """Open `path`, then send its token with every later request (as app.js does for htmx)."""
    response = client.get(path)
    token = page_token(response.text)
    client.headers[HEADER] = token
    return token


def install_local_session(client: TestClient, name: str) -> None:
    """The loopback user's session: a token on every request and `name` for the change log."""
    attach_token(client)
    response = client.post("/author", data={"name": name, "next": "/"}, follow_redirects=False)
    assert response.status_code == 303, response.text
