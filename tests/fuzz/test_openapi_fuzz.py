"""Schemathesis over the app's own OpenAPI document: no operation answers with a server error.

Seeded (derandomize) and bounded (max_examples per operation) so the run takes a fixed time.
Each case is sent by the loopback facilitator's client (session cookie and CSRF token), so
writes reach their routes instead of stopping at the access layer's 403; the test counts how
many did. Path ids are mostly steered onto rows of the demo study so requests reach the
services instead of stopping at 404; the rest keep the generated (often impossible) values.
"""

from collections import Counter
from typing import Any

import pytest
import requests
import schemathesis
from fastapi.testclient import TestClient
from hypothesis import HealthCheck, settings
from schemathesis.checks import not_a_server_error

from app.main import create_app
from tests.helpers import TEST_AUTHOR
from tests.security.sessions import install_local_session

EXAMPLES_PER_OPERATION = 20
BASE_URL = "http://testserver"

# The document only: building it touches no database (the fixture `fuzz_study_id` migrates
# the test database and loads the demo before the first call).
schema = schemathesis.openapi.from_dict(create_app().openapi())
REFUSED_BY_ACCESS: dict[str, int] = {}
STATUSES: Counter[int] = Counter()
# Operations that end the caller's session or every other one (then its token is stale).
ENDS_SESSIONS = {"POST /sign-out", "POST /access/sessions"}


def _steer_ids(case: schemathesis.Case, study_id: int) -> None:
    """Point most generated ids at demo rows (small ids); keep negatives and huge ones."""
    for name, value in (case.path_parameters or {}).items():
        if isinstance(value, int) and value >= 0 and value % 4:
            case.path_parameters[name] = study_id if name == "study_id" else value % 40 + 1


def _httpx_arguments(case: schemathesis.Case) -> dict[str, Any]:
    """The case as arguments for the test client: schemathesis serialises for `requests`, so
    `requests` encodes the body (form, multipart, JSON) and the client sends the bytes."""
    sent = case.as_transport_kwargs(base_url=BASE_URL)
    sent.pop("cookies", None)  # the app reads no generated cookie; the session's stays
    sent.pop("auth", None)
    prepared = requests.Request(**sent).prepare()
    headers = {name: value for name, value in prepared.headers.items()
               if name.lower() not in ("content-length", "cookie")}
    body = prepared.body.encode() if isinstance(prepared.body, str) else prepared.body
    return {"method": prepared.method, "url": prepared.url, "headers": headers,
            "content": body or b"", "follow_redirects": False}


@schema.parametrize()
@settings(max_examples=EXAMPLES_PER_OPERATION, deadline=None, derandomize=True, database=None,
          suppress_health_check=list(HealthCheck))
def test_no_operation_answers_with_a_server_error(
    case: schemathesis.Case, fuzz_client: TestClient, fuzz_study_id: int
) -> None:
    _steer_ids(case, fuzz_study_id)
    response = fuzz_client.request(**_httpx_arguments(case))
    STATUSES[response.status_code] += 1
    if response.status_code in (401, 403):
        REFUSED_BY_ACCESS[case.operation.label] = REFUSED_BY_ACCESS.get(
            case.operation.label, 0) + 1
    if case.operation.label in ENDS_SESSIONS:
        install_local_session(fuzz_client, TEST_AUTHOR)  # sign in again for the next case
    case.validate_response(response, checks=[not_a_server_error])


@pytest.fixture(scope="module", autouse=True)
def _no_operation_only_refused(fuzz_client: TestClient) -> Any:
    """After the run: the access layer let the facilitator's requests through."""
    yield
    print(f"\nschemathesis: {STATUSES.total()} requests, by status {sorted(STATUSES.items())}")
    assert not REFUSED_BY_ACCESS, f"refused by the access layer: {REFUSED_BY_ACCESS}"
