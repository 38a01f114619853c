"""No rebinding, no framing, no inline script: the Host allow-list and the response headers."""

import re

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session

from app.access.middleware import CONTENT_SECURITY_POLICY
from app.access.network import host_of
from app.access.redirects import same_site_location, same_site_path
from app.db.models import Study
from tests.helpers import HX


def assert_security_headers(headers: object) -> None:
    assert isinstance(headers, dict) or hasattr(headers, "get")
    csp = headers.get("content-security-policy", "")  # type: ignore[attr-defined]
    assert csp == CONTENT_SECURITY_POLICY
    assert "default-src 'self'" in csp and "script-src 'self';" in csp
    assert "frame-ancestors 'none'" in csp and "unsafe" not in csp
    assert headers.get("x-content-type-options") == "nosniff"  # type: ignore[attr-defined]
    assert headers.get("referrer-policy") == "same-origin"  # type: ignore[attr-defined]


@pytest.mark.parametrize("host", ["evil.example", "127.0.0.1.evil.example", "192.0.2.9",
                                  "localhost.", ""])
def test_a_request_for_another_host_name_gets_400_with_the_headers(
    client: TestClient, demo_study: Study, host: str
) -> None:
    response = client.get(f"/studies/{demo_study.id}", headers={"Host": host})
    assert response.status_code == 400
    assert "does not answer to the host name" in response.text
    assert demo_study.title not in response.text
    assert_security_headers(response.headers)


@pytest.mark.parametrize("host", ["localhost:8000", "127.0.0.1", "[::1]:8000", "LOCALHOST"])
def test_the_loopback_names_are_served(client: TestClient, host: str) -> None:
    assert client.get("/", headers={"Host": host}).status_code == 200


def test_host_names_are_read_without_port_and_case() -> None:
    assert host_of("Example.COM:8000") == "example.com"
    assert host_of("[::1]:8000") == "[::1]"
    assert host_of("10.0.0.5") == "10.0.0.5"


def test_headers_on_a_page_a_fragment_an_export_a_static_file_and_errors(
    client: TestClient, demo_study: Study
) -> None:
    study = demo_study.id
    responses = {
        "page": client.get(f"/studies/{study}"),
        "fragment": client.get(f"/studies/{study}/room/live?stamp=x", headers=HX),
        "export": client.get(f"/studies/{study}/export.csv"),
        "static": client.get("/static/app.js"),
        "not found": client.get("/studies/999999"),
        "refused": client.post(f"/studies/{study}/focus", headers={"X-CSRF-Token": "wrong"}),
    }
    assert [r.status_code for r in responses.values()] == [200, 200, 200, 200, 404, 403]
    for response in responses.values():
        assert_security_headers(response.headers)


def test_pages_carry_no_inline_script_or_handler_and_load_nothing_from_elsewhere(
    client: TestClient, demo_study: Study
) -> None:
    study = demo_study.id
    for path in ["/", f"/studies/{study}", f"/studies/{study}/worksheet", f"/studies/{study}/room",
                 f"/studies/{study}/actions", f"/studies/{study}/attendance", "/help/keys"]:
        page = client.get(path).text
        scripts = re.findall(r"<script\b([^>]*)>", page)
        assert scripts and all('src="http://testserver/static/' in s for s in scripts), path
        assert not re.search(r"\son[a-z]+=|javascript:|hx-vals=\"js:|hx-on", page), path
        assert not re.search(r"""(src|href)="(https?:)?//(?!testserver/)""", page), path


def test_the_api_docs_page_that_would_load_a_cdn_is_off_and_the_schema_stays(
    client: TestClient,
) -> None:
    assert client.get("/api/docs").status_code == 404
    assert client.get("/openapi.json").json()["info"]["title"] == "Tallyroom"


@pytest.mark.parametrize(("target", "expected"), [
    ("/studies/7?order=team#a", "/studies/7?order=team#a"),
    ("//evil.example/", "/"),
    ("/\\evil.example", "/"),
    ("https://evil.example/", "/"),
    ("javascript:alert(1)", "/"),
    ("/\t/evil.example", "/"),
    ("studies/7", "/"),
    ("", "/"),
])
def test_redirect_targets_are_same_site_paths_only(target: str, expected: str) -> None:
    assert same_site_path(target) == expected


def test_a_location_header_may_name_this_host_only() -> None:
    assert same_site_location("http://127.0.0.1:8000/x", "127.0.0.1:8000") == \
        "http://127.0.0.1:8000/x"
    assert same_site_location("http://evil.example/x", "127.0.0.1:8000") == "/"


def test_a_crafted_next_never_leaves_the_site(client: TestClient, session: Session) -> None:
    response = client.post("/author", data={"name": "X", "next": "/\\evil.example"},
                           follow_redirects=False)
    assert response.headers["location"] == "/"


def test_a_link_followed_from_another_site_reloads_from_this_site_keeping_the_session(
    client: TestClient, demo_study: Study
) -> None:
    before = dict(client.cookies)
    arrival = client.get(f"/studies/{demo_study.id}?tab=1",
                         headers={"Sec-Fetch-Site": "cross-site", "Sec-Fetch-Mode": "navigate"})
    assert arrival.status_code == 200
    assert f'content="0;url=/studies/{demo_study.id}?tab=1"' in arrival.text
    assert demo_study.title not in arrival.text
    assert "set-cookie" not in arrival.headers
    assert dict(client.cookies) == before
    assert_security_headers(arrival.headers)


def test_the_session_cookie_is_signed_http_only_and_same_site_strict(
    client: TestClient,
) -> None:
    client.cookies.clear()
    set_cookie = client.get("/").headers["set-cookie"]
    assert set_cookie.startswith("tallyroom_session=")
    assert "httponly" in set_cookie and "samesite=strict" in set_cookie
    value = set_cookie.split(";")[0].split("=", 1)[1]
    client.cookies.clear()
    client.cookies.set("tallyroom_session", value[:-2] + ("AA" if value[-2:] != "AA" else "BB"))
    assert client.get("/").headers["set-cookie"] != set_cookie  # a tampered cookie is ignored
