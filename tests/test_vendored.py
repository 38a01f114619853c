"""Each vendored file is the version the README and its vendor README name."""

import gzip
import hashlib

from app.settings import PROJECT_ROOT

HTMX = PROJECT_ROOT / "static" / "vendor" / "htmx-2.0.11.min.js"
# sha256 of htmx.org 2.0.11 package/dist/htmx.min.js from the npm registry.
HTMX_SHA256 = "d6fdc75f204e6bdefa99b69bf1e6d4ac69b8a364f77929f45c13476b4000f717"


def test_vendored_htmx_is_the_pinned_release() -> None:
    assert hashlib.sha256(HTMX.read_bytes()).hexdigest() == HTMX_SHA256


def test_vendored_htmx_keeps_its_licence_beside_it() -> None:
    assert "Zero-Clause BSD" in (HTMX.parent / "htmx-2.0.11.LICENSE").read_text()


AXE = PROJECT_ROOT / "tests" / "browser" / "vendor" / "axe-core-4.14.1.min.js.gz"
# sha256 of axe-core 4.14.1 package/axe.min.js from the npm registry (`npm pack axe-core@4.14.1`).
AXE_SHA256 = "29348999450cdf2849a8e70b7912fc2da85a849da39c0d0d5394f51d4a9ed95c"


def test_vendored_axe_core_is_the_pinned_release() -> None:
    assert hashlib.sha256(gzip.decompress(AXE.read_bytes())).hexdigest() == AXE_SHA256


def test_vendored_axe_core_keeps_its_licence_beside_it_and_is_never_served() -> None:
    assert "Mozilla Public License, version 2.0" in (
        AXE.parent / "axe-core-4.14.1.LICENSE").read_text()
    assert not list((PROJECT_ROOT / "static").rglob("axe*"))
