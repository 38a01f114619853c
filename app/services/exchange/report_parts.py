"""The full report laid out part by part: the front matter, the scenarios a slice at a time, the
back matter. Each part is its own WeasyPrint document, written to a file and dropped before the
next, so the memory a build needs is that of its largest part, not of the whole report; the
parts are then joined and every page stamped "page n of N" (N is known only then).

WeasyPrint's time grows with the boxes it lays out and its memory with the whole document:
a 1,000-scenario study laid out as one document held 2.8 GB (DEVELOPERS.md, "PDF report").
"""

from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, replace
from multiprocessing import get_context
from pathlib import Path

from jinja2 import Environment
from pypdf import PdfReader, PdfWriter
from pypdf.generic import (
    ArrayObject,
    DecodedStreamObject,
    DictionaryObject,
    IndirectObject,
    NameObject,
    PdfObject,
)

from app.services.exchange.report import REPORT_TEMPLATE, Report, ReportNode
from app.services.exchange.report_layout import html_to_pdf_file

PART_SCENARIOS = 30
"""Scenarios laid out in one part: small enough that a part's boxes stay a few hundred MB,
large enough that the pages a part leaves half empty stay few (measured, DEVELOPERS.md)."""

PartProgress = Callable[[int, int, str], None]
"""Told (parts done, parts in all, what is being laid out now) as the build goes."""


@dataclass(frozen=True)
class ReportPart:
    """One part laid out on its own: 'front', 'scenarios' (some nodes' scenarios; `continued`
    when it goes on with the node the previous part ended in) or 'back'."""

    section: str
    label: str
    nodes: tuple[ReportNode, ...] = ()
    continued: bool = False


def split_report(report: Report, per_part: int = PART_SCENARIOS) -> list[ReportPart]:
    """The report's parts in page order; every part of scenarios holds at most `per_part`."""
    parts = [ReportPart("front", "cover, criteria and attendance")]
    parts.extend(_scenario_parts(report.nodes, per_part))
    parts.append(ReportPart("back", "risk picture, actions, added functions and checks"))
    return parts


def _scenario_slices(nodes: Sequence[ReportNode], per_part: int) -> Iterator[ReportNode]:
    """Each node, cut into pieces of at most `per_part` scenarios."""
    for node in nodes:
        for start in range(0, max(len(node.scenarios), 1), per_part):
            yield replace(node, scenarios=node.scenarios[start:start + per_part])


def _scenario_parts(nodes: Sequence[ReportNode], per_part: int) -> list[ReportPart]:
    parts: list[ReportPart] = []
    batch: list[ReportNode] = []
    continued = False
    for piece in _scenario_slices(nodes, per_part):
        if batch and sum(len(n.scenarios) for n in batch) + len(piece.scenarios) > per_part:
            parts.append(_scenarios_part(batch, continued))
            continued = batch[-1].node.id == piece.node.id
            batch = []
        batch.append(piece)
    if batch or not parts:
        parts.append(_scenarios_part(batch, continued))
    return parts


def _scenarios_part(batch: list[ReportNode], continued: bool) -> ReportPart:
    refs = [entry.ref for node in batch for entry in node.scenarios]
    label = f"scenarios {refs[0]} to {refs[-1]}" if refs else "scenarios"
    return ReportPart("scenarios", label, tuple(batch), continued)


def part_html(report: Report, part: ReportPart, *, env: Environment) -> str:
    """One part as an HTML document of its own (the report's template, this part only)."""
    return env.get_template(REPORT_TEMPLATE).render(report=report, picture=report.picture,
                                                     part=part)


def build_report_pdf(report: Report, target: Path, *, env: Environment,
                     progress: PartProgress | None = None, workers: int = 1,
                     per_part: int = PART_SCENARIOS) -> int:
    """Lay the report out part by part into `target`; the number of pages. With `workers`
    above 1, that many processes lay parts out side by side (each part's HTML is made here)."""
    parts = split_report(report, per_part)
    files = [target.with_name(f"{target.stem}.part{n:04d}.pdf") for n in range(len(parts))]
    tell = progress or _silent
    try:
        if workers > 1:
            _lay_out_in_processes(report, parts, files, env=env, progress=tell,
                                  workers=workers)
        else:
            for number, (part, file) in enumerate(zip(parts, files, strict=True)):
                tell(number, len(parts), part.label)
                html_to_pdf_file(part_html(report, part, env=env), file)
        tell(len(parts), len(parts), "joining the parts")
        return join_parts(files, target)
    finally:
        for file in files:
            file.unlink(missing_ok=True)


def _silent(_done: int, _total: int, _label: str) -> None:
    return None


def _lay_out_in_processes(report: Report, parts: list[ReportPart], files: list[Path], *,
                          env: Environment, progress: PartProgress, workers: int) -> None:
    # spawn, not fork: a fresh interpreter holds no copy of this one's study tree.
    with ProcessPoolExecutor(max_workers=workers, mp_context=get_context("spawn")) as pool:
        pending = [pool.submit(html_to_pdf_file, part_html(report, part, env=env), file)
                   for part, file in zip(parts, files, strict=True)]
        for number, future in enumerate(pending):
            progress(number, len(parts), parts[number].label)
            future.result()


def join_parts(files: Sequence[Path], target: Path) -> int:
    """Join the parts' PDFs into `target`, stamp each page "page n of N"; N."""
    writer = PdfWriter()
    for file in files:
        writer.append(PdfReader(file))
    stamp_page_numbers(writer)
    first = PdfReader(files[0]).metadata if files else None
    if first is not None:
        writer.add_metadata({key: str(value) for key, value in first.items()})
    with target.open("wb") as out:
        writer.write(out)
    return len(writer.pages)


# Where the page number goes: the bottom-right of the report's page box (_report.css: A4, right
# margin 14 mm, bottom margin 34 mm with the footer aligned to its top), 7.5 pt grey.
_POINTS_PER_MM = 72 / 25.4
_RIGHT_EDGE = (210 - 14) * _POINTS_PER_MM
_BASELINE = 34 * _POINTS_PER_MM - 7.5
_FONT_SIZE = 7.5
_FONT_NAME = "/TallyroomPageNumber"
# Helvetica's advance widths (one of the PDF's 14 standard fonts, so nothing is embedded), in
# thousandths of the font size, for the characters "page n of N" uses (Adobe's AFM file).
_HELVETICA_WIDTHS = {**dict.fromkeys("0123456789paego", 556), " ": 278, "f": 278}


def page_label(number: int, count: int) -> str:
    """The text stamped on a page."""
    return f"page {number} of {count}"


def _text_width(text: str) -> float:
    return sum(_HELVETICA_WIDTHS[c] for c in text) * _FONT_SIZE / 1000


def _stamp(writer: PdfWriter, text: str) -> IndirectObject:
    x = _RIGHT_EDGE - _text_width(text)
    stream = DecodedStreamObject()
    stream.set_data(f"q 0.353 0.392 0.439 rg BT {_FONT_NAME} {_FONT_SIZE} Tf "
                    f"1 0 0 1 {x:.2f} {_BASELINE:.2f} Tm ({text}) Tj ET Q".encode("ascii"))
    return writer._add_object(stream)


def _content_list(contents: PdfObject | None) -> list[PdfObject]:
    if contents is None:
        return []
    resolved = contents.get_object()
    return list(resolved) if isinstance(resolved, ArrayObject) else [contents]


def stamp_page_numbers(writer: PdfWriter) -> None:
    """Add "page n of N" to every page: an extra content stream after the page's own, which
    is wrapped in q … Q so nothing it leaves set (the flipped axis, a colour) carries over."""
    font = writer._add_object(DictionaryObject({
        NameObject("/Type"): NameObject("/Font"), NameObject("/Subtype"): NameObject("/Type1"),
        NameObject("/BaseFont"): NameObject("/Helvetica"),
        NameObject("/Encoding"): NameObject("/WinAnsiEncoding")}))
    save, restore = (_raw_stream(writer, b"q\n"), _raw_stream(writer, b"\nQ\n"))
    count = len(writer.pages)
    for number, page in enumerate(writer.pages, 1):
        own = _content_list(page.get("/Contents"))
        page[NameObject("/Contents")] = ArrayObject(
            [save, *own, restore, _stamp(writer, page_label(number, count))])
        _font_resources(page)[NameObject(_FONT_NAME)] = font


def _raw_stream(writer: PdfWriter, data: bytes) -> IndirectObject:
    stream = DecodedStreamObject()
    stream.set_data(data)
    return writer._add_object(stream)


def _font_resources(page: DictionaryObject) -> DictionaryObject:
    if "/Resources" not in page:
        page[NameObject("/Resources")] = DictionaryObject()
    resources = page["/Resources"].get_object()
    assert isinstance(resources, DictionaryObject)
    if "/Font" not in resources:
        resources[NameObject("/Font")] = DictionaryObject()
    fonts = resources["/Font"].get_object()
    assert isinstance(fonts, DictionaryObject)
    return fonts
