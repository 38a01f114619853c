"""Report builds in the background: a second request joins the build already running, one
build runs at a time, a build that fails says why, and old files are cleared away."""

import os
import threading
import time
from pathlib import Path

from app.services.exchange import report_jobs
from app.services.exchange.report_build import build_job
from app.services.exchange.report_jobs import JobState, ReportJob
from app.services.exchange.report_summary import ReportKind

URL = "sqlite:///unused.db"  # the launch below never starts a worker


def _start(folder: Path, study_id: int, launch: report_jobs.Launch,
           kind: ReportKind = ReportKind.FULL) -> ReportJob:
    return report_jobs.start_report_job(folder, study_id=study_id, revision_id=None,
                                        filename="r.pdf", kind=kind, database_url=URL,
                                        launch=launch)


def _wait_until(folder: Path, job_id: str, states: set[JobState]) -> ReportJob:
    for _ in range(200):
        job = report_jobs.read_job(folder, job_id)
        if job is not None and job.state in states:
            return job
        time.sleep(0.02)
    raise AssertionError(f"job {job_id} never reached {states}")


def test_a_second_request_joins_the_build_and_another_report_waits_its_turn(
    tmp_path: Path
) -> None:
    release = threading.Event()

    def slow_worker(folder: Path, job: ReportJob) -> tuple[int, str]:
        report_jobs.update_job(folder, job.job_id, part=1, parts=3, step="scenarios 1.1.1 to 1.2.4")
        release.wait(10)
        report_jobs.update_job(folder, job.job_id, state=JobState.READY, pages=7)
        return 0, ""

    first = _start(tmp_path, 1, slow_worker)
    running = _wait_until(tmp_path, first.job_id, {JobState.RUNNING})
    assert _start(tmp_path, 1, slow_worker).job_id == first.job_id  # joins
    summary = _start(tmp_path, 1, slow_worker, ReportKind.SUMMARY)
    assert summary.job_id != first.job_id
    time.sleep(0.2)
    assert report_jobs.read_job(tmp_path, summary.job_id).state is JobState.QUEUED  # type: ignore[union-attr]
    assert _wait_until(tmp_path, first.job_id, {JobState.RUNNING}).progress == (
        "part 2 of 3: scenarios 1.1.1 to 1.2.4")
    assert running.done is False
    release.set()
    assert _wait_until(tmp_path, first.job_id, {JobState.READY}).pages == 7
    _wait_until(tmp_path, summary.job_id, {JobState.READY})
    # Once the build is finished, asking again starts a new one (the study may have changed).
    assert _start(tmp_path, 1, slow_worker).job_id != first.job_id


def test_a_worker_that_dies_without_a_word_leaves_a_failed_job_saying_so(
    tmp_path: Path
) -> None:
    job = _start(tmp_path, 1, lambda folder, job: (-9, "MemoryError\n"))
    failed = _wait_until(tmp_path, job.job_id, {JobState.FAILED})
    assert failed.error == "The report could not be built: the build stopped (MemoryError)."


def test_a_job_left_running_by_a_server_that_stopped_reads_as_failed(tmp_path: Path) -> None:
    orphan = ReportJob("a" * 32, 1, None, ReportKind.FULL, "r.pdf", "2026-11-12T15:30:00+00:00",
                       state=JobState.RUNNING, part=3, parts=9)
    report_jobs.write_job(tmp_path, orphan)
    found = report_jobs.get_job(tmp_path, 1, orphan.job_id)
    assert found is not None and found.state is JobState.FAILED
    assert "server stopped" in found.error
    assert report_jobs.get_job(tmp_path, 2, orphan.job_id) is None  # another study's job


def test_only_job_ids_name_files(tmp_path: Path) -> None:
    (tmp_path / "x.json").write_text("{}")
    assert report_jobs.read_job(tmp_path, "../x") is None
    assert report_jobs.read_job(tmp_path, "x") is None


def test_a_build_of_a_study_that_is_gone_fails_with_the_reason(
    tmp_path: Path, db_engine: object
) -> None:
    from app.routes.rendering import templates

    job = ReportJob("b" * 32, 987654, None, ReportKind.FULL, "r.pdf",
                    "2026-11-12T15:30:00+00:00")
    report_jobs.write_job(tmp_path, job)
    build_job(tmp_path, job.job_id, engine=db_engine, env=templates.env)  # type: ignore[arg-type]
    failed = report_jobs.read_job(tmp_path, job.job_id)
    assert failed is not None and failed.state is JobState.FAILED
    assert failed.error == "The report could not be built: There is no study 987654."
    assert not report_jobs.pdf_path(tmp_path, job.job_id).exists()
    assert failed.peak_mb > 20  # this process at least (the build's memory, for make bench)


def test_finished_jobs_are_kept_a_day_and_at_most_jobs_kept(tmp_path: Path) -> None:
    now = time.time()
    ids = [f"{n:032x}" for n in range(report_jobs.JOBS_KEPT + 5)]
    for age, job_id in enumerate(ids):  # ids[0] is the newest
        report_jobs.write_job(tmp_path, ReportJob(job_id, 1, None, ReportKind.FULL, "r.pdf",
                                                  "2026-11-12T15:30:00+00:00",
                                                  state=JobState.READY))
        report_jobs.pdf_path(tmp_path, job_id).write_bytes(b"%PDF-")
        stamp = now - 60 * age - (2 * report_jobs.KEEP_SECONDS if age == 3 else 0)
        for path in (report_jobs.state_path(tmp_path, job_id),
                     report_jobs.pdf_path(tmp_path, job_id)):
            os.utime(path, (stamp, stamp))
    (tmp_path / f"{ids[0]}.building.part0003.pdf").write_bytes(b"%PDF-")  # a killed build
    report_jobs.remove_old_jobs(tmp_path, now=now)
    kept = sorted(p.stem for p in tmp_path.glob("*.json"))
    # ids[3] is two days old; of the rest, the newest JOBS_KEPT stay.
    assert kept == sorted(ids[:3] + ids[4:report_jobs.JOBS_KEPT + 1])
    assert sorted(p.stem for p in tmp_path.glob("*.pdf")) == kept
