"""Random form posts to every write route find no server error (5xx).

Each example picks a POST route of the app, fills its path ids (mostly rows of the demo study,
sometimes impossible ids), and posts a form of field names the app uses with random text:
control characters, NUL, bidirectional marks, Unicode digits, numbers past 2**63, text longer
than any column. Seeded (derandomize) and bounded by max_examples so the suite's time is fixed.
The posts come from the loopback facilitator with the session's CSRF token, so they reach the
routes; a 401 or 403 fails the test as surely as a 5xx.
"""

import re
from collections import Counter
from dataclasses import fields

from fastapi import FastAPI
from fastapi.testclient import TestClient
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from sqlmodel import SQLModel

from app.db.ids import MAX_ROW_ID
from app.main import create_app
from app.services.risk.proof_test_form import ProofTestForm
from app.settings import PROJECT_ROOT
from tests.helpers import HX, TEST_AUTHOR
from tests.security.sessions import install_local_session

NASTY_TEXT = [
    "", " ", "\x00", "a\x00b", "\u202ereversed\u202c", "\u2067isolate\u2069",
    "\u0661\u0662", "\u00b2",
    str(MAX_ROW_ID), str(MAX_ROW_ID + 1), "-1", "0", "1e308", "1e-400", "nan", "inf", "-inf",
    "1 in 0", "0%", "yes", "9" * 400, "x" * 6000, "Ŝtefan 李 Ωμέγα", "<script>", "=1+1",
    "2024-02-30", "0001-01-01", "9999-12-31", "1:2", "1:\u0661", f"{MAX_ROW_ID + 1}:1",
]
ID_TEXT = ["0", "-1", "\u0661", "\u00b2", str(MAX_ROW_ID), str(MAX_ROW_ID + 1), "abc", "1.0"]


def _field_names() -> list[str]:
    """Every form field name the templates, the tables and the calculator use."""
    names = set()
    for path in (PROJECT_ROOT / "templates").rglob("*.html"):
        names |= set(re.findall(r'name="([a-z_]+)"', path.read_text(encoding="utf-8")))
    for table in SQLModel.metadata.sorted_tables:
        names |= {column.name for column in table.columns}
    names |= {f.name for f in fields(ProofTestForm)}
    names |= {"seq", "client", "signed_off_by", "label", "note", "day", "owner", "due_date",
              "status_reason", "expected_rrf", "role", "discipline", "company", "present"}
    return sorted(names)


def _post_routes(app: FastAPI) -> list[str]:
    """Every write path the app documents (included routers hide their routes' objects)."""
    return sorted(path for path, operations in app.openapi()["paths"].items()
                  if "post" in operations)


POST_ROUTES = _post_routes(create_app())
FIELD_NAMES = _field_names()
texts = st.one_of(st.sampled_from(NASTY_TEXT), st.text(max_size=40),
                  st.integers().map(str), st.floats().map(str))
forms = st.dictionaries(st.sampled_from(FIELD_NAMES), texts, max_size=8)
path_ids = st.one_of(st.integers(1, 60).map(str), st.sampled_from(ID_TEXT))
# Writes that end the caller's session or every other one: sign in again after them.
ENDS_SESSIONS = ("/sign-out", "/access/sessions")


@st.composite
def requests(draw: st.DrawFn, study_id: int) -> tuple[str, dict[str, str], bool]:
    """(url, form, sent by htmx) for one random write."""
    path = draw(st.sampled_from(POST_ROUTES))
    for name in re.findall(r"\{(\w+)\}", path):
        value = str(study_id) if name == "study_id" and draw(st.booleans()) else draw(path_ids)
        path = path.replace(f"{{{name}}}", value)
    return path, draw(forms), draw(st.booleans())


def test_random_form_posts_never_get_a_server_error(
    fuzz_client: TestClient, fuzz_study_id: int
) -> None:
    statuses: Counter[int] = Counter()

    @settings(max_examples=1500, deadline=None, derandomize=True, database=None,
              suppress_health_check=[HealthCheck.too_slow])
    @given(request=requests(fuzz_study_id))
    def post_one(request: tuple[str, dict[str, str], bool]) -> None:
        url, form, htmx = request
        response = fuzz_client.post(url, data=form, headers=HX if htmx else {},
                                    follow_redirects=False)
        statuses[response.status_code] += 1
        if url in ENDS_SESSIONS:
            install_local_session(fuzz_client, TEST_AUTHOR)
        assert response.status_code < 500, (url, form, response.status_code)
        assert response.status_code not in (401, 403), (url, form, response.text[:300])

    post_one()
    print(f"\nform fuzz: {statuses.total()} posts, by status {sorted(statuses.items())}")
