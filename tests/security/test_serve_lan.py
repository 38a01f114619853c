"""`tallyroom serve --lan` binds to the network only once a facilitator passphrase is set."""

import io
from collections.abc import Iterator
from typing import Any

import pytest
import uvicorn
from sqlmodel import Session

from app.access.codes import show_code
from app.access.passphrase import verify_passphrase
from app.access.state import load_state, todays_join_code
from app.cli import main
from app.settings import get_settings
from tests.security.conftest import PASSPHRASE


@pytest.fixture
def served(monkeypatch: pytest.MonkeyPatch) -> Iterator[list[dict[str, Any]]]:
    """Records uvicorn.run calls instead of serving; restores the settings afterwards."""
    calls: list[dict[str, Any]] = []
    monkeypatch.setattr(uvicorn, "run", lambda *args, **kwargs: calls.append(kwargs))
    monkeypatch.setenv("TALLYROOM_LAN", "0")
    monkeypatch.setenv("TALLYROOM_HOST", "127.0.0.1")
    get_settings.cache_clear()
    yield calls
    get_settings.cache_clear()


def set_passphrase_by_stdin(monkeypatch: pytest.MonkeyPatch, text: str) -> int:
    monkeypatch.setattr("sys.stdin", io.StringIO(text + "\n"))
    return main(["passphrase", "--stdin"])


def test_serve_lan_refuses_to_start_without_a_passphrase(
    session: Session, served: list[dict[str, Any]], capsys: pytest.CaptureFixture[str]
) -> None:
    assert main(["serve", "--lan"]) == 2
    assert served == []
    assert "refusing to serve the network without a facilitator passphrase" in \
        capsys.readouterr().err


def test_a_network_host_without_lan_is_refused_too(
    session: Session, served: list[dict[str, Any]], monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("TALLYROOM_HOST", "0.0.0.0")
    get_settings.cache_clear()
    assert main(["serve"]) == 2
    assert served == []


def test_serve_lan_with_a_passphrase_binds_all_interfaces_and_prints_the_code(
    session: Session, served: list[dict[str, Any]], monkeypatch: pytest.MonkeyPatch,
    capsys: pytest.CaptureFixture[str]
) -> None:
    assert set_passphrase_by_stdin(monkeypatch, PASSPHRASE) == 0
    assert main(["serve", "--lan"]) == 0
    assert [call["host"] for call in served] == ["0.0.0.0"]
    out = capsys.readouterr().out
    session.expire_all()
    assert f"join code {show_code(todays_join_code(session))}" in out
    assert "/join" in out


def test_serve_on_loopback_needs_no_passphrase(
    session: Session, served: list[dict[str, Any]]
) -> None:
    assert main(["serve"]) == 0
    assert [call["host"] for call in served] == ["127.0.0.1"]


def test_the_passphrase_is_stored_as_a_salted_hash_only(
    session: Session, monkeypatch: pytest.MonkeyPatch
) -> None:
    assert set_passphrase_by_stdin(monkeypatch, PASSPHRASE) == 0
    session.expire_all()
    stored = load_state(session).passphrase_hash
    assert PASSPHRASE not in stored and stored.startswith("scrypt$16384$8$1$")
    assert verify_passphrase(PASSPHRASE, stored)
    assert not verify_passphrase(PASSPHRASE + " ", stored)
    assert set_passphrase_by_stdin(monkeypatch, PASSPHRASE) == 0
    session.expire_all()
    assert load_state(session).passphrase_hash != stored  # a new salt each time


def test_a_short_passphrase_is_refused_with_the_rule(
    session: Session, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    assert set_passphrase_by_stdin(monkeypatch, "short") == 2
    assert "at least 10 characters" in capsys.readouterr().err
    session.expire_all()
    assert load_state(session).passphrase_hash == ""
