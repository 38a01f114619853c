"""The one check on where a redirect may send the browser: same-site paths only."""

from urllib.parse import urlsplit


def same_site_path(target: str, fallback: str = "/") -> str:
    """`target` when it is a path on this site ('/studies/7?x=1#a'), otherwise `fallback`."""
    # '//host' and '/\\host' are read by browsers as another site; control characters are
    # stripped by browsers before parsing, so they could hide either.
    if not target.startswith("/") or target[1:2] in ("/", "\\"):
        return fallback
    if any(ord(ch) < 0x20 or ch == "\x7f" for ch in target):
        return fallback
    parts = urlsplit(target)
    return fallback if parts.scheme or parts.netloc else target


def same_site_location(location: str, host: str) -> str:
    """A Location header kept when it stays on `host`, otherwise the site's front page."""
    parts = urlsplit(location)
    if parts.scheme in ("http", "https") and parts.netloc.lower() == host.lower():
        return location
    return same_site_path(location)
