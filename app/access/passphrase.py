"""The facilitator passphrase, stored only as a salted scrypt hash."""

import base64
import hashlib
import hmac
import secrets

MIN_LENGTH = 10
# scrypt cost: 16 MiB of memory and ~50 ms per check, so guessing is slow even offline.
_N, _R, _P = 2**14, 8, 1


class PassphraseError(ValueError):
    """A passphrase that breaks a rule; the message names it."""


def check_rules(passphrase: str) -> str:
    """The passphrase itself, or PassphraseError naming the rule it breaks."""
    if len(passphrase.strip()) < MIN_LENGTH:
        raise PassphraseError(f"The passphrase needs at least {MIN_LENGTH} characters.")
    if "\x00" in passphrase:
        raise PassphraseError("The passphrase cannot contain a NUL character.")
    return passphrase


def _derive(passphrase: str, salt: bytes, n: int, r: int, p: int) -> bytes:
    return hashlib.scrypt(passphrase.encode("utf-8"), salt=salt, n=n, r=r, p=p,
                          maxmem=64 * 1024 * 1024, dklen=32)


def hash_passphrase(passphrase: str) -> str:
    """'scrypt$n$r$p$salt$hash' (base64) for a passphrase that follows the rules."""
    salt = secrets.token_bytes(16)
    digest = _derive(check_rules(passphrase), salt, _N, _R, _P)
    encode = base64.b64encode
    return f"scrypt${_N}${_R}${_P}${encode(salt).decode()}${encode(digest).decode()}"


def verify_passphrase(passphrase: str, stored: str) -> bool:
    """True when `passphrase` hashes to `stored`; False for anything malformed or empty."""
    try:
        scheme, n, r, p, salt, digest = stored.split("$")
        if scheme != "scrypt":
            return False
        derived = _derive(passphrase, base64.b64decode(salt), int(n), int(r), int(p))
    except (ValueError, UnicodeEncodeError):
        return False
    return hmac.compare_digest(derived, base64.b64decode(digest))
