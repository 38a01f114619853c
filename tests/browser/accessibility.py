"""What the accessibility browser tests measure in a page: axe-core's verdict, contrast from
computed styles, horizontal overflow. Loaded only by the tests; users never get axe-core.

Sources: WCAG 2.1 (W3C Recommendation, 2018), 1.4.3 contrast (minimum) 4.5:1 for text,
1.4.10 reflow at 320 CSS px, 1.4.11 non-text contrast 3:1 (a focus indicator is a user
interface component's state); the relative-luminance and contrast-ratio formulas are the
ones WCAG 2.1 defines under "relative luminance" and "contrast ratio".
"""

import gzip
from pathlib import Path
from typing import Any

from playwright.sync_api import Page

AXE_VERSION = "4.14.1"
AXE = Path(__file__).parent / "vendor" / f"axe-core-{AXE_VERSION}.min.js.gz"
# The WCAG 2.0/2.1/2.2 A and AA rule tags axe-core 4.x knows (axe-core docs, "axe-core tags").
WCAG_TAGS = ["wcag2a", "wcag2aa", "wcag21a", "wcag21aa", "wcag22aa"]

_RUN_AXE = """async (tags) => {
  const result = await axe.run(document, {runOnly: {type: 'tag', values: tags},
                                          resultTypes: ['violations']});
  return result.violations.map(v => v.id + ': ' + v.help + ' -> ' +
    v.nodes.slice(0, 4).map(n => n.target.join(' ') + ' ' + n.failureSummary
      .replace(/\\s+/g, ' ')).join(' | '));
}"""


def axe_violations(page: Page) -> list[str]:
    """Run axe-core on the page as it is now; one line per violated rule (empty when clean).

    The script is evaluated through the DevTools protocol, which the app's
    Content-Security-Policy (script-src 'self') does not govern, so the app is tested as served."""
    if not page.evaluate("typeof window.axe !== 'undefined'"):
        page.evaluate(gzip.decompress(AXE.read_bytes()).decode("utf-8") + "\n;undefined")
    found: list[str] = page.evaluate(_RUN_AXE, WCAG_TAGS)
    return found


def relative_luminance(rgb: tuple[float, float, float]) -> float:
    """WCAG 2.1 relative luminance of an sRGB colour given as 0..255 channels."""
    def linear(channel: float) -> float:
        c = channel / 255
        return c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4
    r, g, b = (linear(c) for c in rgb)
    return 0.2126 * r + 0.7152 * g + 0.0722 * b


def contrast_ratio(one: tuple[float, float, float], other: tuple[float, float, float]) -> float:
    """WCAG 2.1 contrast ratio (L1 + 0.05) / (L2 + 0.05), lighter over darker."""
    high, low = sorted((relative_luminance(one), relative_luminance(other)), reverse=True)
    return (high + 0.05) / (low + 0.05)


# The focused element's outline colour and the first opaque background behind it, read from
# computed styles (walking up from the element's parent, since the ring sits outside it).
_FOCUS_COLOURS = """() => {
  const el = document.activeElement;
  const parse = (text) => (text.match(/[\\d.]+/g) || []).map(Number);
  const style = getComputedStyle(el);
  let node = el.parentElement, background = [255, 255, 255];
  while (node) {
    const c = parse(getComputedStyle(node).backgroundColor);
    if (c.length === 3 || (c.length === 4 && c[3] > 0.99)) { background = c.slice(0, 3); break; }
    node = node.parentElement;
  }
  return {outline: parse(style.outlineColor).slice(0, 3), width: parseFloat(style.outlineWidth),
          outlineStyle: style.outlineStyle, background: background,
          id: el.id || el.className || el.tagName};
}"""


def focus_ring(page: Page) -> dict[str, Any]:
    """The focused element's ring: colour, width, style and the background behind it."""
    found: dict[str, Any] = page.evaluate(_FOCUS_COLOURS)
    return found


def horizontal_overflow(page: Page) -> int:
    """How many CSS pixels the page scrolls sideways (0 when everything reflows)."""
    overflow: int = page.evaluate(
        "() => document.documentElement.scrollWidth - document.documentElement.clientWidth")
    return overflow
