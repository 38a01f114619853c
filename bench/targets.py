"""Issue 14's targets, each figure's ratio to its target, and the table printed and saved."""

from collections.abc import Callable
from dataclasses import asdict, dataclass

Limit = Callable[[int], float | None]


def always(limit: float) -> Limit:
    """The same limit at every size."""
    return lambda _size: limit


def up_to(limit: float, largest: int = 10_000) -> Limit:
    """A limit the issue states for studies up to `largest` scenarios; larger ones are reported."""
    return lambda size: limit if size <= largest else None


def import_limit(size: int) -> float:
    """Import of 10,000 scenarios within 5 s, of 50,000 within 25 s."""
    return 5.0 if size <= 10_000 else 25.0


def report_only(_size: int) -> float | None:
    """No target: the figure is shown for context."""
    return None


@dataclass(frozen=True)
class Target:
    """One measured quantity; `aim` marks a goal beyond the target (shown, never FAIL)."""

    key: str
    label: str
    unit: str
    limit: Limit
    aim: bool = False
    yes_no: bool = False  # the figure is 1 (yes, PASS) or 0 (no, FAIL)


TARGETS = [
    Target("import_s", "import (tallyroom import, wall)", "s", import_limit),
    Target("import_peak_mb", "import peak memory", "MB", report_only),
    Target("trivial_p50_ms", "trivial request p50", "ms", report_only),
    Target("trivial_p99_ms", "trivial request p99", "ms", report_only),
    Target("edit_p50_ms", "value edit p50", "ms", report_only),
    Target("edit_p99_ms", "value edit p99", "ms", always(20.0)),
    Target("edit_vs_trivial_p99", "value edit p99 / trivial p99", "x", always(5.0)),
    Target("edit_vs_trivial_p50", "value edit p50 / trivial p50 (aim)", "x", always(2.0),
           aim=True),
    Target("node_typical_ms", "node page, typical node p50", "ms", always(100.0)),
    Target("node_typical_kb", "node page, typical node HTML", "KB", report_only),
    Target("node_large_ms", "node page, 500-scenario node p50", "ms", always(150.0)),
    Target("node_large_kb", "node page, 500-scenario node HTML", "KB", always(1000.0)),
    Target("room_poll_ms", "room poll, nothing changed p50", "ms", always(5.0)),
    Target("overview_ms", "overview p50", "ms", up_to(300.0)),
    Target("risk_ms", "risk picture p50", "ms", up_to(300.0)),
    Target("export_json_s", "JSON export", "s", up_to(1.0)),
    Target("export_json_mb", "JSON export size", "MB", report_only),
    Target("export_csv_s", "CSV export", "s", up_to(2.0)),
    Target("export_csv_mb", "CSV export size", "MB", report_only),
    Target("export_xlsx_s", "XLSX export", "s", up_to(8.0)),
    Target("export_xlsx_mb", "XLSX export size", "MB", report_only),
    Target("rss_warm_mb", "server memory after warm-up", "MB", report_only),
    Target("rss_exports_mb", "server memory after the exports", "MB", up_to(250.0)),
    Target("freeze_s", "freeze a revision", "s", up_to(1.0)),
    Target("freeze_again_s", "freeze a second revision after one edit", "s", up_to(1.0)),
    Target("export_json_frozen_mb", "JSON export with two revisions", "MB", report_only),
    Target("json_reimport_ok", "that JSON export imports back", "", always(1.0),
           yes_no=True),
    Target("pdf_s", "PDF report", "s", up_to(30.0, 1_000)),
    Target("rss_pdf_mb", "server memory after the PDF", "MB", up_to(500.0, 1_000)),
    Target("pdf_peak_mb", "PDF build peak memory (worker and layout process)", "MB",
           up_to(500.0, 1_000)),
    Target("pdf_pages", "PDF report pages", "", report_only),
]
BY_KEY = {target.key: target for target in TARGETS}
FLATNESS_LIMIT = 1.3  # an edit's p99 at any size within 1.3x of the smallest size's


@dataclass(frozen=True)
class Row:
    """One line of the table."""

    size: str
    key: str
    label: str
    figure: float | None
    unit: str
    target: float | None
    ratio: float | None
    result: str
    note: str = ""


def judge(size: int, key: str, figure: float | None, note: str = "",
          failed: bool = False) -> Row:
    """A figure against its target: PASS when at most the target, FAIL above it; no figure is
    SKIP, or FAIL when the app refused the work (`failed`)."""
    target = BY_KEY[key]
    limit = target.limit(size)
    if figure is None:
        return Row(f"{size:,}", key, target.label, None, target.unit, limit, None,
                   "FAIL" if failed else "SKIP", note)
    if limit is None:
        return Row(f"{size:,}", key, target.label, figure, target.unit, None, None, "info", note)
    if target.yes_no:
        return Row(f"{size:,}", key, target.label, figure, target.unit, limit, None,
                   "PASS" if figure == 1 else "FAIL", note)
    ratio = figure / limit
    passed = "PASS" if ratio <= 1 else ("above aim" if target.aim else "FAIL")
    if target.aim and ratio <= 1:
        passed = "aim met"
    return Row(f"{size:,}", key, target.label, figure, target.unit, limit, ratio, passed, note)


def flatness(rows: list[Row]) -> list[Row]:
    """Each larger size's edit p50 and p99 against the smallest size's: within 1.3x.

    The p50 is the steadier of the two on a busy machine; both must stay flat."""
    rows_out = []
    for percent in ("p50", "p99"):
        by_size = {int(row.size.replace(",", "")): row.figure for row in rows
                   if row.key == f"edit_{percent}_ms" and row.figure is not None}
        if len(by_size) < 2:
            continue
        smallest = min(by_size)
        for size in sorted(by_size)[1:]:
            ratio = by_size[size] / by_size[smallest]
            rows_out.append(Row(f"{size:,} vs {smallest:,}", f"edit_flatness_{percent}",
                                f"value edit {percent} / smallest study's", ratio, "x",
                                FLATNESS_LIMIT, ratio / FLATNESS_LIMIT,
                                "PASS" if ratio <= FLATNESS_LIMIT else "FAIL"))
    return rows_out


def _number(value: float | None) -> str:
    if value is None:
        return "—"
    if value >= 100:
        return f"{value:,.0f}"
    return f"{value:.3g}" if value >= 0.01 else f"{value:.2g}"


def as_table(rows: list[Row]) -> str:
    """A Markdown table: figure, target, ratio and result (notes under it)."""
    lines = ["| size | measure | figure | target | ratio | result |",
             "|---|---|---|---|---|---|"]
    for row in rows:
        figure, target = _figure(row), _target(row)
        ratio = f"{row.ratio:.2f}" if row.ratio is not None else "—"
        note = f" ({row.note})" if row.note else ""
        lines.append(f"| {row.size} | {row.label} | {figure} | {target} | {ratio} | "
                     f"{row.result}{note} |")
    return "\n".join(lines)


def as_pivot(rows: list[Row]) -> str:
    """One line per measure, one column per size: figure and result (the README's table)."""
    sizes = list(dict.fromkeys(row.size for row in rows
                               if not row.key.startswith("edit_flatness")))
    cells: dict[str, dict[str, str]] = {}
    targets: dict[str, dict[str, str]] = {}
    for row in rows:
        flat = row.key.startswith("edit_flatness")
        label = f"{row.label}, {row.size}" if flat else row.label
        column = sizes[-1] if flat and sizes else row.size
        verdict = {"info": "", "SKIP": "skipped"}.get(row.result, row.result)
        cells.setdefault(label, {})[column] = f"{_figure(row)} {verdict}".strip()
        targets.setdefault(label, {})[column] = _target(row)
    lines = ["| measure | target | " + " | ".join(sizes) + " |",
             "|---|---|" + "---|" * len(sizes)]
    for label, by_size in cells.items():
        shown = [by_size.get(size, "") for size in sizes]
        limits = list(dict.fromkeys(targets[label].values()))
        target = limits[0] if len(limits) == 1 else " / ".join(
            targets[label].get(size, "—") for size in sizes)
        lines.append(f"| {label} | {target} | " + " | ".join(shown) + " |")
    return "\n".join(lines)


def _figure(row: Row) -> str:
    if row.figure is None:
        return "—"
    if BY_KEY.get(row.key) and BY_KEY[row.key].yes_no:
        return "yes" if row.figure == 1 else "no"
    return _number(row.figure) + (f" {row.unit}" if row.unit else "")


def _target(row: Row) -> str:
    if row.target is None:
        return "—"
    if BY_KEY.get(row.key) and BY_KEY[row.key].yes_no:
        return "yes"
    return f"≤ {_number(row.target)}" + (f" {row.unit}" if row.unit else "")


def as_json_rows(rows: list[Row]) -> list[dict[str, object]]:
    """The rows as plain dictionaries for the JSON file."""
    return [asdict(row) for row in rows]
