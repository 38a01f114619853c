"""Stored step fields the method reads, turned into the likelihood package's types.

A modifier's receptors are stored as comma-separated text ("people,environment") and mean the
default of its kind when empty; unknown stored words are left out rather than failing a page.
"""

from collections.abc import Iterable

from app.likelihood.check_base import CauseType
from app.likelihood.types import ModifierKind, Receptor


def receptor_set(stored: str | None) -> frozenset[Receptor] | None:
    """The receptors a stored text names; None (kind's default) for no text."""
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
    return ModifierKind(stored) if stored in tuple(ModifierKind) else None


def cause_type_of(stored: str | None) -> CauseType | None:
    """A stored cause type; unknown text reads as no type given."""
    return CauseType(stored) if stored in tuple(CauseType) else None
