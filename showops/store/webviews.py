"""Read-only queries the web pages need that no other area's store provides.

Kept apart from ``store/show.py`` (the show engineer's) so the two can change without
touching each other; everything here only reads.
"""

from __future__ import annotations

import sqlite_utils

from showops.errors import NotFound


def rigs(db: sqlite_utils.Database) -> list[dict]:
    """Every rig on record: ``slug``, ``name``, ``kind``, ``versions`` (count), ``version`` (latest
    sha256), ``added_at`` (of the latest), ``text`` (the latest file's text)."""
    rows = db.execute(
        "SELECT r.slug, r.name, r.kind, COUNT(v.id), "
        "(SELECT sha256 FROM rig_version WHERE rig_slug = r.slug ORDER BY id DESC LIMIT 1), "
        "(SELECT added_at FROM rig_version WHERE rig_slug = r.slug ORDER BY id DESC LIMIT 1), "
        "(SELECT text FROM rig_version WHERE rig_slug = r.slug ORDER BY id DESC LIMIT 1) "
        "FROM rig r LEFT JOIN rig_version v ON v.rig_slug = r.slug GROUP BY r.slug ORDER BY r.name")
    return [{"slug": s, "name": n, "kind": k, "versions": c, "version": v, "added_at": a, "text": t}
            for s, n, k, c, v, a, t in rows]


def rig(db: sqlite_utils.Database, slug: str) -> dict:
    """One rig as in :func:`rigs`, with ``history``: every version (``id``, ``sha256``, ``added_at``), newest first.

    :raises NotFound: for an unknown rig.
    """
    found = [r for r in rigs(db) if r["slug"] == slug]
    if not found:
        raise NotFound(f"no rig {slug!r} on record")
    result = found[0]
    result["history"] = [{"id": i, "sha256": s, "added_at": a} for i, s, a in db.execute(
        "SELECT id, sha256, added_at FROM rig_version WHERE rig_slug = ? ORDER BY id DESC", [slug])]
    return result
