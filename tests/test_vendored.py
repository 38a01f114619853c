"""The one vendored file is the version the README and static/vendor/README.md name."""

import hashlib

from app.settings import PROJECT_ROOT

HTMX = PROJECT_ROOT / "static" / "vendor" / "htmx-2.0.11.min.js"
# sha256 of htmx.org 2.0.11 package/dist/htmx.min.js from the npm registry.
HTMX_SHA256 = "d6fdc75f204e6bdefa99b69bf1e6d4ac69b8a364f77929f45c13476b4000f717"


def test_vendored_htmx_is_the_pinned_release() -> None:
    assert hashlib.sha256(HTMX.read_bytes()).hexdigest() == HTMX_SHA256


def test_vendored_htmx_keeps_its_licence_beside_it() -> None:
    assert "Zero-Clause BSD" in (HTMX.parent / "htmx-2.0.11.LICENSE").read_text()
