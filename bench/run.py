"""`make bench`: generate, import, serve and measure each size; print and save the table.

Environment:
  BENCH_SIZES           comma-separated scenario counts (default 1000,10000,50000)
  BENCH_BUDGET_SECONDS  wall-clock budget for the whole run (default 570); a measurement whose
                        predicted time (scaled from the previous size) does not fit is skipped
                        and the table says so
  BENCH_EDITS           most value edits per size (default 300: the p99 is then the fourth
                        slowest of 300, not the second of 100, so one rare pause moves it less)
  BENCH_PDF             1 to also time the PDF report (studies up to 1,000 scenarios, capped)
  BENCH_OUT             where to write the JSON (default bench/results/latest.json)
  BENCH_ONLY            comma-separated groups to measure after the import (default all):
                        edits, pages, exports, freeze, pdf; e.g. BENCH_ONLY=edits while
                        working on the edit path
"""

import json
import os
import platform
import re
import subprocess
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

from app.services.exchange.report_jobs import REPORTS_FOLDER_NAME, read_job
from bench import generate
from bench.client import BrowserClient, FieldForm, Timed, percentile
from bench.server import (
    ROOT,
    TRIVIAL_PATH,
    Imported,
    Landmarks,
    Server,
    find_landmarks,
    import_study,
    import_without_size_limit,
    migrate,
    stored_value_text,
)
from bench.targets import Row, as_json_rows, as_pivot, as_table, flatness, judge

DEFAULT_SIZES = (1_000, 10_000, 50_000)
GROUPS = ("edits", "pages", "exports", "freeze", "pdf")
RESERVE_SECONDS = 20.0  # kept for stopping the server and writing the table
WARM_UP_EDITS = 3


class Budget:
    """The run's deadline, and predictions of a measurement's cost from the size before."""

    def __init__(self, seconds: float) -> None:
        self.deadline = time.monotonic() + seconds
        self.seen: dict[str, tuple[int, float]] = {}

    def remaining(self) -> float:
        """Seconds left before the reserve."""
        return self.deadline - time.monotonic() - RESERVE_SECONDS

    def predict(self, name: str, size: int) -> float:
        """Seconds `name` should take at `size`, scaled linearly from its last measurement."""
        last = self.seen.get(name)
        return last[1] * size / last[0] if last else 0.0

    def fits(self, name: str, size: int) -> bool:
        """True when the predicted cost fits in what is left."""
        return self.predict(name, size) < self.remaining()

    def record(self, name: str, size: int, seconds: float) -> None:
        """Remember what `name` cost at `size`."""
        self.seen[name] = (size, seconds)


def sample(send: Callable[[], Timed], most: int, cap_seconds: float, budget: Budget,
           least: int = 3) -> list[Timed]:
    """Repeat a request up to `most` times, stopping after `cap_seconds` once `least` ran."""
    results: list[Timed] = []
    start = time.monotonic()
    while len(results) < most:
        spent = time.monotonic() - start
        if results and ((spent > cap_seconds and len(results) >= least) or
                        results[-1].seconds > budget.remaining()):
            break
        results.append(send())
    return results


def ms(values: list[float], share: float) -> float:
    """A percentile of seconds, in milliseconds."""
    return percentile(values, share) * 1000


class SizeRun:
    """Everything measured on one study size, against one server."""

    def __init__(self, size: int, budget: Budget, work: Path) -> None:
        self.size, self.budget, self.work = size, budget, work
        self.rows: list[Row] = []
        self.database = work / f"bench-{size}.db"

    def add(self, key: str, figure: float | None, note: str = "", failed: bool = False) -> None:
        """Judge one figure and keep its row."""
        self.rows.append(judge(self.size, key, figure, note, failed))
        shown = ("failed" if failed else "skipped") if figure is None else f"{figure:.4g}"
        print(f"  {key:<24} {shown} {note}", flush=True)

    def prepare(self) -> tuple[Path, int] | None:
        """Generate, migrate and import; the database and the study id, or None if skipped."""
        study_file = self.work / f"study-{self.size}.json"
        study_file.write_text(generate.study_text(self.size), encoding="utf-8")
        database = self.database
        migrate(database, self.work / "migrate.log")
        done = import_study(database, study_file, self.work / f"import-{self.size}.log")
        self.add("import_s", done.seconds if done.returncode == 0 else None,
                 "" if done.returncode == 0 else refusal(done), failed=done.returncode != 0)
        if done.returncode == 0:
            self.add("import_peak_mb", done.peak_mb)
        else:
            done = import_without_size_limit(database, study_file, self.work / "unlimited.log")
            self.add("import_peak_mb", done.peak_mb,
                     f"imported without the size check in {done.seconds:.1f} s")
        self.budget.record("import", self.size, done.seconds)
        return (database, done.study_id) if done.study_id else None

    def measure(self, server: Server, study_id: int, marks: Landmarks) -> None:
        """Every figure on a served study, the slow ones only while the budget allows."""
        client = BrowserClient(server.base_url)
        chosen = chosen_groups()
        try:
            study = f"/studies/{study_id}"
            if "edits" in chosen:
                self.measure_edits(client, study, marks)
            if "pages" in chosen:
                self.measure_pages(client, study, marks)
            self.add("rss_warm_mb", server.rss_mb())
            if "exports" in chosen:
                self.measure_exports(client, study)
                self.add("rss_exports_mb", server.rss_mb())
            if "freeze" in chosen:
                self.measure_freeze(client, study, marks)
            if "pdf" in chosen:
                self.measure_pdf(client, study, server)
        finally:
            client.close()

    def measure_edits(self, client: BrowserClient, study: str, marks: Landmarks) -> None:
        """Value edits as htmx sends them, each after a trivial request on the same server."""
        # The scribe's page first and the scenario opened in it, as a scribe opens them before
        # typing; each keystroke sends the row's version and the field's saved text as the
        # page does, taken from the opened row and then from each reply (the guarded save a
        # browser's edit takes).
        client.open_page(f"{study}/nodes/{marks.typical_node}")
        opened = client.get(f"{study}/scenarios/{marks.edit_scenario}/open", htmx=True)
        form = FieldForm(f"step-{marks.edit_step}", "value_text")
        form.read(opened.text)
        path = f"{study}/steps/{marks.edit_step}/value"
        trivial: list[float] = []
        edits: list[Timed] = []
        sent: list[int] = []  # every edit's sequence number, warm-up included
        most = int(os.environ.get("BENCH_EDITS", "300"))

        def one_pair() -> Timed:
            trivial.append(client.get(TRIVIAL_PATH).seconds)
            sent.append(len(sent) + 1)
            number = sent[-1]
            edit = client.post(path, {"value_text": f"1 in {100 + number}",
                                      "client": "bench-client", "seq": str(number),
                                      **form.sent()},
                               hx=edit_headers(marks))
            form.read(edit.text)
            edits.append(edit)
            return edit

        # A few edits before measuring, not counted: the server's first edit compiles its
        # SQL statements (about 25) once per process; the table's note says how many.
        for _ in range(WARM_UP_EDITS):
            one_pair()
        warm_up_edits = len(edits)  # WARM_UP_EDITS, unless one failed to send
        trivial.clear()
        edits.clear()
        sample(one_pair, most, 25.0, self.budget, least=5)
        failed = sum(edit.status != 200 for edit in edits)
        note = (f"n={len(edits)} after {warm_up_edits} warm-up edits"
                + (f", {failed} answered other than 200" if failed else ""))
        if not form.version:
            note += ", the page carried no version (edits not guarded as a browser's are)"
        if stored_value_text(self.database, marks.edit_step) != f"1 in {100 + len(sent)}":
            note += ", the last edit is not in the database"
        seconds = [edit.seconds for edit in edits]
        edit_p99 = ms(seconds, 0.99)
        for key, value in (("trivial_p50_ms", ms(trivial, 0.5)), ("trivial_p99_ms",
                           ms(trivial, 0.99)), ("edit_p50_ms", ms(seconds, 0.5)),
                           ("edit_p99_ms", edit_p99)):
            self.add(key, value, note)
        self.add("edit_vs_trivial_p99", edit_p99 / ms(trivial, 0.99))
        self.add("edit_vs_trivial_p50", ms(seconds, 0.5) / ms(trivial, 0.5))

    def measure_pages(self, client: BrowserClient, study: str, marks: Landmarks) -> None:
        """Node pages, the room poll, overview and risk picture (p50 over a few loads)."""
        for key, path in (("node_typical", f"{study}/nodes/{marks.typical_node}"),
                          ("node_large", f"{study}/nodes/{marks.large_node}")):
            self.measure_page(client, key, path, kilobytes=True)
        room = client.open_page(f"{study}/room")
        stamp = room_stamp(room.text)
        polls = sample(lambda: client.get(f"{study}/room/live?stamp={stamp}", htmx=True),
                       50, 5.0, self.budget)
        unchanged = all(poll.status == 204 for poll in polls)
        self.add("room_poll_ms", ms([p.seconds for p in polls], 0.5),
                 f"n={len(polls)}" + ("" if unchanged else ", some polls did not answer 204"))
        self.measure_page(client, "overview", study)
        self.measure_page(client, "risk", f"{study}/risk")

    def measure_page(self, client: BrowserClient, key: str, path: str,
                     kilobytes: bool = False) -> None:
        """p50 of a full page load (up to 5 loads in about 10 s, at least one), and its size."""
        if self.budget.predict(key, self.size) > self.budget.remaining():
            self.add(f"{key}_ms", None, "skipped: would not fit the time budget")
            return
        loads = sample(lambda: client.open_page(path), 5, 10.0, self.budget, least=1)
        self.budget.record(key, self.size, max(load.seconds for load in loads))
        status = "" if all(load.status == 200 for load in loads) else ", not all 200"
        self.add(f"{key}_ms", ms([load.seconds for load in loads], 0.5),
                 f"n={len(loads)}{status}")
        if kilobytes:
            self.add(f"{key}_kb", loads[-1].size / 1000)

    def measure_exports(self, client: BrowserClient, study: str) -> None:
        """Each download once: seconds and megabytes."""
        client.open_page(f"{study}/export")
        for fmt in ("json", "csv", "xlsx"):
            self.timed_download(client, f"{study}/export.{fmt}", f"export_{fmt}")

    def timed_download(self, client: BrowserClient, path: str, key: str) -> Timed | None:
        """One download unless it would not fit the budget."""
        if not self.budget.fits(key, self.size):
            self.add(f"{key}_s", None, "skipped: predicted "
                     f"{self.budget.predict(key, self.size):.0f} s does not fit the budget")
            return None
        done = client.get(path)
        self.budget.record(key, self.size, done.seconds)
        self.add(f"{key}_s", done.seconds, "" if done.status == 200 else f"HTTP {done.status}")
        self.add(f"{key}_mb", done.size / 1e6)
        return done

    def measure_freeze(self, client: BrowserClient, study: str, marks: Landmarks) -> None:
        """Freeze a revision, edit one value, freeze a second; then export the JSON again
        (two revisions) and try importing it back."""
        if not self.budget.fits("freeze", self.size):
            self.add("freeze_s", None, "skipped: would not fit the time budget")
            return
        client.open_page(f"{study}/revisions")
        self.freeze_one(client, study, "freeze_s", 1)
        edited = client.post(f"{study}/steps/{marks.edit_step}/value",
                             {"value_text": "1 in 77", "client": "bench-client", "seq": "9999"},
                             hx=edit_headers(marks))
        if edited.status != 200:
            self.add("freeze_again_s", None, f"the edit between answered HTTP {edited.status}")
        elif self.budget.fits("freeze", self.size):
            self.freeze_one(client, study, "freeze_again_s", 2)
        self.measure_reimport(client, study)

    def freeze_one(self, client: BrowserClient, study: str, key: str, number: int) -> None:
        """POST the freeze form once, as the revisions page sends it."""
        frozen = client.post(f"{study}/revisions", {
            "label": f"Bench revision {number}", "note": "Invented revision for the benchmark",
            "signed_off_by": "Invented reviewer"})
        self.budget.record("freeze", self.size, frozen.seconds)
        ok = frozen.status in (200, 303)
        self.add(key, frozen.seconds, "" if ok else f"HTTP {frozen.status}")

    def measure_reimport(self, client: BrowserClient, study: str) -> None:
        """Whether the JSON export of a study with a revision imports back (a new database)."""
        if not self.budget.fits("export_json", self.size):
            self.add("export_json_frozen_mb", None, "skipped: would not fit the time budget")
            return
        exported = client.get(f"{study}/export.json")
        self.add("export_json_frozen_mb", exported.size / 1e6)
        if not self.budget.fits("import", self.size):
            self.add("json_reimport_ok", None, "skipped: would not fit the time budget")
            return
        path = self.work / f"export-{self.size}.json"
        path.write_text(exported.text, encoding="utf-8")
        database = self.work / f"reimport-{self.size}.db"
        migrate(database, self.work / "migrate.log")
        done = import_study(database, path, self.work / "reimport.log")
        self.add("json_reimport_ok", 1.0 if done.returncode == 0 else 0.0,
                 "" if done.returncode == 0 else refusal(done))

    def measure_pdf(self, client: BrowserClient, study: str, server: Server) -> None:
        """The full PDF report as the export page builds it: start the background build,
        poll its progress as the page does, download it; the time from the click to the file,
        the worker process's peak memory and the server's memory while and after. Only when
        asked for (BENCH_PDF=1) and only up to 1,000 scenarios."""
        if os.environ.get("BENCH_PDF") != "1" or self.size > 1_000:
            return
        if not self.budget.fits("pdf", self.size):
            self.add("pdf_s", None, "skipped: would not fit the time budget")
            return
        client.open_page(f"{study}/export")  # the page's CSRF token, as the button sends it
        start = time.perf_counter()
        started = client.post(f"{study}/report-jobs", {"kind": "full"})
        found = re.search(r"/report-jobs/([0-9a-f]{32})", started.text)
        if found is None:
            self.add("pdf_s", None, f"not started: HTTP {started.status}", failed=True)
            return
        job_path = f"{study}/report-jobs/{found.group(1)}"
        fragment, server_peak = self.poll_pdf_job(client, job_path, server, start)
        if fragment is None or "is ready" not in fragment:
            self.add("pdf_s", None, "not finished: " + (fragment or "timed out")[-160:],
                     failed=True)
            return
        download = client.get(f"{job_path}/file")
        seconds = time.perf_counter() - start
        self.budget.record("pdf", self.size, seconds)
        self.add("pdf_s", seconds, "" if download.status == 200 else f"HTTP {download.status}")
        job = read_job(self.database.parent / REPORTS_FOLDER_NAME, found.group(1))
        if job is not None:
            self.add("pdf_pages", job.pages)
            self.add("pdf_peak_mb", job.peak_mb,
                     "the build's worker and its layout process together (sampled)")
        self.add("rss_pdf_mb", server.rss_mb(), f"server at most {server_peak:.0f} MB meanwhile")

    def poll_pdf_job(self, client: BrowserClient, job_path: str, server: Server,
                     start: float) -> tuple[str | None, float]:
        """Poll the build every quarter second until it stops polling: its last fragment
        (None when the budget ran out first) and the server's largest memory meanwhile."""
        server_peak = server.rss_mb()
        while time.perf_counter() - start < min(600.0, self.budget.remaining()):
            fragment = client.get(job_path, htmx=True).text
            server_peak = max(server_peak, server.rss_mb())
            if "hx-get" not in fragment:
                return fragment, server_peak
            time.sleep(0.25)
        return None, server_peak


def chosen_groups() -> set[str]:
    """The measurement groups BENCH_ONLY names (every group when it is unset)."""
    named = {g.strip() for g in os.environ.get("BENCH_ONLY", "").split(",") if g.strip()}
    unknown = named - set(GROUPS)
    if unknown:
        raise SystemExit(f"BENCH_ONLY: unknown group(s) {sorted(unknown)}; known: {GROUPS}")
    return named or set(GROUPS)


def edit_headers(marks: Landmarks) -> dict[str, str]:
    """The extra headers htmx sends for the value field (its id, name and target)."""
    return {"HX-Trigger": f"step-{marks.edit_step}-value_text", "HX-Trigger-Name": "value_text",
            "HX-Target": f"scenario-{marks.edit_scenario}-results"}


def room_stamp(html: str) -> str:
    """The room page's change stamp, as its poll sends it."""
    found = re.search(r'room/live\?stamp=([^"&\s]*)', html)
    return found.group(1) if found else ""


def refusal(done: Imported) -> str:
    """The last line of a failed import's message."""
    lines = done.output.strip().splitlines()
    if not lines:
        return f"exit {done.returncode}"
    return "refused: " + lines[-1].split("not imported: ")[-1][-160:]


def run_size(size: int, budget: Budget, work: Path) -> SizeRun:
    """Generate, import, serve and measure one size (skipping it when it cannot fit)."""
    run = SizeRun(size, budget, work)
    # The import, then a minute for the server and the edits; later measurements check
    # the budget one by one.
    predicted = budget.predict("import", size) + 60
    if predicted > budget.remaining():
        run.add("import_s", None, f"size skipped: predicted {predicted:.0f} s of work, "
                f"{budget.remaining():.0f} s left")
        return run
    prepared = run.prepare()
    if prepared is None:
        return run
    database, study_id = prepared
    # The disk settles before the server is measured: right after the import (and the
    # generated file, 310 MB and 58 MB at 50,000) the kernel was still writing them back,
    # and every edit's commit waited behind that in its fsync (measured at 50,000, 200 edits
    # just after the import: p50 7.6 ms and p99 10.8 ms, against 5.7 and 7.5 ms after a
    # sync). A team does not type within seconds of a 300 MB import.
    os.sync()
    marks = find_landmarks(database, study_id, generate.TYPICAL_NODE_NUMBER,
                           generate.LARGE_NODE_NUMBER)
    server = Server(database, work / f"server-{size}.log")
    try:
        run.measure(server, study_id, marks)
    finally:
        server.stop()
    return run


def git_commit() -> str:
    """The commit measured (with '+changes' when the checkout has uncommitted edits)."""
    def git(*args: str) -> str:
        return subprocess.run(["git", *args], cwd=ROOT, capture_output=True, text=True,
                              check=False).stdout.strip()
    return git("rev-parse", "--short", "HEAD") + ("+changes" if git("status", "--porcelain",
                                                                    "app") else "")


def main() -> int:
    """Run every size, print the table and write it as JSON."""
    sizes = [int(s) for s in os.environ.get("BENCH_SIZES", "").split(",") if s.strip()]
    budget = Budget(float(os.environ.get("BENCH_BUDGET_SECONDS", "570")))
    started = time.monotonic()
    rows: list[Row] = []
    with tempfile.TemporaryDirectory(prefix="tallyroom-bench-") as folder:
        for size in sizes or DEFAULT_SIZES:
            print(f"{size:,} scenarios", flush=True)
            run = run_size(size, budget, Path(folder))
            rows += run.rows
    rows += flatness(rows)
    table, summary = as_table(rows), as_pivot(rows)
    print(table, summary, sep="\n\n")
    failed = sum(row.result == "FAIL" for row in rows)
    print(f"{failed} FAIL, {sum(r.result == 'PASS' for r in rows)} PASS "
          f"in {time.monotonic() - started:.0f} s; load average {os.getloadavg()[0]:.1f} "
          f"on {os.cpu_count()} CPUs (other work on the machine inflates every figure)")
    write_results(rows, table, summary, time.monotonic() - started)
    return 0


def write_results(rows: list[Row], table: str, summary: str, seconds: float) -> None:
    """The table as JSON, with what was measured on which machine."""
    out = Path(os.environ.get("BENCH_OUT", ROOT / "bench" / "results" / "latest.json"))
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps({
        "measured_at": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime()),
        "commit": git_commit(), "cpus": os.cpu_count(), "python": platform.python_version(),
        "seconds": round(seconds, 1),
        "load_average_at_end": [round(x, 2) for x in os.getloadavg()],
        "rows": as_json_rows(rows), "table": table, "summary": summary,
    }, indent=2, ensure_ascii=False) + "\n", encoding="utf-8")
    print(f"wrote {out}")


if __name__ == "__main__":
    raise SystemExit(main())
