"""The public log endpoints: no sign-in, proofs that verify, and nothing private in any response.

External checks: every returned proof is verified with ledger.chain.merkle.verify_inclusion /
verify_consistency (RFC 9162 sections 2.1.3.2 and 2.1.4.2, tested against published vectors in
tests/chain/test_merkle.py), and every root is recomputed with the RFC 6962 section 2.1 MTH
definition written out in tests/records/support.py (mth).
"""

import datetime as dt

import pytest
from django.urls import reverse

from ledger.chain import checkpoints, merkle, notes
from ledger.chain.models import Entry, EntryKind
from ledger.chain.services import entry_append
from tests.factories import complete_plan, sealed_study
from tests.records.support import identity_settings, instance_identity, ledger_leaves, mth  # noqa: F401

pytestmark = pytest.mark.django_db


@pytest.fixture(autouse=True)
def instance_keys(identity_settings):  # noqa: F811
    return identity_settings


def append(lab, count: int) -> None:
    for number in range(count):
        entry_append(kind=EntryKind.PUBLICATION_LINKED, payload={"n": number}, lab=lab)


def get(client, name: str, **params):
    return client.get(reverse(f"log:{name}"), params)


def test_no_checkpoint_yet_is_a_404_that_says_what_happens_next(client):
    response = get(client, "checkpoint-latest")
    assert response.status_code == 404 and "signed every hour" in response.json()["error"]
    assert get(client, "checkpoint-note").status_code == 404


def test_the_latest_checkpoint_as_json_and_as_the_plain_note_witnesses_fetch(client, lab):
    append(lab, 7)
    signed = checkpoints.checkpoint_sign()
    data = get(client, "checkpoint-latest").json()
    assert (data["size"], data["root_hash"], data["note"], data["entry_seq"]) == (
        7,
        mth(ledger_leaves(7)).hex(),
        signed.note,
        8,
    )
    note = get(client, "checkpoint-note")
    assert note["Content-Type"] == "text/plain; charset=utf-8"
    assert note.content.decode() == signed.note
    assert note["Access-Control-Allow-Origin"] == "*"
    key = get(client, "key").json()
    opened = notes.open_note(note=note.content, verifiers=[notes.NoteVerifier.from_key_string(key["vkey"])])
    assert notes.parse_checkpoint(opened.text).size == 7


def test_a_checkpoint_by_size(client, lab):
    append(lab, 3)
    checkpoints.checkpoint_sign()
    append(lab, 2)
    checkpoints.checkpoint_sign()
    response = client.get(reverse("log:checkpoint-size", kwargs={"size": 3}))
    assert response.json()["size"] == 3 and "immutable" in response["Cache-Control"]
    assert client.get(reverse("log:checkpoint-size", kwargs={"size": 4})).status_code == 404


def test_inclusion_proofs_by_hash_and_by_seq_verify_against_the_latest_checkpoint(client, lab):
    append(lab, 21)
    signed = checkpoints.checkpoint_sign()
    for entry in Entry.objects.filter(seq__lte=21):
        for params in ({"entry": entry.entry_hash}, {"seq": entry.seq}):
            data = get(client, "inclusion", **params).json()
            assert data["tree_size"] == 21 and data["checkpoint"]["size"] == 21
            assert bytes.fromhex(data["root_hash"]) == signed.root_hash
            assert merkle.verify_inclusion(
                leaf_hash=merkle.leaf_hash(bytes.fromhex(entry.entry_hash)),
                index=entry.seq - 1,
                size=21,
                proof=[bytes.fromhex(node) for node in data["proof"]],
                root=signed.root_hash,
            )


def test_inclusion_against_a_given_size(client, lab):
    append(lab, 12)
    checkpoints.checkpoint_sign()
    data = get(client, "inclusion", seq=5, size=9).json()
    assert data["checkpoint"] is None  # no checkpoint was signed for size 9; the root still verifies
    assert bytes.fromhex(data["root_hash"]) == mth(ledger_leaves(9))
    assert merkle.verify_inclusion(
        leaf_hash=merkle.leaf_hash(ledger_leaves(9)[4]),
        index=4,
        size=9,
        proof=[bytes.fromhex(node) for node in data["proof"]],
        root=mth(ledger_leaves(9)),
    )


@pytest.mark.parametrize(
    ("params", "status", "message"),
    [
        ({}, 400, "Name the entry"),
        ({"entry": "xyz"}, 400, "64 hexadecimal"),
        ({"entry": "ab" * 32}, 404, "No entry with hash"),
        ({"seq": "12"}, 400, "not in the tree of size 10"),
        ({"seq": "1", "size": "99"}, 400, "current size 12"),
        ({"seq": "-1"}, 400, "whole number"),
    ],
)
def test_inclusion_errors_say_what_to_change(client, lab, params, status, message):
    append(lab, 10)
    checkpoints.checkpoint_sign()
    append(lab, 1)  # entry 12 exists but comes after the latest checkpoint
    response = get(client, "inclusion", **params)
    assert response.status_code == status
    assert message in response.json()["error"]


def test_consistency_proofs_verify_between_two_checkpoints(client, lab):
    append(lab, 6)
    first = checkpoints.checkpoint_sign()
    append(lab, 10)
    second = checkpoints.checkpoint_sign()
    data = get(client, "consistency", **{"from": first.size}).json()  # "to" defaults to the latest checkpoint
    assert (data["old_size"], data["new_size"]) == (6, 17)
    assert (bytes.fromhex(data["old_root_hash"]), bytes.fromhex(data["new_root_hash"])) == (
        first.root_hash,
        second.root_hash,
    )
    assert merkle.verify_consistency(
        old_size=6,
        new_size=17,
        old_root=first.root_hash,
        new_root=second.root_hash,
        proof=[bytes.fromhex(node) for node in data["proof"]],
    )
    assert get(client, "consistency", **{"from": 9, "to": 4}).status_code == 400
    assert "older tree size" in get(client, "consistency").json()["error"]


def test_an_embargoed_study_never_appears_in_any_public_response(client, manager, lab):
    secret = "ZEBRA-7731 undisclosed hum phrasing"
    plan = complete_plan(title=f"Confidential {secret}", research_question=f"Does {secret} matter?")
    plan["dates"]["embargo_until"] = (dt.date.today() + dt.timedelta(days=365)).isoformat()
    study = sealed_study(member=manager, content=plan, title=plan["title"])
    assert study.embargo_until is not None
    signed = checkpoints.checkpoint_sign()
    entries = list(Entry.objects.filter(study=study))
    responses = [
        client.get(reverse("log:index")),
        get(client, "checkpoint-note"),
        get(client, "checkpoint-latest"),
        client.get(reverse("log:checkpoint-size", kwargs={"size": signed.size})),
        get(client, "key"),
        get(client, "consistency", **{"from": 1}),
    ]
    for entry in entries:
        responses += [get(client, "inclusion", entry=entry.entry_hash), get(client, "inclusion", seq=entry.seq)]
    forbidden = ["ZEBRA-7731", "undisclosed", study.code, lab.name, str(lab.uid), manager.user.username]
    forbidden += [entry.payload for entry in entries] + [entry.payload_hash for entry in entries]
    for response in responses:
        assert response.status_code == 200
        body = response.content.decode()
        for text in forbidden:
            assert text not in body, f"{text[:40]!r} leaked through {response.wsgi_request.get_full_path()}"


def test_the_key_endpoint_without_a_key_explains(client, settings, tmp_path):
    settings.FOREBOOK_IDENTITY_DIR = tmp_path / "none"
    response = get(client, "key")
    assert response.status_code == 503 and "create_signing_identity" in response.json()["error"]
