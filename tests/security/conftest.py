"""Fixtures for the security layer: an app served on the meeting-room network (LAN mode)."""

from collections.abc import Callable, Iterator

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session

from app.access.state import set_passphrase, todays_join_code
from app.main import create_app
from app.settings import Settings
from tests.security.sessions import attach_token

PASSPHRASE = "amber lantern over the bund"
LAN_SETTINGS = Settings(lan=True, host="0.0.0.0", extra_hosts=["testserver"])
# A device on the meeting-room network, not this computer.
LAN_DEVICE = ("192.0.2.40", 51000)

NewDevice = Callable[[], TestClient]


@pytest.fixture
def lan_device(session: Session) -> Iterator[NewDevice]:
    """Opens clients on one LAN-mode app, each a separate device with its own cookies."""
    set_passphrase(session, PASSPHRASE)
    app = create_app(LAN_SETTINGS)
    opened: list[TestClient] = []

    def open_device() -> TestClient:
        device = TestClient(app, client=LAN_DEVICE, follow_redirects=False)
        device.__enter__()
        opened.append(device)
        attach_token(device, "/join")
        return device

    yield open_device
    for device in opened:
        device.__exit__(None, None, None)


def join(device: TestClient, session: Session, *, name: str = "P. Anand",
         role: str = "participant", code: str | None = None) -> int:
    """Join with today's code (or `code`); the status of the answer."""
    typed = code if code is not None else todays_join_code(session)
    response = device.post("/join", data={"code": typed, "name": name, "role": role})
    if response.status_code == 303:
        attach_token(device, "/rooms")
    return response.status_code


def sign_in(device: TestClient, *, role: str = "scribe", name: str = "S. Mbeki",
            passphrase: str = PASSPHRASE) -> int:
    """Sign in with the passphrase; the status of the answer."""
    response = device.post("/sign-in", data={"passphrase": passphrase, "name": name,
                                             "role": role})
    if response.status_code == 303:
        attach_token(device, "/")
    return response.status_code
