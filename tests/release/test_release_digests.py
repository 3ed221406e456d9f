"""Canonical JSON, record digests, audit event hashes, signature meanings, separation of duties."""

from __future__ import annotations

import hashlib
from datetime import datetime, timezone

import pytest

from service.release import (
    GENESIS_HASH, Actor, Meaning, SeparationOfDuties, canonical_json, check_reviewer_did_not_measure, event_hash,
    meaning_allowed, record_digest, sha256_hex,
)


def test_sha256_of_abc_is_the_fips_180_2_example() -> None:
    # FIPS 180-2, appendix B.1: SHA-256("abc").
    assert sha256_hex(b"abc") == "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"


def test_canonical_json_sorts_keys_and_is_compact() -> None:
    assert canonical_json({"b": 1, "a": [1, 2, {"d": None, "c": "é"}]}) == '{"a":[1,2,{"c":"é","d":null}],"b":1}'


def test_canonical_json_refuses_nan() -> None:
    with pytest.raises(ValueError):
        canonical_json({"x": float("nan")})


def test_canonical_json_writes_datetimes_in_utc() -> None:
    naive = datetime(2026, 12, 2, 1, 2, 3, 4)
    aware = naive.replace(tzinfo=timezone.utc)
    assert canonical_json([naive]) == canonical_json([aware]) == '["2026-12-02T01:02:03.000004+00:00"]'


def test_record_digest_binds_type_and_content() -> None:
    d = record_digest("lot", {"id": 1, "x": 2})
    assert d == hashlib.sha256(b'{"content":{"id":1,"x":2},"record_type":"lot"}').hexdigest()
    assert d != record_digest("measurement", {"id": 1, "x": 2})  # cannot be moved to another kind of record
    assert d != record_digest("lot", {"id": 2, "x": 2})  # nor to another record
    assert d == record_digest("lot", {"x": 2, "id": 1})  # key order does not matter


def test_event_hash_chains_on_the_previous_hash() -> None:
    fields = {"seq": 1, "action": "lot.received"}
    h1 = event_hash(prev_hash=GENESIS_HASH, fields=fields)
    assert h1 != event_hash(prev_hash=h1, fields=fields)
    assert h1 != event_hash(prev_hash=GENESIS_HASH, fields={**fields, "action": "lot.released"})


def test_signature_meanings_per_record_type() -> None:
    assert meaning_allowed("lot", Meaning.released) and meaning_allowed("lot", "rejected")
    assert not meaning_allowed("lot", Meaning.approved)
    assert meaning_allowed("specification_version", Meaning.approved)
    assert not meaning_allowed("measurement", Meaning.released)
    assert not meaning_allowed("nothing", Meaning.approved)


def test_the_one_who_measured_cannot_review() -> None:
    ana = Actor(user_id=7, username="ana", printed_name="Ana Tester", roles=frozenset({"technician"}))
    with pytest.raises(SeparationOfDuties, match="Ana Tester"):
        check_reviewer_did_not_measure(reviewer=ana, measured_by={3, 7})
    check_reviewer_did_not_measure(reviewer=ana, measured_by={3})


def test_actor_is_frozen() -> None:
    a = Actor(user_id=1, username="x", printed_name="X")
    with pytest.raises(AttributeError):
        a.user_id = 2  # type: ignore[misc]
