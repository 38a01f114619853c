"""What `tallyroom serve` checks and prints before serving the meeting-room network."""

from sqlmodel import Session

from app.access.codes import show_code
from app.access.network import join_address
from app.access.state import has_passphrase, todays_join_code
from app.settings import Settings


def prepare_network(session: Session, settings: Settings) -> list[str] | None:
    """The lines to print (address and today's join code), or None without a passphrase."""
    if not has_passphrase(session):
        return None
    code = show_code(todays_join_code(session))
    return [
        f"Tallyroom is serving the meeting-room network on {settings.host}:{settings.port}",
        f"  join at   {join_address(settings)}",
        f"  join code {code}  (for today; rotate it or end sessions at /access)",
        "  facilitator and scribe: sign in at /sign-in with the passphrase",
    ]
