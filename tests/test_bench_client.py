"""The benchmark's HTTP client sends what a browser tab would: cookies, CSRF token, htmx headers.

Checked against a stand-in server (httpx.MockTransport) that records each request.
"""

import httpx
import numpy

from bench.client import BrowserClient, FieldForm, percentile

PAGE = ('<html><head><meta name="csrf-token" content="token-42"></head>'
        '<body>invented page</body></html>')


def recording_client() -> tuple[BrowserClient, list[httpx.Request]]:
    """A client whose requests go to a stand-in that sets a session cookie on the page."""
    seen: list[httpx.Request] = []

    def answer(request: httpx.Request) -> httpx.Response:
        seen.append(request)
        if request.method == "GET":
            return httpx.Response(200, html=PAGE, headers={"Set-Cookie": "session=abc; Path=/"})
        return httpx.Response(200, text="ok")

    client = BrowserClient("http://bench.invalid")
    client.http = httpx.Client(base_url="http://bench.invalid", cookies=client.http.cookies,
                               transport=httpx.MockTransport(answer))
    return client, seen


def test_a_post_after_a_page_carries_its_csrf_token_cookies_and_htmx_headers() -> None:
    client, seen = recording_client()
    client.open_page("/studies/1/nodes/2")
    client.post("/studies/1/steps/3/value", {"value_text": "1 in 100"})
    post = seen[-1]
    assert post.headers["X-CSRF-Token"] == "token-42"
    assert post.headers["HX-Request"] == "true"
    assert post.headers["HX-Current-URL"] == "http://bench.invalid/studies/1/nodes/2"
    assert "session=abc" in post.headers["Cookie"]
    assert "tallyroom_author=" in post.headers["Cookie"]
    assert post.content == b"value_text=1+in+100"


def test_without_a_token_on_the_page_no_token_header_is_sent() -> None:
    client, seen = recording_client()
    client.post("/studies/1/revisions", {"label": "Rev A"}, htmx=False)
    assert "X-CSRF-Token" not in seen[-1].headers
    assert "HX-Request" not in seen[-1].headers


def test_percentiles_are_nearest_rank() -> None:
    values = [float(v) for v in range(1, 101)]  # 1 ... 100
    assert percentile(values, 0.5) == 50.0  # rank ceil(0.5 * 100) = 50
    assert percentile(values, 0.99) == 99.0  # rank ceil(0.99 * 100) = 99
    assert percentile([7.0, 3.0], 0.99) == 7.0  # rank ceil(1.98) = 2


def test_percentiles_agree_with_numpy_inverted_cdf() -> None:
    # numpy's "inverted_cdf" method is the nearest-rank definition (numpy.percentile docs).
    samples = [0.8, 12.5, 3.1, 3.1, 47.0, 9.9, 0.2, 15.0, 2.4, 6.6, 30.3]
    for share in (0.5, 0.9, 0.99):
        expected = float(numpy.percentile(samples, share * 100, method="inverted_cdf"))
        assert percentile(samples, share) == expected


def test_a_field_form_reads_the_page_then_each_reply_as_htmx_swaps_them_in() -> None:
    """The page writes id before name, a reply name before id; an unrelated row is ignored."""
    form = FieldForm("step-12", "value_text")
    form.read('<input type="hidden" id="step-120-version" name="version" value="9">'
              '<input type="hidden" id="step-12-version" name="version" value="3">'
              '<input type="hidden" name="orig_value_text" id="step-12-value_text-orig" '
              'value="1 in 10 &amp; rising">')
    assert form.sent() == {"version": "3", "orig_value_text": "1 in 10 & rising"}
    form.read('<span id="step-12-value_text-said">saved</span>'
              '<input type="hidden" name="version" id="step-12-version" value="4" '
              'hx-swap-oob="true">')  # a reply without the original keeps the last one
    assert form.sent() == {"version": "4", "orig_value_text": "1 in 10 & rising"}
