"""The one access-state row: signing key, passphrase hash, the day's join code, generation."""

import secrets
from datetime import date
from typing import Any

from sqlalchemy import select
from sqlalchemy.exc import IntegrityError
from sqlmodel import Session

from app.access.codes import new_join_code, normalise_code
from app.access.passphrase import hash_passphrase, verify_passphrase
from app.db.models import AccessState

ROW_ID = 1
_STATE: Any = AccessState  # Any: the model's columns as SQL expressions (the ORM boundary)
# Built once: every request's access check reads it.
_GENERATION = select(_STATE.session_generation).where(_STATE.id == ROW_ID)


def load_state(session: Session) -> AccessState:
    """The access row, made on first use with a fresh signing key."""
    state = session.get(AccessState, ROW_ID)
    if state is not None:
        return state
    session.add(AccessState(id=ROW_ID, secret_key=secrets.token_urlsafe(48)))
    try:
        session.commit()
    except IntegrityError:  # another request made it first
        session.rollback()
    found = session.get(AccessState, ROW_ID)
    assert found is not None
    return found


def session_generation(session: Session) -> int:
    """The current session generation (every request's access check needs only this): one
    column from a prebuilt statement, no row object; the row is made on first use."""
    found = session.connection().execute(_GENERATION).scalar()
    return int(found) if found is not None else load_state(session).session_generation


def has_passphrase(session: Session) -> bool:
    """True once a facilitator passphrase is set."""
    return bool(load_state(session).passphrase_hash)


def set_passphrase(session: Session, passphrase: str) -> None:
    """Store the passphrase's salted hash (PassphraseError when it breaks a rule)."""
    state = load_state(session)
    state.passphrase_hash = hash_passphrase(passphrase)
    session.commit()


def passphrase_matches(session: Session, passphrase: str) -> bool:
    """True when a passphrase is set and `passphrase` is it."""
    stored = load_state(session).passphrase_hash
    return bool(stored) and verify_passphrase(passphrase, stored)


def todays_join_code(session: Session, today: date | None = None) -> str:
    """The join code for today: yesterday's (or no) code is replaced by a new one."""
    state = load_state(session)
    day = today or date.today()
    if not state.join_code or state.join_code_day != day:
        return rotate_join_code(session, today=day)
    return state.join_code


def rotate_join_code(session: Session, today: date | None = None) -> str:
    """A new join code; the old one stops working at once."""
    state = load_state(session)
    state.join_code = new_join_code()
    state.join_code_day = today or date.today()
    session.commit()
    return state.join_code


def code_matches(session: Session, typed: str, today: date | None = None) -> bool:
    """True when `typed` is today's join code (spaces, dashes and case ignored)."""
    code = todays_join_code(session, today=today)
    return secrets.compare_digest(normalise_code(typed).encode(), code.encode())


def end_sessions(session: Session) -> int:
    """Raise the generation: every session stamped with an older one is ended."""
    state = load_state(session)
    state.session_generation += 1
    session.commit()
    return state.session_generation
