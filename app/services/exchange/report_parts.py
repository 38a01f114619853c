"""The full report laid out part by part: the front matter and the back matter by WeasyPrint
(HTML from the report template), the scenarios a slice at a time by fpdf2 (report_pages.py).
Each part is written to a file of its own, so the memory a build needs is that of its largest
part, not of the whole report; the parts are then joined and every page stamped "page n of N"
(N is known only then).

WeasyPrint costs 0.1-0.25 CPU seconds per scenario whatever the markup and its memory grows
with the document (1,000 scenarios as one document: 2.8 GB); fpdf2 draws a scenario in about
0.03 s (DEVELOPERS.md, "PDF report").
"""

from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import Future, ProcessPoolExecutor
from dataclasses import dataclass, replace
from multiprocessing import get_context
from pathlib import Path
from typing import Any

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
from app.services.exchange.report_layout import exit_with_parent, html_to_pdf_file
from app.services.exchange.report_pages import write_scenario_pages
from app.services.exchange.report_scenarios import Words, printed_part

PART_SCENARIOS = 100
"""Scenarios drawn in one part (fpdf2, report_pages.py): a part costs about half a CPU second
to start (fonts) and 0.03 s per scenario, and holds its pages until written; 100 keep the
start-up small, the memory low and the progress moving (measured, DEVELOPERS.md)."""

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
    """The front or back part as an HTML document of its own (the report's template, this
    part only)."""
    return env.get_template(REPORT_TEMPLATE).render(report=report, picture=report.picture,
                                                     part=part)


HANDED_SHARE = 3
"""The spawned process lays out the front and back matter, then the last third of the scenario
parts (1/HANDED_SHARE): the matter costs it about what a third of the scenarios cost the
worker, so both finish near the same time (measured, DEVELOPERS.md "Laid out in parts")."""

LayoutJob = tuple[Callable[[Any, Path], object], Any]
"""What lays one part out into its file, and what it is given: HTML for WeasyPrint (front and
back), a PrintedPart for the scenario pages (report_pages.py)."""


def layout_jobs(report: Report, parts: Sequence[ReportPart], *, env: Environment,
                matter: bool = True) -> Iterator[LayoutJob]:
    """Each part's layout job, in page order, made one at a time (so only the part being laid
    out is held as words); without `matter`, the parts of scenarios only."""
    words = Words.of(env)
    first = True
    for part in parts:
        if part.section != "scenarios":
            if matter:
                yield html_to_pdf_file, part_html(report, part, env=env)
            continue
        yield write_scenario_pages, printed_part(report, part.nodes, words=words,
                                                 continued=part.continued, first=first)
        first = False


def build_report_pdf(report: Report, target: Path, *, env: Environment,
                     progress: PartProgress | None = None, workers: int = 1,
                     per_part: int = PART_SCENARIOS) -> int:
    """Lay the report out part by part into `target`; the number of pages. With `workers`
    above 1, that many processes lay parts out side by side (each part's input is made here)."""
    parts = split_report(report, per_part)
    files = [target.with_name(f"{target.stem}.part{n:04d}.pdf") for n in range(len(parts))]
    tell = progress or _silent
    try:
        if workers > 1:
            _lay_out_in_processes(report, parts, files, env=env, progress=tell,
                                  workers=workers)
        else:
            jobs = layout_jobs(report, parts, env=env)
            for number, ((lay_out, given), file) in enumerate(zip(jobs, files, strict=True)):
                tell(number, len(parts), parts[number].label)
                lay_out(given, file)
        tell(len(parts), len(parts), "joining the parts")
        return join_parts(files, target)
    finally:
        for file in files:
            file.unlink(missing_ok=True)


def _silent(_done: int, _total: int, _label: str) -> None:
    return None


def _lay_out_in_processes(report: Report, parts: list[ReportPart], files: list[Path], *,
                          env: Environment, progress: PartProgress, workers: int) -> None:
    """The front and back matter (WeasyPrint) and the last scenario parts go to `workers - 1`
    spawned processes while this one draws the other scenario parts (fpdf2): one process
    fewer holding its own memory (DEVELOPERS.md, "Laid out in parts"). Progress counts the
    parts finished."""
    done = 0

    def finished(label: str) -> None:
        nonlocal done
        done += 1
        if done < len(parts):  # after the last, the caller says "joining the parts"
            progress(done, len(parts), label)

    # spawn, not fork: a fresh interpreter holds no copy of this one's study tree; each
    # process exits when this one dies (report_layout.exit_with_parent).
    drawn = [n for n, part in enumerate(parts) if part.section == "scenarios"]
    jobs = dict(zip(drawn, layout_jobs(report, parts, env=env, matter=False), strict=True))
    handed = set(drawn[len(drawn) - len(drawn) // HANDED_SHARE:])
    with ProcessPoolExecutor(max_workers=workers - 1, mp_context=get_context("spawn"),
                             initializer=exit_with_parent) as pool:
        matter = [n for n, part in enumerate(parts) if part.section != "scenarios"]
        pending: list[Future[object]] = [
            pool.submit(html_to_pdf_file, part_html(report, parts[n], env=env), files[n])
            for n in reversed(matter)]
        for number in sorted(handed):
            lay_out, given = jobs.pop(number)
            pending.append(pool.submit(lay_out, given, files[number]))
        progress(0, len(parts), parts[-1].label)
        for number, (lay_out, given) in jobs.items():
            lay_out(given, files[number])
            finished(parts[number].label)
        for future in pending:
            future.result()
            finished("joining the parts")


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
