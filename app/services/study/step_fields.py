"""Stored step fields the method reads, turned into the likelihood package's types.

A modifier's receptors are stored as comma-separated text ("people,environment") and mean the
default of its kind when empty; unknown stored words are left out rather than failing a page.
"""

from collections.abc import Iterable
from enum import StrEnum
from functools import lru_cache
from typing import Any, TypeVar

from app.likelihood.check_base import CauseType
from app.likelihood.types import IplType, ModifierKind, Receptor

Known = TypeVar("Known", bound=StrEnum)


def known_members(kind: type[Known]) -> dict[Any, Known]:
    """Each member by its text and by itself, for one dict look-up instead of a scan of the
    enumeration per stored step (an Enum member hashes by its name, not its text)."""
    return {**{member.value: member for member in kind}, **{member: member for member in kind}}


_MODIFIER_KINDS = known_members(ModifierKind)
_CAUSE_TYPES = known_members(CauseType)
_IPL_TYPES = known_members(IplType)


@lru_cache(maxsize=256)
def receptor_set(stored: str | None) -> frozenset[Receptor] | None:
    """The receptors a stored text names; None (kind's default) for no text (remembered:
    a study stores a handful of such texts)."""
    if not stored or not stored.strip():
        return None
    names = {part.strip() for part in stored.split(",")}
    return frozenset(r for r in Receptor if r.value in names)


def stored_receptors(stored: str | None) -> list[str] | None:
    """The stored receptors as the study file lists them (in Receptor order), or None."""
    found = receptor_set(stored)
    return None if found is None else [r.value for r in Receptor if r in found]


def receptors_text(values: Iterable[str] | None) -> str | None:
    """Receptor names as stored: known names in Receptor order, comma-separated; None if none."""
    if values is None:
        return None
    names = {str(v).strip() for v in values}
    kept = [r.value for r in Receptor if r.value in names]
    return ",".join(kept) if kept else None


def modifier_kind_of(stored: str | None) -> ModifierKind | None:
    """A stored modifier kind; unknown text reads as no kind given."""
    return _MODIFIER_KINDS.get(stored)


def cause_type_of(stored: str | None) -> CauseType | None:
    """A stored cause type; unknown text reads as no type given."""
    return _CAUSE_TYPES.get(stored)


def ipl_type_of(stored: str | None) -> IplType | None:
    """A stored IPL type; unknown text reads as no type given."""
    return _IPL_TYPES.get(stored)
