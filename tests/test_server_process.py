"""The real server, as `tallyroom serve` runs it: killed under write load it loses no
acknowledged edit; stopped by SIGTERM it ends cleanly with a backup, like Ctrl-C.

Each test starts its own server process on a free loopback port with its own SQLite file,
whatever database the rest of the suite uses. Edits go through the worksheet's value URL, as
the page posts them while the scribe types.
"""

import os
import signal
import socket
import sqlite3
import subprocess
import sys
import threading
import time
from collections.abc import Iterator
from contextlib import closing, contextmanager
from dataclasses import dataclass, field
from pathlib import Path

import httpx
import pytest

from app.access.csrf import HEADER
from tests.security.sessions import page_token

BIN = Path(sys.executable).parent
BURST_WRITERS = 3
BURST_EDITS = 60  # each edit goes to a different step, so each can be checked on its own
KILL_AFTER = 30  # acknowledged edits before the SIGKILL; the rest are in flight or never sent


def _free_port() -> int:
    with closing(socket.socket()) as probe:
        probe.bind(("127.0.0.1", 0))
        return int(probe.getsockname()[1])


@dataclass
class ServerSetup:
    database: Path
    env: dict[str, str]
    base_url: str
    processes: list[subprocess.Popen[str]] = field(default_factory=list)

    def run(self, *args: str) -> None:
        subprocess.run([str(BIN / "tallyroom"), *args], env=self.env, check=True,
                       capture_output=True, timeout=120)

    def start(self) -> subprocess.Popen[str]:
        process = subprocess.Popen([str(BIN / "tallyroom"), "serve"], env=self.env, text=True,
                                   stdout=subprocess.PIPE, stderr=subprocess.STDOUT)
        self.processes.append(process)
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline:
            assert process.poll() is None, process.communicate()[0]
            try:
                if httpx.get(self.base_url + "/", timeout=2).status_code == 200:
                    return process
            except httpx.TransportError:
                time.sleep(0.1)
        pytest.fail("the server did not answer within 60 s")


@pytest.fixture
def server(tmp_path: Path) -> Iterator[ServerSetup]:
    """A migrated database with the demo study, and a way to start servers on it."""
    port = _free_port()
    database = tmp_path / "data" / "tallyroom.db"
    env = {**os.environ, "TALLYROOM_DATABASE_URL": f"sqlite:///{database}",
           "TALLYROOM_PORT": str(port), "TALLYROOM_BACKUP_KEEP": "5"}
    setup = ServerSetup(database, env, f"http://127.0.0.1:{port}")
    setup.run("migrate")
    setup.run("load-demo")
    yield setup
    for process in setup.processes:
        if process.poll() is None:
            process.kill()
        process.communicate(timeout=30)


def _probability_steps(database: Path) -> list[tuple[int, int]]:
    with closing(sqlite3.connect(database)) as raw:
        return raw.execute("SELECT study_id, id FROM step WHERE kind != 'initiating_event' "
                           "ORDER BY id").fetchall()


def _stored_texts(database: Path) -> dict[int, str]:
    with closing(sqlite3.connect(database)) as raw:
        return dict(raw.execute("SELECT id, value_text FROM step").fetchall())


def _post_value(http: httpx.Client, base_url: str, study_id: int, step_id: int,
                text: str) -> int:
    return http.post(f"{base_url}/studies/{study_id}/steps/{step_id}/value",
                     data={"value_text": text}, headers={"HX-Request": "true"}).status_code


@contextmanager
def _client(base_url: str) -> Iterator[httpx.Client]:
    """A browser-like client: the page's CSRF token on every request, named "Burst"."""
    with httpx.Client(timeout=30) as http:
        http.headers[HEADER] = page_token(http.get(base_url + "/").text)
        http.post(base_url + "/author", data={"name": "Burst", "next": "/"})
        yield http


@dataclass
class Burst:
    """Edits sent by several writers; `acknowledged` holds those answered 200."""

    sent: dict[int, str] = field(default_factory=dict)
    acknowledged: dict[int, str] = field(default_factory=dict)
    refused: list[int] = field(default_factory=list)
    lock: threading.Lock = field(default_factory=threading.Lock)

    def write(self, base_url: str, steps: list[tuple[int, int]]) -> None:
        with _client(base_url) as http:
            for study_id, step_id in steps:
                text = f"1 in {1000 + step_id}"
                with self.lock:
                    self.sent[step_id] = text
                try:
                    status = _post_value(http, base_url, study_id, step_id, text)
                except httpx.TransportError:
                    return  # the server is gone: this edit was never acknowledged
                with self.lock:
                    if status == 200:
                        self.acknowledged[step_id] = text
                    else:
                        self.refused.append(status)
                        return

    def wait_for(self, count: int, seconds: float) -> None:
        deadline = time.monotonic() + seconds
        while len(self.acknowledged) < count and not self.refused:
            assert time.monotonic() < deadline, f"only {len(self.acknowledged)} edits answered"
            time.sleep(0.005)
        assert self.refused == []


def test_a_killed_server_keeps_every_acknowledged_edit(server: ServerSetup) -> None:
    steps = _probability_steps(server.database)[:BURST_EDITS]
    assert len(steps) == BURST_EDITS
    before = _stored_texts(server.database)
    process = server.start()
    burst = Burst()
    writers = [threading.Thread(target=burst.write,
                                args=(server.base_url, steps[w::BURST_WRITERS]))
               for w in range(BURST_WRITERS)]
    for thread in writers:
        thread.start()
    burst.wait_for(KILL_AFTER, seconds=60)
    process.send_signal(signal.SIGKILL)
    for thread in writers:
        thread.join(timeout=60)
    assert process.wait(timeout=30) == -signal.SIGKILL
    assert KILL_AFTER <= len(burst.acknowledged) < BURST_EDITS

    server.start()  # SQLite replays its write-ahead log on the first open
    after = _stored_texts(server.database)
    assert {s: after[s] for s in burst.acknowledged} == burst.acknowledged
    for step_id, text in burst.sent.items():  # in flight at the kill: saved whole or not at all
        assert after[step_id] in (text, before[step_id])
    with closing(sqlite3.connect(server.database)) as raw:
        assert raw.execute("PRAGMA integrity_check").fetchall() == [("ok",)]


def test_sigterm_stops_the_server_cleanly_with_a_backup_holding_the_last_edit(
    server: ServerSetup,
) -> None:
    process = server.start()
    study_id, step_id = _probability_steps(server.database)[0]
    with _client(server.base_url) as http:
        assert _post_value(http, server.base_url, study_id, step_id, "1 in 4321") == 200
    process.send_signal(signal.SIGTERM)
    output, _ = process.communicate(timeout=60)
    assert process.returncode == 0, output
    assert output.splitlines()[-1] == "Tallyroom stopped cleanly (SIGTERM)"
    (backup,) = (server.database.parent / "backups").glob("tallyroom-*-shutdown.db")
    assert _stored_texts(backup)[step_id] == "1 in 4321"
    wal = server.database.with_name("tallyroom.db-wal")
    assert not wal.exists() or wal.stat().st_size == 0
