"""Signed checkpoints: what is signed, when, and the refusal to sign a tree that forks from the last one.

External checks:
  [RFC6962]  RFC 6962 section 2.1: the Merkle Tree Hash MTH is recomputed from its recursive
             definition (tests/records/support.py: mth), independently of ledger.chain.merkle,
             which works from stored subtrees.
  [hash-tree] Hackage hash-tree 0.0.0 documentation: a published RFC 6962 root for three leaves,
             which the independent MTH reproduces.
  [C2SP]     c2sp.org/signed-note v1.0.0 and c2sp.org/tlog-checkpoint: the note text is
             "<origin>\\n<size>\\n<base64 root>\\n", a blank line, then "— <name> <base64(key ID || signature)>",
             with key ID = SHA-256(name || 0x0A || 0x01 || public key)[:4]; the signature is checked
             with the `cryptography` package's Ed25519 directly, not through ledger.chain.notes.
"""

import base64
import hashlib
import json
import logging
import math

import pytest
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PublicKey
from django.conf import settings as django_settings
from django.core.management import CommandError, call_command
from django.db import connection
from django.test.utils import CaptureQueriesContext

from ledger.chain import checkpoints, merkle, notes
from ledger.chain.models import Entry, EntryKind
from ledger.chain.services import entry_append
from ledger.chain.tasks import checkpoint_sign_due
from ledger.chain.verification import stored_nodes
from tests.records.support import identity_settings, instance_identity, ledger_leaves, mth  # noqa: F401

pytestmark = pytest.mark.django_db


@pytest.fixture(autouse=True)
def instance_keys(identity_settings):  # noqa: F811
    return identity_settings


def append(lab, count: int) -> list[Entry]:
    return [entry_append(kind=EntryKind.PUBLICATION_LINKED, payload={"n": number}, lab=lab) for number in range(count)]


def test_the_reference_mth_reproduces_a_published_example():
    # Hackage, hash-tree 0.0.0 (Data.HashTree haddock, Kazu Yamamoto): with the RFC 6962 settings,
    # `fromList ["0","1","2"]` has root 725d5230…1327, the empty tree e3b0c442…b855 (SHA-256 of "").
    assert mth([b"0", b"1", b"2"]).hex() == "725d5230db68f557470dc35f1d8865813acd7ebb07ad152774141decbae71327"
    assert mth([]).hex() == "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"


def test_a_checkpoint_signs_the_current_tree_and_is_itself_the_next_entry(lab):
    append(lab, 10)
    checkpoint = checkpoints.checkpoint_sign()
    entry = Entry.objects.get(seq=11)
    assert entry.kind == EntryKind.CHECKPOINT_SIGNED and checkpoint.entry_seq == 11
    payload = json.loads(entry.payload)
    expected_root = mth(ledger_leaves(10))
    assert (payload["size"], payload["root"], payload["origin"]) == (
        10,
        expected_root.hex(),
        checkpoints.log_signer().name,
    )
    text, _, _signatures = payload["note"].rpartition("\n\n")
    assert text + "\n" == f"{payload['origin']}\n10\n{base64.b64encode(expected_root).decode()}\n"


def test_the_note_signature_verifies_with_plain_ed25519(lab):
    append(lab, 3)
    note = checkpoints.checkpoint_sign().note
    text, _, signature_block = note.rpartition("\n\n")
    message = (text + "\n").encode()
    (line,) = signature_block.rstrip("\n").split("\n")
    assert line.startswith("\u2014 ")
    name, encoded = line[2:].split(" ")
    raw = base64.b64decode(encoded)
    vkey = checkpoints.log_verifier()
    public_key = vkey.public_key
    assert raw[:4] == hashlib.sha256(name.encode() + b"\n\x01" + public_key).digest()[:4]
    Ed25519PublicKey.from_public_bytes(public_key).verify(raw[4:], message)  # raises if invalid


def test_consecutive_checkpoints_are_consistent(lab):
    append(lab, 5)
    first = checkpoints.checkpoint_sign()
    append(lab, 7)
    second = checkpoints.checkpoint_sign()
    assert (first.size, second.size) == (5, 13)
    assert second.root_hash == mth(ledger_leaves(13))
    proof, old_root, new_root = checkpoints.consistency_proof(old_size=first.size, new_size=second.size)
    assert (old_root, new_root) == (first.root_hash, second.root_hash)
    assert merkle.verify_consistency(
        old_size=first.size, new_size=second.size, old_root=first.root_hash, new_root=second.root_hash, proof=proof
    )


def test_the_scheduled_task_signs_only_when_entries_other_than_the_last_checkpoint_exist(lab):
    assert checkpoint_sign_due() is None  # empty ledger
    append(lab, 3)
    assert checkpoint_sign_due() == 3
    assert checkpoint_sign_due() is None  # the only new entry is that checkpoint itself
    append(lab, 1)
    assert checkpoint_sign_due() == 5  # entries 1-3, the checkpoint (4), the new entry (5)
    assert Entry.objects.filter(kind=EntryKind.CHECKPOINT_SIGNED).count() == 2


def test_the_beat_schedule_runs_the_task_hourly_by_default():
    (job,) = [job for job in django_settings.CELERY_BEAT_SCHEDULE.values() if job["task"] == checkpoint_sign_due.name]
    assert job["schedule"] == 3600


def _forge_checkpoint(lab, *, size: int, root: bytes) -> None:
    # What a compromised or buggy earlier signer left behind: a checkpoint whose tree is not ours.
    impostor = notes.NoteSigner.generate(name=checkpoints.log_signer().name)
    note = notes.sign_note(
        text=notes.format_checkpoint(origin=impostor.name, size=size, root_hash=root), signer=impostor
    )
    entry_append(
        kind=EntryKind.CHECKPOINT_SIGNED,
        payload={
            "schema": checkpoints.CHECKPOINT_SCHEMA,
            "origin": impostor.name,
            "size": size,
            "root": root.hex(),
            "note": note,
        },
    )


def test_a_previous_checkpoint_with_another_root_is_refused_loudly(lab, caplog):
    append(lab, 4)
    _forge_checkpoint(lab, size=4, root=hashlib.sha256(b"not this log").digest())
    append(lab, 2)
    before = Entry.objects.count()
    with caplog.at_level(logging.CRITICAL, logger="ledger.chain.checkpoints"):
        with pytest.raises(checkpoints.CheckpointRefused, match="different root.*Nothing was signed"):
            checkpoints.checkpoint_sign()
    assert Entry.objects.count() == before
    assert any(record.levelno == logging.CRITICAL for record in caplog.records)
    with pytest.raises(checkpoints.CheckpointRefused):
        checkpoint_sign_due()  # the schedule refuses too, and the worker logs it every time


def test_a_previous_checkpoint_larger_than_the_log_is_refused(lab):
    append(lab, 2)
    _forge_checkpoint(lab, size=50, root=hashlib.sha256(b"x").digest())
    with pytest.raises(checkpoints.CheckpointRefused, match="already signed"):
        checkpoints.checkpoint_sign()


def test_signing_needs_the_log_key_and_an_entry(lab, settings, tmp_path):
    with pytest.raises(checkpoints.CheckpointRefused, match="empty"):
        checkpoints.checkpoint_sign()
    append(lab, 1)
    settings.FOREBOOK_IDENTITY_DIR = tmp_path / "nothing-here"
    with pytest.raises(checkpoints.LogKeyMissing, match="create_signing_identity"):
        checkpoints.checkpoint_sign()
    assert not Entry.objects.filter(kind=EntryKind.CHECKPOINT_SIGNED).exists()


def test_proofs_read_o_log_n_nodes_in_one_query(lab, monkeypatch):
    append(lab, 100)
    fetched: list[int] = []

    def counting(positions):
        fetched.append(len(positions))
        return stored_nodes(positions)

    monkeypatch.setattr(checkpoints, "stored_nodes", counting)
    with CaptureQueriesContext(connection) as queries:
        proofs, root = checkpoints.inclusion_proofs(seqs=[1, 37, 100], size=100)
    # One query for the size check, one for every node of all three proofs and the root.
    assert len(queries) == 2 and len(fetched) == 1
    # merkle's documented bound: at most 2 * ceil(log2 n) nodes per proof, popcount(n) for the root.
    assert fetched[0] <= 3 * 2 * math.ceil(math.log2(100)) + bin(100).count("1")
    assert root == mth(ledger_leaves(100))
    for seq, proof in proofs.items():
        leaf = merkle.leaf_hash(ledger_leaves(100)[seq - 1])
        assert merkle.verify_inclusion(leaf_hash=leaf, index=seq - 1, size=100, proof=proof, root=root)


# --- verify_log ------------------------------------------------------------------------------


def run_verify_log(path, capsys, *options) -> tuple[int, str]:
    try:
        call_command("verify_log", "--from-checkpoint", str(path), *options)
        code = 0
    except SystemExit as exit_:
        code = exit_.code
    return code, capsys.readouterr().out


def test_verify_log_passes_against_an_earlier_checkpoint(lab, tmp_path, capsys):
    append(lab, 6)
    saved = tmp_path / "checkpoint.note"
    saved.write_text(checkpoints.checkpoint_sign().note)
    append(lab, 9)
    code, out = run_verify_log(saved, capsys)
    assert code == 0, out
    assert "ok: the log of 16 entries" in out and "extends the saved checkpoint of size 6" in out


def test_verify_log_fails_against_a_forged_checkpoint(lab, tmp_path, capsys):
    append(lab, 6)
    signer = checkpoints.log_signer()
    saved = tmp_path / "forged.note"

    impostor = notes.NoteSigner.generate(name=signer.name)
    true_root = mth(ledger_leaves(6))
    saved.write_text(
        notes.sign_note(text=notes.format_checkpoint(origin=signer.name, size=6, root_hash=true_root), signer=impostor)
    )
    code, out = run_verify_log(saved, capsys)
    assert code == 1 and "signature does not verify" in out

    forked = notes.format_checkpoint(origin=signer.name, size=4, root_hash=hashlib.sha256(b"fork").digest())
    saved.write_text(notes.sign_note(text=forked, signer=signer))
    code, out = run_verify_log(saved, capsys)
    assert code == 1 and "does not extend the saved checkpoint of size 4" in out

    too_big = notes.format_checkpoint(origin=signer.name, size=60, root_hash=true_root)
    saved.write_text(notes.sign_note(text=too_big, signer=signer))
    code, out = run_verify_log(saved, capsys)
    assert code == 1 and "has only 6" in out


def test_verify_log_names_an_unreadable_file(tmp_path):
    with pytest.raises(CommandError, match="Cannot read"):
        call_command("verify_log", "--from-checkpoint", str(tmp_path / "missing.note"))


def test_sign_checkpoint_command_signs_now_and_saves_the_note(lab, tmp_path, capsys):
    append(lab, 3)
    saved = tmp_path / "checkpoint.txt"
    call_command("sign_checkpoint", "--out", str(saved))
    note = saved.read_text()
    assert note == capsys.readouterr().out
    assert note.splitlines()[1] == "3"  # the tree of the three entries; the checkpoint itself is entry 4
    assert Entry.objects.get(seq=4).kind == EntryKind.CHECKPOINT_SIGNED
    call_command("verify_log", "--from-checkpoint", str(saved))
