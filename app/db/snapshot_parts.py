"""A revision's snapshot split into content-addressed parts, and put back together.

A snapshot is a study file without history. It is stored as parts: each top-level value
(header, criteria, actions, participants, session dates, rounds, ...) is one part and each
node is one part, each keyed by the SHA-256 of its compact JSON text. A revision keeps only
its manifest: the snapshot's keys in order, each naming its part's digest (or, for "nodes",
the list of the nodes' digests). Two revisions that share an unchanged node share its part,
so a node that did not change costs one reference.

Scenario refs are numbered across the whole study (S1, S2, ...), so adding one scenario to
the first node would renumber every later node and defeat the sharing: a node part leaves out
each scenario's ref when it is the sequential one at that place (and first of its keys, as the
study file writes it), and putting the snapshot back together gives it back, first again. A
ref that is not sequential (an imported file may name scenarios otherwise) stays in the part.

A part's text is its compact JSON as orjson writes it (keys in the order written, every
character as itself, each float in its shortest round-trip form: 1e-05 is written 0.00001).
Parts frozen before that were keyed by the text of Python's `json.dumps(..., ensure_ascii=False,
separators=(",", ":"))`, which spells some floats otherwise (1e-05); `legacy_part_text` writes
that text, so a file or database holding such parts still reads (the file check accepts
either text for a part's key). orjson writes a large snapshot's text in a fifth of the time.

Pure: the standard library and orjson, shared by the database store and the study file.
"""

import hashlib
import itertools
import json
from collections.abc import Callable, Iterator
from typing import Any

import orjson

# Any in this module: a snapshot and its parts are JSON values (the file boundary).

NODES_KEY = "nodes"
DIGEST_LENGTH = 64  # hex SHA-256
Manifest = dict[str, str | list[str]]


class SnapshotPartsError(ValueError):
    """A manifest or a part that cannot be put together; the message names the rule."""


class NodesMovedError(ValueError):
    """The nodes built are not the ones the node list leaves unknown (the study's nodes
    changed between the two reads): split the whole snapshot instead."""


def part_text(value: Any) -> str:
    """The one text of a part: compact JSON as orjson writes it, keys in the order written.

    Raises TypeError (orjson.JSONEncodeError) for what JSON cannot say exactly: an integer
    beyond 64 bits, a lone surrogate. A NaN or infinity would be written as null, so
    `text_holds` must confirm a text read from a file before it is trusted as the value's."""
    return orjson.dumps(value).decode("utf-8")


def legacy_part_text(value: Any) -> str:
    """A part's text as parts frozen before orjson were keyed (Python's compact json.dumps)."""
    return json.dumps(value, ensure_ascii=False, separators=(",", ":"))


def text_holds(text: str, value: Any) -> bool:
    """Whether `text` (part_text of `value`) reads back as `value` (no NaN or infinity that
    it turned into null)."""
    read: Any = orjson.loads(text)
    return bool(read == value)


def part_digest(text: str) -> str:
    """The key of a part: the hex SHA-256 of its text's UTF-8 bytes."""
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def split_snapshot(snapshot: dict[str, Any], text_of: Callable[[Any], str] = part_text,
                   ) -> tuple[Manifest, dict[str, str]]:
    """The snapshot's manifest and its parts (digest -> text), each part listed once;
    `text_of` writes a part's text (legacy_part_text: as parts were keyed before orjson)."""
    manifest: Manifest = {}
    parts: dict[str, str] = {}
    for key, value in snapshot.items():
        if key == NODES_KEY and isinstance(value, list):
            manifest[key] = []
        for text in _parts_of(key, value, text_of):
            digest = part_digest(text)
            parts.setdefault(digest, text)
            named = manifest.get(key)
            if isinstance(named, list):
                named.append(digest)
            else:
                manifest[key] = digest
    return manifest, parts


def _parts_of(key: str, value: Any, text_of: Callable[[Any], str]) -> Iterator[str]:
    """The text of each part one top-level key makes: one, or one per node."""
    if key != NODES_KEY or not isinstance(value, list):
        yield text_of(value)
        return
    counter = 0
    for node in value:
        stripped, counter = _without_sequential_refs(node, counter)
        yield text_of(stripped)


def split_with_known_nodes(snapshot: dict[str, Any], nodes: list[tuple[str | None, int]],
                           ) -> tuple[Manifest, dict[str, str]]:
    """split_snapshot of a snapshot whose `nodes` holds only the nodes not known yet.

    `nodes` gives every node of the whole snapshot in order: its part's digest when known
    (a node unchanged since it was last split), else None, and the number of scenarios
    before it in the study (so a built node's sequential refs are left out as split_snapshot
    leaves them). The built nodes are taken from snapshot["nodes"] in order."""
    manifest, parts = split_snapshot({key: value for key, value in snapshot.items()
                                      if key != NODES_KEY})
    built = iter(snapshot.get(NODES_KEY, []))
    digests: list[str] = []
    for known, scenarios_before in nodes:
        if known is None:
            node = next(built, None)
            if node is None:
                raise NodesMovedError("fewer nodes were built than the node list leaves unknown")
            stripped = _without_sequential_refs(node, scenarios_before)[0]
            text = part_text(stripped)
            known = part_digest(text)
            parts.setdefault(known, text)
        digests.append(known)
    if next(built, None) is not None:
        raise NodesMovedError("more nodes were built than the node list leaves unknown")
    ordered: Manifest = {}
    for key in snapshot:  # the snapshot's own key order, nodes in place
        ordered[key] = digests if key == NODES_KEY else manifest[key]
    return ordered, parts


def assemble_snapshot(manifest: Manifest, value_of: Callable[[str], Any]) -> dict[str, Any]:
    """The snapshot a manifest names, reading each part with `value_of(digest)`.

    The parts `value_of` returns are not changed (one part may serve several revisions).
    """
    snapshot: dict[str, Any] = {}
    counter = 0
    for key, named in manifest.items():
        if isinstance(named, list):
            nodes = []
            for digest in named:
                node, counter = _with_sequential_refs(value_of(digest), counter)
                nodes.append(node)
            snapshot[key] = nodes
        else:
            snapshot[key] = value_of(named)
    return snapshot


def manifest_digests(manifest: Manifest) -> Iterator[str]:
    """Every digest a manifest names, in its order (repeats included)."""
    for named in manifest.values():
        yield from (named if isinstance(named, list) else [named])


def read_manifest(value: Any, where: str) -> Manifest:
    """A manifest checked for shape: an object of digests, or of lists of digests for nodes."""
    if not isinstance(value, dict):
        raise SnapshotPartsError(f"{where}: a snapshot's parts are listed as an object of "
                                 f"part digests")
    for key, named in value.items():
        digests = named if isinstance(named, list) and key == NODES_KEY else [named]
        if not all(_is_digest(d) for d in digests):
            raise SnapshotPartsError(
                f"{where}.{key}: each part is named by its SHA-256 digest, 64 lowercase hex "
                f"digits ('{NODES_KEY}' by a list of them, one for each node)")
    return value


def _is_digest(value: Any) -> bool:
    return (isinstance(value, str) and len(value) == DIGEST_LENGTH
            and all(c in "0123456789abcdef" for c in value))


def sequential_ref(index: int) -> str:
    """The ref the study file gives the index-th scenario (0-based) of a study: S1, S2, ..."""
    return f"S{index + 1}"


def _scenarios_of(node: Any) -> list[Any] | None:
    """The node's scenarios in order, or None when the node is not shaped as the file writes."""
    if not isinstance(node, dict) or not isinstance(node.get("deviations"), list):
        return None
    found: list[Any] = []
    for deviation in node["deviations"]:
        if not isinstance(deviation, dict) or not isinstance(deviation.get("scenarios"), list):
            return None
        found.extend(deviation["scenarios"])
    return found


def _rebuilt(node: dict[str, Any], scenario: Callable[[Any, int], Any]) -> dict[str, Any]:
    """A copy of the node with each scenario replaced by scenario(row, its place in the node)."""
    places = itertools.count()
    return {**node, "deviations": [
        {**deviation, "scenarios": [scenario(row, next(places)) for row in deviation["scenarios"]]}
        for deviation in node["deviations"]]}


def _without_sequential_refs(node: Any, counter: int) -> tuple[Any, int]:
    scenarios = _scenarios_of(node)
    if scenarios is None:
        return node, counter

    def strip(row: Any, place: int) -> Any:
        if (isinstance(row, dict) and next(iter(row), None) == "ref"
                and row["ref"] == sequential_ref(counter + place)):
            return {k: v for k, v in row.items() if k != "ref"}
        return row

    return _rebuilt(node, strip), counter + len(scenarios)


def _with_sequential_refs(node: Any, counter: int) -> tuple[Any, int]:
    scenarios = _scenarios_of(node)
    if scenarios is None:
        return node, counter

    def restore(row: Any, place: int) -> Any:
        if isinstance(row, dict) and "ref" not in row:
            return {"ref": sequential_ref(counter + place), **row}
        return row

    return _rebuilt(node, restore), counter + len(scenarios)
