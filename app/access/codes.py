"""Join codes: short enough to read off a projector, long enough not to be guessed."""

import secrets

# No 0/O, 1/I/L, 2/Z, 5/S, 8/B: nothing that reads as another character when said or shown.
ALPHABET = "ACDEFGHJKMNPQRTUVWXY34679"
LENGTH = 6


def new_join_code() -> str:
    """A random code of LENGTH characters (25^6, about 2.4e8 possibilities)."""
    return "".join(secrets.choice(ALPHABET) for _ in range(LENGTH))


def normalise_code(typed: str) -> str:
    """The code as stored: upper case, spaces and dashes dropped ('kq7-m4p' → 'KQ7M4P')."""
    return "".join(ch for ch in typed.upper() if ch not in " -\t")[:40]


def show_code(code: str) -> str:
    """The code in two halves for reading aloud ('KQ7M4P' → 'KQ7-M4P')."""
    half = len(code) // 2
    return f"{code[:half]}-{code[half:]}" if code else ""
