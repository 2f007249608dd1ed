"""The hash chain's arithmetic, checked against outside definitions.

Sources:
- SHA-256 test vector "abc" -> ba7816bf...f20015ad: FIPS 180-4 / its example file
  (value from memory, also the first vector in RFC 6234 §8.5 "TEST1");
- JSON Canonicalization Scheme, RFC 8785 §3.2: object members sorted by key, no
  whitespace, strings with minimal escaping and non-ASCII characters as themselves
  (for strings, integers and null, Python's json with sort_keys, compact separators
  and ensure_ascii=False gives the same text: checked below on hand-written cases).
"""

from __future__ import annotations

import hashlib
import json

import pytest

from showops.live.chain import (CHAIN_FIELDS, GENESIS, Problem, canonical, canonical_detail, link_hash,
                                verify_chain)


def test_sha256_matches_the_published_vector():
    # FIPS 180-4 example "abc" (RFC 6234 TEST1), from memory.
    assert hashlib.sha256(b"abc").hexdigest() == (
        "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad")


@pytest.mark.parametrize("row, expected_part", [
    # RFC 8785 §3.2.2.2: strings minimal escaping; non-ASCII kept as itself
    ({"person_name": "Zoë Ó Briain"}, '"person_name":"Zoë Ó Briain"'),
    ({"detail": 'say "go"\n'}, '"detail":"say \\"go\\"\\n"'),
    ({"detail": "\u001f"}, '"detail":"\\u001f"'),
    ({"step_number": 12}, '"step_number":12'),
    ({"device_at": None}, '"device_at":null'),
])
def test_canonical_text_follows_rfc8785_for_our_values(row, expected_part):
    text = canonical(row).decode("utf-8")
    assert expected_part in text
    assert ", \"" not in text and "\": " not in text  # no whitespace between tokens
    keys = list(json.loads(text))
    assert keys == sorted(CHAIN_FIELDS)  # RFC 8785 §3.2.3: members sorted by key


def test_link_hash_is_sha256_of_prev_newline_canonical():
    # Independent re-computation: what an auditor with only hashlib would do.
    row = {"id": 1, "at_utc": "2026-11-20T19:31:02.000+00:00", "event": "cue_started", "cue_id": 4}
    body = json.dumps({f: row.get(f) for f in CHAIN_FIELDS}, sort_keys=True, separators=(",", ":"),
                      ensure_ascii=False).encode()
    assert link_hash(GENESIS, row) == hashlib.sha256(GENESIS.encode() + b"\n" + body).hexdigest()


@pytest.mark.parametrize("bad", [1.5, True, ["x"], {"a": 1}])
def test_canonical_refuses_values_without_one_text(bad):
    with pytest.raises(TypeError, match="must be text, an integer or null"):
        canonical({"detail": bad})


def test_canonical_detail_sorts_keys_and_keeps_text():
    assert canonical_detail({"b": 1, "a": "é"}) == '{"a":"é","b":1}'
    assert canonical_detail('{"z":1}') == '{"z":1}'
    assert canonical_detail(None) is None


def chain(n: int) -> list[dict]:
    rows, prev = [], GENESIS
    for i in range(1, n + 1):
        row = {"id": i, "at_utc": f"2026-11-20T19:{i:02d}:00.000+00:00", "event": "step_confirmed",
               "step_number": i, "person_name": "Ada"}
        row["prev_hash"], row["hash"] = prev, link_hash(prev, row)
        prev = row["hash"]
        rows.append(row)
    return rows


def test_an_intact_chain_passes_and_an_empty_log_too():
    rows = chain(6)
    assert verify_chain(rows, head_id=6, head_hash=rows[-1]["hash"]) is None
    assert verify_chain([], head_id=0, head_hash=GENESIS) is None


@pytest.mark.parametrize("k", range(1, 7))
def test_each_kind_of_damage_names_its_row(k):
    rows = chain(6)
    head = dict(head_id=6, head_hash=rows[-1]["hash"])
    changed = [dict(r) for r in rows]
    changed[k - 1]["person_name"] = "Bea"
    assert verify_chain(changed, **head) == Problem(k, "changed", verify_chain(changed, **head).message)
    removed = [r for r in rows if r["id"] != k]
    problem = verify_chain(removed, **head)
    assert (problem.row_id, problem.kind) == (k, "removed")
    assert f"row {k}" in problem.message


def test_a_valid_looking_row_appended_without_the_head_is_found():
    rows = chain(4)
    extra = chain(5)[-1]
    problem = verify_chain(rows + [extra], head_id=4, head_hash=rows[-1]["hash"])
    assert (problem.row_id, problem.kind) == (5, "inserted")
