"""Roles, what each may do, and how a route declares who may call it.

A route with no declaration needs an editor (scribe or facilitator): the safe default for
everything that exists today. Lower it at the route with `@allow(Role.PARTICIPANT)` (placed
under the router decorator); `@allow(None)` opens a route to visitors without a session
(joining, signing in).
"""

from collections.abc import Callable
from dataclasses import dataclass
from enum import IntEnum
from typing import Any, TypeVar

Endpoint = TypeVar("Endpoint", bound=Callable[..., Any])
_MARK = "__tallyroom_minimum_role__"


class Role(IntEnum):
    """Ordered: each role may do everything the roles below it may."""

    VIEWER = 1  # the room view only
    PARTICIPANT = 2  # the room view and answering open estimate rounds
    SCRIBE = 3  # every study page, every edit (needs the passphrase on the network)
    FACILITATOR = 4  # as scribe, plus the access settings (join code, ending sessions)

    @property
    def label(self) -> str:
        """The role's name as shown ('participant')."""
        return self.name.lower()

    @classmethod
    def from_label(cls, label: object) -> "Role | None":
        """The role named `label`, or None for anything else."""
        return next((role for role in cls if role.label == label), None)


EDITOR = Role.SCRIBE
UNDECLARED = object()


@dataclass(frozen=True)
class Access:
    """Who is asking: their role (None until they join or sign in) and their name."""

    role: Role | None
    name: str
    session_id: str
    on_network: bool

    def may(self, minimum: Role) -> bool:
        """True when this role reaches `minimum`."""
        return self.role is not None and self.role >= minimum

    @property
    def can_edit(self) -> bool:
        """Editors see every study page and may change it."""
        return self.may(EDITOR)


def allow(minimum: Role | None) -> Callable[[Endpoint], Endpoint]:
    """Declare the lowest role that may call the decorated route (None: anyone)."""

    def mark(endpoint: Endpoint) -> Endpoint:
        setattr(endpoint, _MARK, minimum)
        return endpoint

    return mark


def minimum_role(endpoint: object) -> Role | None:
    """The role a route declared with `allow`, or EDITOR when it declared none."""
    declared = getattr(endpoint, _MARK, UNDECLARED)
    return EDITOR if declared is UNDECLARED else declared  # type: ignore[return-value]
