"""An HTTP client that gets what a browser gets: cookies, the page's CSRF token, htmx headers."""

import html
import math
import re
import time
from dataclasses import dataclass

import httpx

from app.services.study.bulk_results import no_cycle_collection

CSRF_META = re.compile(r'<meta\s+name="csrf-token"\s+content="([^"]*)"', re.IGNORECASE)
AUTHOR = "Bench runner (invented)"


@dataclass(frozen=True)
class Timed:
    """One request: seconds from sending to the last byte read, status and body size."""

    seconds: float
    status: int
    size: int
    text: str


class BrowserClient:
    """Keeps cookies and the newest CSRF token like a browser tab, and sends htmx's headers."""

    def __init__(self, base_url: str, timeout: float = 300.0) -> None:
        self.http = httpx.Client(base_url=base_url, timeout=timeout,
                                 cookies={"tallyroom_author": AUTHOR},
                                 headers={"User-Agent": "tallyroom-bench"})
        self.csrf_token = ""
        self.current_url = base_url

    def close(self) -> None:
        """Close the connection pool."""
        self.http.close()

    def open_page(self, path: str) -> Timed:
        """GET a full page as a navigation; remember its CSRF token if it has one."""
        timed = self._send("GET", path)
        found = CSRF_META.search(timed.text[:20_000])
        if found:
            self.csrf_token = found.group(1)
        self.current_url = str(self.http.base_url.join(path))
        return timed

    def get(self, path: str, htmx: bool = False) -> Timed:
        """GET without treating the answer as the page (a poll, a file, a fragment)."""
        return self._send("GET", path, headers=self._htmx_headers() if htmx else {})

    def post(self, path: str, data: dict[str, str], htmx: bool = True,
             hx: dict[str, str] | None = None) -> Timed:
        """POST a form as htmx (or a plain browser form) would, with the CSRF token."""
        headers = {**(self._htmx_headers() if htmx else {}), **(hx or {})}
        if self.csrf_token:
            headers["X-CSRF-Token"] = self.csrf_token
        return self._send("POST", path, data=data, headers=headers)

    def _htmx_headers(self) -> dict[str, str]:
        return {"HX-Request": "true", "HX-Current-URL": self.current_url}

    def _send(self, method: str, path: str, data: dict[str, str] | None = None,
              headers: dict[str, str] | None = None) -> Timed:
        # The client's own cycle collector paused while timing: a full pass over this
        # process's heap (the app's modules are imported here too) took 60-100 ms, and was
        # counted as the server's answer time (measured: one edit in ~150, at every size).
        with no_cycle_collection():
            start = time.perf_counter()
            response = self.http.request(method, path, data=data, headers=headers)
            body = response.content
            seconds = time.perf_counter() - start
        is_text = response.headers.get("content-type", "").startswith(("text/", "application/j"))
        text = body.decode("utf-8", "replace") if is_text else ""
        return Timed(seconds, response.status_code, len(body), text)


@dataclass
class FieldForm:
    """What the worksheet sends with a value field's keystroke besides the text: its row's
    version and the field's text as last saved (hidden inputs the page carries and each reply
    replaces out of band), so an edit takes the guarded path a scribe's browser takes."""

    row_key: str  # "step-12"
    field: str  # "value_text"
    version: str = ""
    original: str = ""

    def read(self, page: str) -> None:
        """Take the version and the original text from a page or a reply, where it has them."""
        self.version = _hidden_value(page, f"{self.row_key}-version") or self.version
        found = _hidden_value(page, f"{self.row_key}-{self.field}-orig")
        self.original = self.original if found is None else found

    def sent(self) -> dict[str, str]:
        """The hidden fields as htmx includes them."""
        return {"version": self.version, f"orig_{self.field}": self.original}


def _hidden_value(page: str, element_id: str) -> str | None:
    tag = re.search(rf'<input\b[^>]*\bid="{re.escape(element_id)}"[^>]*>', page)
    value = re.search(r'\bvalue="([^"]*)"', tag.group(0)) if tag else None
    return html.unescape(value.group(1)) if value else None


def percentile(values: list[float], share: float) -> float:
    """Nearest-rank percentile (share 0.5 = median, 0.99 = p99) of a non-empty list."""
    ordered = sorted(values)
    rank = max(1, math.ceil(share * len(ordered)))
    return ordered[rank - 1]
