"""The entry hash preimage, checked against the written specification and RFC 8785."""

import datetime as dt
import hashlib
import json

import pytest
import rfc8785
from hypothesis import given
from hypothesis import strategies as st

from ledger.chain.hashing import (
    PayloadNotCanonicalisable,
    canonical_json,
    entry_digest,
    entry_header,
    entry_header_bytes,
    format_timestamp,
)


def test_rfc8785_appendix_example_serialises_as_published():
    # RFC 8785 (Rundgren, Jordan & Erdtman 2020), section 3.2: the worked example's input and
    # canonical output (the same pair is the "values" vector of the RFC authors' test data).
    source = (
        '{"numbers": [333333333.33333329, 1E30, 4.50, 2e-3, 0.000000000000000000000000001],'
        ' "string": "\\u20ac$\\u000F\\u000aA\'\\u0042\\u0022\\u005c\\\\\\"\\/",'
        ' "literals": [null, true, false]}'
    )
    expected = (
        '{"literals":[null,true,false],"numbers":[333333333.3333333,1e+30,4.5,0.002,1e-27],'
        '"string":"€$\\u000f\\nA\'B\\"\\\\\\\\\\"/"}'
    )
    assert canonical_json(json.loads(source)) == expected


def test_non_finite_numbers_cannot_be_sealed():
    with pytest.raises(PayloadNotCanonicalisable, match="finite"):
        canonical_json({"p": float("nan")})


def test_entry_hash_matches_the_documented_preimage():
    # The preimage written out by hand, as DEVELOPERS.md describes it for outside verifiers.
    moment = dt.datetime(2026, 12, 2, 1, 2, 3, 45, tzinfo=dt.UTC)
    preimage = (
        '{"author":7,"created_at":"2026-12-02T01:02:03.000045Z","kind":"PLAN_SEALED",'
        '"lab":"0b7c5a52-1d1e-4c55-9a8e-6a1f0e8b7c11","payload_sha256":"' + "ab" * 32 + '",'
        '"prev":"' + "0" * 64 + '","seq":1,"study":"Q3T8ZK","v":1}'
    ).encode()
    digest = entry_digest(
        seq=1,
        kind="PLAN_SEALED",
        lab_uid="0b7c5a52-1d1e-4c55-9a8e-6a1f0e8b7c11",
        study_code="Q3T8ZK",
        author_id=7,
        created_at=moment,
        payload_hash="ab" * 32,
        prev_hash="0" * 64,
    )
    assert digest == hashlib.sha256(preimage).hexdigest()


def test_timestamps_always_carry_six_fraction_digits_in_utc():
    plus_two = dt.timezone(dt.timedelta(hours=2))
    assert format_timestamp(dt.datetime(2026, 1, 1, 2, 0, tzinfo=plus_two)) == "2026-01-01T00:00:00.000000Z"


header_text = st.text(alphabet="0123456789ABCDEFGHJKMNPQRSTVWXYZabcdef-_:.", max_size=40)


@given(
    seq=st.integers(min_value=1, max_value=2**53 - 1),
    kind=st.sampled_from(["PLAN_SEALED", "RESULT_RECORDED", "CHECKPOINT_SIGNED"]),
    lab_uid=header_text,
    study_code=header_text,
    author_id=st.none() | st.integers(min_value=1, max_value=2**31),
    created_at=st.datetimes(timezones=st.just(dt.UTC)),
    payload_hash=st.text(alphabet="0123456789abcdef", min_size=64, max_size=64),
    prev_hash=st.text(alphabet="0123456789abcdef", min_size=64, max_size=64),
)
def test_fast_header_serialisation_equals_rfc8785(**fields):
    # The verifier's fast path must produce byte-identical output to the reference canonicaliser.
    assert entry_header_bytes(**fields) == rfc8785.dumps(entry_header(**fields))
