"""A throwaway database and one uvicorn worker on loopback, driven only from outside the app."""

import os
import socket
import sqlite3
import subprocess
import sys
import time
from dataclasses import dataclass
from pathlib import Path

import httpx

ROOT = Path(__file__).resolve().parent.parent
BIN = Path(sys.executable).parent
TRIVIAL_PATH = "/static/app.css"


@dataclass(frozen=True)
class Imported:
    """How a `tallyroom import` went: exit code, wall seconds, peak memory, what it printed."""

    returncode: int
    seconds: float
    peak_mb: float
    output: str

    @property
    def study_id(self) -> int | None:
        """The new study's id (the command's last line) when the import succeeded."""
        lines = self.output.strip().splitlines()
        return int(lines[-1]) if self.returncode == 0 and lines and lines[-1].isdigit() else None


def database_env(database: Path) -> dict[str, str]:
    """The environment that points the app at one SQLite file."""
    return {**os.environ, "TALLYROOM_DATABASE_URL": f"sqlite:///{database}"}


def run_measured(command: list[str], env: dict[str, str], log: Path) -> Imported:
    """Run a command, timing it and reading its peak resident memory from the kernel."""
    with log.open("w") as out:
        start = time.perf_counter()
        process = subprocess.Popen(command, cwd=ROOT, env=env, stdout=out,
                                   stderr=subprocess.STDOUT)
        _pid, status, usage = os.wait4(process.pid, 0)
        seconds = time.perf_counter() - start
    process.returncode = os.waitstatus_to_exitcode(status)
    return Imported(process.returncode, seconds, usage.ru_maxrss / 1024, log.read_text())


def migrate(database: Path, log: Path) -> None:
    """`tallyroom migrate` on a new database file."""
    done = run_measured([str(BIN / "tallyroom"), "migrate"], database_env(database), log)
    if done.returncode != 0:
        raise RuntimeError(f"tallyroom migrate failed:\n{done.output}")


def import_study(database: Path, study_file: Path, log: Path) -> Imported:
    """`tallyroom import FILE`, as a user would run it."""
    return run_measured([str(BIN / "tallyroom"), "import", str(study_file)],
                        database_env(database), log)


# Used only when the command refuses a file for its size, so the rest can still be measured.
UNLIMITED_IMPORT = """
import sys
from sqlmodel import Session
from app.db.session import get_db_engine
from app.db.tracking import install_tracking
from app.services.exchange.study_import import import_study_text
install_tracking()
with Session(get_db_engine()) as session:
    print(import_study_text(session, open(sys.argv[1], 'rb').read()).id)
"""


def import_without_size_limit(database: Path, study_file: Path, log: Path) -> Imported:
    """Import through the service the command uses, skipping its file-size check and lifting
    the scenario limits (settings) for this one process."""
    unlimited = {"TALLYROOM_MAX_IMPORT_SCENARIOS": "1000000",
                 "TALLYROOM_MAX_IMPORT_SCENARIOS_PER_NODE": "1000000"}
    return run_measured([sys.executable, "-c", UNLIMITED_IMPORT, str(study_file)],
                        {**database_env(database), **unlimited}, log)


def free_port() -> int:
    """A TCP port nobody listens on right now."""
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return int(probe.getsockname()[1])


class Server:
    """`uvicorn app.main:create_app` with one worker on 127.0.0.1, in its own process."""

    def __init__(self, database: Path, log: Path) -> None:
        self.port = free_port()
        self.log = log.open("w")
        command = [sys.executable, "-m", "uvicorn", "app.main:create_app", "--factory",
                   "--host", "127.0.0.1", "--port", str(self.port), "--log-level", "warning"]
        self.process = subprocess.Popen(command, cwd=ROOT, env=database_env(database),
                                        stdout=self.log, stderr=subprocess.STDOUT)
        self.base_url = f"http://127.0.0.1:{self.port}"
        self._wait_until_ready()

    def _wait_until_ready(self, seconds: float = 60.0) -> None:
        deadline = time.monotonic() + seconds
        while time.monotonic() < deadline:
            if self.process.poll() is not None:
                raise RuntimeError(f"uvicorn exited with {self.process.returncode}")
            try:
                if httpx.get(self.base_url + TRIVIAL_PATH, timeout=2).status_code == 200:
                    return
            except httpx.TransportError:
                time.sleep(0.1)
        raise RuntimeError("uvicorn did not answer within a minute")

    def rss_mb(self) -> float:
        """The server's resident memory now (VmRSS in /proc/PID/status), in MB."""
        for line in Path(f"/proc/{self.process.pid}/status").read_text().splitlines():
            if line.startswith("VmRSS:"):
                return int(line.split()[1]) / 1024
        raise RuntimeError("VmRSS not found")

    def stop(self) -> None:
        """Stop this server process (and only it)."""
        self.process.terminate()
        try:
            self.process.wait(timeout=10)
        except subprocess.TimeoutExpired:
            self.process.kill()
            self.process.wait()
        self.log.close()


@dataclass(frozen=True)
class Landmarks:
    """Ids the bench needs, read straight from the database file (not from the markup)."""

    typical_node: int
    large_node: int
    edit_step: int
    edit_scenario: int


def find_landmarks(database: Path, study_id: int, typical: str, large: str) -> Landmarks:
    """The two measured nodes by number, and the first IPL of the typical node to edit."""
    with sqlite3.connect(database) as db:
        def node_id(number: str) -> int:
            row = db.execute("SELECT id FROM node WHERE study_id = ? AND number = ?",
                             (study_id, number)).fetchone()
            return int(row[0])
        typical_id = node_id(typical)
        step = db.execute(
            "SELECT step.id, step.scenario_id FROM step"
            " JOIN scenario ON scenario.id = step.scenario_id"
            " JOIN deviation ON deviation.id = scenario.deviation_id"
            " WHERE deviation.node_id = ? AND step.kind = 'ipl' ORDER BY step.id LIMIT 1",
            (typical_id,)).fetchone()
        return Landmarks(typical_id, node_id(large), int(step[0]), int(step[1]))


def stored_value_text(database: Path, step_id: int) -> str | None:
    """A step's value as typed, as committed in the database (proof an edit was written)."""
    with sqlite3.connect(database) as db:
        row = db.execute("SELECT value_text FROM step WHERE id = ?", (step_id,)).fetchone()
    return None if row is None else str(row[0])
