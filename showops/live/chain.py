"""The hash chain of the show log: pure arithmetic, no database.

Each row of ``step_log`` stores ``prev_hash`` (the previous row's ``hash``, or
:data:`GENESIS` for the first row) and ``hash``::

    hash = SHA-256( prev_hash (64 lowercase hex chars, ASCII) || 0x0A || canonical(row) )

``canonical(row)`` is the UTF-8 JSON of the row's :data:`CHAIN_FIELDS` (the id
included, so a renumbered row no longer matches), with keys sorted, no spaces and
non-ASCII characters written as themselves. For the values a row holds (strings,
integers and null) this is the JSON Canonicalization Scheme of RFC 8785, so anyone
can re-check a log with a few lines in any language and no showops code.

Changing any field of a row breaks that row's hash; removing a row leaves a gap in
the ids and breaks the next row's link; inserting one breaks its own hash or the
link of the row after it. Removing the last rows is caught against the log's head
(the last id and hash, kept beside the log and checked by :func:`verify_chain`).
The chain shows that rows changed; it cannot stop someone who rewrites the whole
tail with fresh hashes. For that, write the head hash on the signed paper report.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass
from typing import Any, Iterable, Literal, Mapping

#: The ``prev_hash`` of the first row.
GENESIS = "0" * 64

#: The columns covered by a row's hash, in the order DEVELOPERS.md lists them.
CHAIN_FIELDS: tuple[str, ...] = (
    "id", "at_utc", "device_at", "event", "person_id", "person_name", "role", "device",
    "performance_id", "cue_id", "step_key", "step_number", "procedure_version",
    "rig_version", "client_id", "detail",
)

ProblemKind = Literal["changed", "removed", "inserted"]


@dataclass(frozen=True)
class Problem:
    """The first place where the log does not match its chain.

    ``row_id`` names the row (for a removed row: the id that is missing).
    """

    row_id: int
    kind: ProblemKind
    message: str

    def __str__(self) -> str:
        return self.message


def canonical(row: Mapping[str, Any]) -> bytes:
    """Return the canonical bytes of ``row``'s :data:`CHAIN_FIELDS` (missing ones are null).

    :raises TypeError: when a value is not a string, an integer or null (a float
        would not have one canonical text).
    """
    content = {}
    for name in CHAIN_FIELDS:
        value = row.get(name)
        if value is not None and not isinstance(value, (str, int)) or isinstance(value, bool):
            raise TypeError(f"step_log.{name} must be text, an integer or null, not {value!r}")
        content[name] = value
    return json.dumps(content, sort_keys=True, separators=(",", ":"), ensure_ascii=False).encode("utf-8")


def link_hash(prev_hash: str, row: Mapping[str, Any]) -> str:
    """Return the hash of ``row`` chained after ``prev_hash`` (lowercase hex)."""
    return hashlib.sha256(prev_hash.encode("ascii") + b"\n" + canonical(row)).hexdigest()


def canonical_detail(detail: Any) -> str | None:
    """Return ``detail`` as the canonical JSON text stored in ``step_log.detail``.

    A string is kept as given (it is already the stored text); ``None`` stays null.
    """
    if detail is None or isinstance(detail, str):
        return detail
    return json.dumps(detail, sort_keys=True, separators=(",", ":"), ensure_ascii=False)


def verify_chain(rows: Iterable[Mapping[str, Any]], *, head_id: int | None = None,
                 head_hash: str | None = None) -> Problem | None:
    """Check rows (in id order, starting at id 1) against their chain and the head.

    :param rows: every row of the log, each with :data:`CHAIN_FIELDS`, ``prev_hash``
        and ``hash``, ordered by ``id``.
    :param head_id: the last id the writer recorded (``None``/0 for an empty log).
    :param head_hash: the last hash the writer recorded.
    :returns: the first :class:`Problem`, or ``None`` when the log is intact.
    """
    expected_id = 1
    prev = GENESIS
    seen: dict[str, int] = {GENESIS: 0}  # hash -> id, to explain renumbered rows
    for row in rows:
        row_id = row["id"]
        if row_id != expected_id:
            if isinstance(row_id, int) and row_id > expected_id:
                return Problem(expected_id, "removed",
                               f"row {expected_id} is missing: row {row_id} follows row {expected_id - 1} "
                               f"(a row was removed)")
            return Problem(row_id, "inserted", f"row {row_id} is out of sequence after row {expected_id - 1} "
                                               f"(a row was inserted or renumbered)")
        own = link_hash(row["prev_hash"], row) if _is_hex64(row["prev_hash"]) else None
        if own != row["hash"]:
            return _renumbered(row, seen) or Problem(
                row_id, "changed", f"row {row_id} does not match its hash (the row was changed or inserted)")
        if row["prev_hash"] != prev:
            return Problem(row_id, "inserted",
                           f"row {row_id} does not follow row {row_id - 1}: its previous hash differs "
                           f"(a row was changed, inserted or removed before it)")
        prev = row["hash"]
        seen[prev] = row_id
        expected_id += 1
    last_id = expected_id - 1
    recorded = head_id or 0
    if recorded > last_id:
        return Problem(last_id + 1, "removed",
                       f"row {last_id + 1} is missing: the log ends at row {last_id} but its head "
                       f"records row {recorded} (rows were removed from the end)")
    if recorded < last_id:
        return Problem(recorded + 1, "inserted",
                       f"row {recorded + 1} was added outside the log's writer: the head records "
                       f"row {recorded} as the last")
    if last_id and head_hash != prev:
        return Problem(last_id + 1, "removed",
                       f"row {last_id + 1} is missing: the head records a last hash that no row has "
                       f"(the last row was removed and the head moved back, or row {last_id} was rewritten)")
    return None


def _renumbered(row: Mapping[str, Any], seen: dict[str, int]) -> Problem | None:
    """Explain a row whose hash matches under another id: rows were shifted.

    Someone who inserts (or removes) a row and renumbers the rows after it to close
    the gap leaves the later rows intact except for their ids. Name the row where
    the insertion or removal happened, not merely the first renumbered one.
    """
    row_id = row["id"]
    if not isinstance(row_id, int) or not _is_hex64(row["prev_hash"]):
        return None
    for delta in range(1, 9):
        for original in (row_id - delta, row_id + delta):
            if original < 1 or link_hash(row["prev_hash"], {**row, "id": original}) != row["hash"]:
                continue
            before = seen.get(row["prev_hash"])
            if original < row_id:
                at = (before + 1) if before is not None else row_id - delta
                return Problem(at, "inserted",
                               f"row {at} was inserted: row {row_id} was row {original} before the "
                               f"rows after it were renumbered")
            at = (before + 1) if before is not None else row_id
            return Problem(at, "removed",
                           f"row {at} was removed: row {row_id} was row {original} before the rows "
                           f"after it were renumbered")
    return None


def _is_hex64(value: Any) -> bool:
    return isinstance(value, str) and len(value) == 64 and all(c in "0123456789abcdef" for c in value)
