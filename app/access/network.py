"""Which host names this server answers to, and the addresses it prints for joining."""

import ipaddress
import socket

from app.settings import Settings

LOOPBACK_NAMES = frozenset({"localhost", "127.0.0.1", "[::1]"})
_ANY_ADDRESS = {"0.0.0.0", "::", ""}
# A documentation address (RFC 5737): connecting a UDP socket sends nothing, it only asks the
# routing table which local address would be used.
_PROBE = ("192.0.2.1", 9)


def _outbound_address() -> str | None:
    with socket.socket(socket.AF_INET, socket.SOCK_DGRAM) as probe:
        try:
            probe.connect(_PROBE)
        except OSError:
            return None
        return str(probe.getsockname()[0])


def lan_addresses() -> list[str]:
    """This machine's non-loopback IPv4 addresses, the one with a route out first."""
    found: list[str] = []
    try:
        infos = socket.getaddrinfo(socket.gethostname(), None, socket.AF_INET)
    except OSError:
        infos = []
    for address in [_outbound_address(), *(str(info[4][0]) for info in infos)]:
        if address and not ipaddress.ip_address(address).is_loopback and address not in found:
            found.append(address)
    return found


def host_names(settings: Settings) -> frozenset[str]:
    """Names a Host header may carry: loopback, configured extras, and on the LAN this machine."""
    names = set(LOOPBACK_NAMES) | {name.lower() for name in settings.extra_hosts}
    if settings.serves_network:
        hostname = socket.gethostname().lower()
        names |= {hostname, f"{hostname}.local", *lan_addresses()}
        if settings.host not in _ANY_ADDRESS:
            names.add(f"[{settings.host}]" if ":" in settings.host else settings.host.lower())
    return frozenset(names)


def host_of(header: str) -> str:
    """The name part of a Host header: 'Example:8000' → 'example', '[::1]:80' → '[::1]'."""
    header = header.strip().lower()
    if header.startswith("["):
        return header[: header.find("]") + 1] if "]" in header else header
    return header.rsplit(":", 1)[0] if header.count(":") == 1 else header


def is_loopback(address: str | None) -> bool:
    """True for 127.0.0.0/8 and ::1 (the client is this computer)."""
    try:
        return address is not None and ipaddress.ip_address(address).is_loopback
    except ValueError:
        return False


def join_address(settings: Settings) -> str:
    """The address people type on their devices to join."""
    bound = settings.host if settings.host not in _ANY_ADDRESS else None
    address = bound or next(iter(lan_addresses()), socket.gethostname())
    shown = f"[{address}]" if ":" in address else address
    return f"http://{shown}:{settings.port}/join"
