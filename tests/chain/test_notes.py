"""Tests for ledger.chain.notes against published signed-note and checkpoint examples.

External sources used below:
  [note_test]  golang/mod, sumdb/note/note_test.go (keys, the signed message and its exact
               signed output, a second signer's signature, the malformed notes it rejects,
               the key manglings it rejects). The key names and the quoted sentence are
               that file's fixtures, used here unchanged as test vectors.
  [tlog_test]  golang/mod, sumdb/tlog/note_test.go (TestFormatTree / TestParseTree: a
               tree head body whose root is the RFC 6962 leaf hash of "hello world").
  [signed-note] C2SP/C2SP, signed-note.md (the example note at the top, with a blank line
               inside its text; the grammar and signature rules).
  [checkpoint] C2SP/C2SP, tlog-checkpoint.md (the example checkpoint and its line rules).
"""

from __future__ import annotations

import base64
import hashlib

import pytest

from ledger.chain.merkle import leaf_hash
from ledger.chain.notes import (
    AmbiguousKeyError,
    Checkpoint,
    CheckpointFormatError,
    KeyFormatError,
    MalformedNoteError,
    NoteSignature,
    NoteSigner,
    NoteVerifier,
    SignatureMismatchError,
    UntrustedNoteError,
    ed25519_key_id,
    format_checkpoint,
    open_note,
    parse_checkpoint,
    sign_note,
)

# --- [note_test] vectors -------------------------------------------------------------------

PETER_VERIFIER_KEY = "PeterNeumann+c74f20a3+ARpc2QcUPDhMQegwxbzhKqiBfsVkmqq/LDE4izWy10TW"
PETER_SIGNER_KEY = "PRIVATE+KEY+PeterNeumann+c74f20a3+AYEKFALVFGyNhPJEMzD1QIDr+Y7hfZx09iUvxdXHKDFz"
ENOCH_VERIFIER_KEY = "EnochRoot+af0cfe78+ATtqJ7zOtqQtYqOo0CpvDXNlMhV3HeJDpjrASKGLWdop"
TEXT = "If you think cryptography is the answer to your problem,\nthen you don't know what your problem is.\n"
PETER_ENCODED = "x08go/ZJkuBS9UG/SffcvIAQxVBtiFupLLr8pAcElZInNIuGUgYN1FFYC2pZSNXgKvqfqdngotpRZb6KE6RyyBwJnAM="
PETER_SIG_LINE = f"\u2014 PeterNeumann {PETER_ENCODED}\n"
ENOCH_ENCODED = "rwz+eBzmZa0SO3NbfRGzPCpDckykFXSdeX+MNtCOXm2/5n2tiOHp+vAF1aGrQ5ovTG01oOTGwnWLox33WWd1RvMc+QQ="
ENOCH_SIG_LINE = f"\u2014 EnochRoot {ENOCH_ENCODED}\n"
PETER = NoteSignature(
    name="PeterNeumann",
    key_id=0xC74F20A3,
    encoded=PETER_ENCODED,
)
ENOCH = NoteSignature(
    name="EnochRoot",
    key_id=0xAF0CFE78,
    encoded=ENOCH_ENCODED,
)


def _insert_abcd(line: str) -> str:
    """Go's sig[:60] + "ABCD" + sig[60:] slices bytes; the em dash is 3 bytes in UTF-8."""
    raw = line.encode("utf-8")
    return (raw[:60] + b"ABCD" + raw[60:]).decode("utf-8")


@pytest.fixture(scope="module")
def peter() -> NoteVerifier:
    return NoteVerifier.from_key_string(PETER_VERIFIER_KEY)


@pytest.fixture(scope="module")
def enoch() -> NoteVerifier:
    return NoteVerifier.from_key_string(ENOCH_VERIFIER_KEY)


# --- keys ----------------------------------------------------------------------------------


def test_published_keys_parse_and_round_trip(peter, enoch):
    assert (peter.name, peter.key_id) == ("PeterNeumann", 0xC74F20A3)
    assert (enoch.name, enoch.key_id) == ("EnochRoot", 0xAF0CFE78)
    assert peter.to_key_string() == PETER_VERIFIER_KEY
    signer = NoteSigner.from_private_key_string(PETER_SIGNER_KEY)
    assert signer.verifier == peter  # the seed derives exactly the published public key
    assert signer.to_private_key_string() == PETER_SIGNER_KEY
    assert "AYEK" not in repr(signer)


def _manglings(key: str) -> list[str]:
    """Every proper substring and every single-character increment, as TestNewVerifier does."""
    substrings = {key[i:j] for i in range(len(key) + 1) for j in range(i + 1, len(key) + 1)} - {key}
    increments = {key[:i] + chr(ord(key[i]) + 1) + key[i + 1 :] for i in range(len(key))}
    return sorted(substrings | increments)


def test_every_mangled_verifier_key_is_rejected():
    for mangled in _manglings(PETER_VERIFIER_KEY):
        with pytest.raises(KeyFormatError):
            NoteVerifier.from_key_string(mangled)


def test_every_mangled_signer_key_is_rejected():
    for mangled in _manglings(PETER_SIGNER_KEY):
        with pytest.raises(KeyFormatError):
            NoteSigner.from_private_key_string(mangled)


def test_keys_with_adjusted_ids_but_wrong_length_or_type_are_rejected():
    # [note_test] TestNewVerifier: "wrong length key, with adjusted key hash". Its base64 is
    # also non-canonical (the last 'Y' has padding bits set), which we refuse first.
    with pytest.raises(KeyFormatError, match="canonical"):
        NoteVerifier.from_key_string("PeterNeumann+cc469956+ARpc2QcUPDhMQegwxbzhKqiBfsVkmqq/LDE4izWy10TWBADKEY==")
    # The same idea with canonical base64: 33 key bytes, ID adjusted by the spec formula
    # SHA-256(name || 0x0A || key data)[:4], computed here with hashlib.
    key_data = base64.b64decode("ARpc2QcUPDhMQegwxbzhKqiBfsVkmqq/LDE4izWy10TW") + b"!"
    adjusted_id = hashlib.sha256(b"PeterNeumann\n" + key_data).digest()[:4].hex()
    with pytest.raises(KeyFormatError, match="33 key bytes after the type byte; Ed25519 keys are 32"):
        NoteVerifier.from_key_string(f"PeterNeumann+{adjusted_id}+{base64.b64encode(key_data).decode()}")
    # [note_test] "unknown algorithm, with adjusted key hash".
    with pytest.raises(KeyFormatError, match="signature type 0x65; only Ed25519"):
        NoteVerifier.from_key_string("PeterNeumann+173116ae+ZRpc2QcUPDhMQegwxbzhKqiBfsVkmqq/LDE4izWy10TW")


@pytest.mark.parametrize("name", ["", "a+b", "two words", "tab\there", "no\u00a0break", "line\nbreak"])
def test_invalid_key_names_are_rejected(name):
    # [signed-note] "Key names MUST be non-empty and MUST NOT contain any Unicode spaces or plus".
    with pytest.raises(KeyFormatError, match="key name"):
        NoteSigner(name=name, seed=bytes(32))


def test_key_id_follows_the_spec_formula(peter):
    assert ed25519_key_id(name="PeterNeumann", public_key=peter.public_key) == 0xC74F20A3


# --- signing and opening: the published note ---------------------------------------------


def test_sign_reproduces_the_published_signed_note():
    # [note_test] TestSign: Ed25519 is deterministic, so the output is byte-exact.
    signer = NoteSigner.from_private_key_string(PETER_SIGNER_KEY)
    assert sign_note(text=TEXT, signer=signer) == TEXT + "\n" + PETER_SIG_LINE


def test_open_keeps_signatures_from_unknown_keys(peter):
    opened = open_note(note=TEXT + "\n" + PETER_SIG_LINE + ENOCH_SIG_LINE, verifiers=[peter])
    assert opened.text == TEXT
    assert opened.verified_signatures == (PETER,)
    assert opened.unverified_signatures == (ENOCH,)


def test_open_verifies_both_published_signatures(peter, enoch):
    opened = open_note(note=TEXT + "\n" + PETER_SIG_LINE + ENOCH_SIG_LINE, verifiers=[peter, enoch])
    assert opened.verified_signatures == (PETER, ENOCH)
    assert opened.unverified_signatures == ()


def test_open_without_trusted_signature_fails_but_reports_what_it_saw():
    with pytest.raises(UntrustedNoteError, match="no trusted key signed this note") as caught:
        open_note(note=TEXT + "\n" + PETER_SIG_LINE + ENOCH_SIG_LINE, verifiers=[])
    assert caught.value.text == TEXT
    assert caught.value.signatures == (PETER, ENOCH)


def test_repeated_trusted_verifier_is_harmless(peter, enoch):
    # [note_test] "Check unused duplicated verifier".
    opened = open_note(note=TEXT + "\n" + PETER_SIG_LINE, verifiers=[enoch, peter, enoch])
    assert opened.verified_signatures == (PETER,)


def test_repeated_signatures_are_reported_once(peter):
    # [note_test] "Duplicated verified and unverified signatures".
    enoch_altered_line = _insert_abcd(ENOCH_SIG_LINE)
    note = TEXT + "\n" + PETER_SIG_LINE + PETER_SIG_LINE + ENOCH_SIG_LINE + ENOCH_SIG_LINE + enoch_altered_line
    opened = open_note(note=note, verifiers=[peter])
    assert opened.verified_signatures == (PETER,)
    enoch_altered = NoteSignature(
        name="EnochRoot",
        key_id=0xAF0CFE78,
        encoded="rwz+eBzmZa0SO3NbfRGzPCpDckykFXSdeX+MNtCOXm2/5n"
        + "ABCD"
        + "2tiOHp+vAF1aGrQ5ovTG01oOTGwnWLox33WWd1RvMc+QQ=",
    )
    assert opened.unverified_signatures == (ENOCH, enoch_altered)


def test_altered_signature_from_a_trusted_key_fails_the_note(peter):
    # [note_test] "Invalid signature".
    altered = _insert_abcd(PETER_SIG_LINE)
    with pytest.raises(SignatureMismatchError, match=r"PeterNeumann\+c74f20a3 does not verify"):
        open_note(note=TEXT + "\n" + altered, verifiers=[peter])


def test_a_bad_repeat_of_a_good_signature_still_fails(peter):
    # Stricter than Go, which skips repeats: the spec says every matching signature MUST be
    # verified.
    altered = _insert_abcd(PETER_SIG_LINE)
    with pytest.raises(SignatureMismatchError):
        open_note(note=TEXT + "\n" + PETER_SIG_LINE + altered, verifiers=[peter])


@pytest.mark.parametrize(
    "note",
    [
        # [note_test] TestOpen "Invalid encoded message syntax", in the same order.
        TEXT,
        TEXT + "\n",
        TEXT + "\n" + PETER_SIG_LINE[:-1],
        "\x01" + TEXT + "\n" + PETER_SIG_LINE,
        b"\xff" + (TEXT + "\n" + PETER_SIG_LINE).encode(),
        TEXT + "\n" + f"\u2014 Bad Name {PETER_ENCODED}",
        TEXT + "\n" + PETER_SIG_LINE + "Unexpected line.\n",
        # [note_test] "Check too many signatures": 101 lines.
        TEXT + "\n" + PETER_SIG_LINE * 101,
        # Grammar details of [signed-note] "Format".
        TEXT + "\n" + "- PeterNeumann " + PETER.encoded + "\n",  # hyphen, not em dash
        TEXT + "\n" + "\u2014 PeterNeumann\n",  # no signature
        TEXT + "\n" + "\u2014 PeterNeumann AAAA\n",  # 3 bytes: no room for key ID and signature
        TEXT + "\n" + "\u2014 PeterNeumann " + PETER.encoded.rstrip("=") + "\n",  # padding dropped
        TEXT.replace("\n", "\r\n", 1) + "\n" + PETER_SIG_LINE,  # carriage return is a control character
        TEXT + "\n" + PETER_SIG_LINE + "\n",  # blank line after the signatures
    ],
    ids=lambda note: repr(note[:12]) + f"...{len(note)}",
)
def test_malformed_notes_are_rejected(peter, note):
    with pytest.raises(MalformedNoteError):
        open_note(note=note, verifiers=[peter])


def test_go_accepts_the_note_bytes_too(peter):
    opened = open_note(note=(TEXT + "\n" + PETER_SIG_LINE).encode("utf-8"), verifiers=[peter])
    assert opened.text == TEXT


# --- signing and opening: fresh keys -------------------------------------------------------


@pytest.fixture(scope="module")
def log_signer() -> NoteSigner:
    return NoteSigner.generate(name="ledger.example/log")


@pytest.mark.parametrize(
    "text",
    [
        "one line\n",
        "first paragraph\n\nsecond paragraph after a blank line\n",
        "trailing blank lines belong to the text\n\n\n",
        "\u2014 a line that looks like a signature\n",
        "non-ASCII: Gr\u00fc\u00dfe, \u03b1\u03b2\u03b3, \u4f60\u597d\n",
    ],
)
def test_sign_then_open_round_trips(log_signer, text):
    opened = open_note(note=sign_note(text=text, signer=log_signer), verifiers=[log_signer.verifier])
    assert opened.text == text
    assert [(s.name, s.key_id) for s in opened.verified_signatures] == [(log_signer.name, log_signer.key_id)]


def test_generated_keys_round_trip_through_their_strings(log_signer):
    again = NoteSigner.from_private_key_string(log_signer.to_private_key_string())
    assert again.verifier == log_signer.verifier
    assert NoteVerifier.from_key_string(log_signer.verifier.to_key_string()) == log_signer.verifier


def test_tampered_text_fails(log_signer):
    note = sign_note(text="size 41\n", signer=log_signer)
    with pytest.raises(SignatureMismatchError):
        open_note(note=note.replace("41", "42"), verifiers=[log_signer.verifier])


def test_tampered_signature_fails(log_signer):
    note = sign_note(text="size 41\n", signer=log_signer)
    text, line = note.split("\n\n")
    name, encoded = line[2:-1].split(" ")
    raw = bytearray(base64.b64decode(encoded))
    raw[-1] ^= 1  # inside the Ed25519 signature, after the key ID
    tampered = f"{text}\n\n\u2014 {name} {base64.b64encode(bytes(raw)).decode()}\n"
    with pytest.raises(SignatureMismatchError):
        open_note(note=tampered, verifiers=[log_signer.verifier])


def test_signature_by_another_key_with_the_same_name_is_not_trusted(log_signer):
    # [signed-note] "Verifiers MUST ignore signatures from unknown keys, even if they share a
    # name or ID (but not both) with a known key."
    impostor = NoteSigner.generate(name=log_signer.name)
    with pytest.raises(UntrustedNoteError):
        open_note(note=sign_note(text="size 41\n", signer=impostor), verifiers=[log_signer.verifier])


def test_witness_cosignature_is_kept_without_failing(log_signer):
    # A cosignature line of another key type (0x04 timestamped cosignature: key ID, 8-byte
    # timestamp, 64-byte signature); this module does not check it but must keep it.
    cosignature = base64.b64encode(bytes.fromhex("0badf00d") + bytes(72)).decode()
    note = sign_note(text="size 41\n", signer=log_signer) + f"\u2014 witness.example/w1 {cosignature}\n"
    opened = open_note(note=note, verifiers=[log_signer.verifier])
    assert opened.unverified_signatures == (
        NoteSignature(name="witness.example/w1", key_id=0x0BADF00D, encoded=cosignature),
    )


def test_two_different_trusted_keys_with_one_name_and_id_are_refused():
    # The 32-bit key ID is an identifier, not a strong hash ([signed-note]); this colliding
    # pair was found by counting 32-byte values up from 0 until two IDs matched.
    first = NoteVerifier(name="ledger.example/log", public_key=(127498).to_bytes(32, "big"))
    second = NoteVerifier(name="ledger.example/log", public_key=(143564).to_bytes(32, "big"))
    assert first.key_id == second.key_id and first != second
    with pytest.raises(AmbiguousKeyError, match="remove the one that does not belong"):
        open_note(note=TEXT + "\n" + PETER_SIG_LINE, verifiers=[first, second])


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("no newline", "must end with a newline"),
        ("bell \x07\n", "U\\+0007 at offset 5"),
        ("\ud800\n", "U\\+D800"),
    ],
)
def test_sign_refuses_text_that_cannot_be_a_note(log_signer, text, message):
    with pytest.raises(MalformedNoteError, match=message):
        sign_note(text=text, signer=log_signer)


def test_published_spec_note_splits_at_the_last_blank_line():
    # [signed-note] example: its text contains a blank line; its key is not published, so
    # the note cannot be trusted, but the parse must keep the inner blank line in the text.
    note = (
        "Ognuno sta solo sul cuor della terra\n"
        "trafitto da un raggio di sole:\n"
        "\n"
        "ed \u00e8 subito sera.\n"
        "\n"
        "\u2014 quasimodo.example/salvatore NnugSzTjtVAewIS+Z/iJhUPeFDkO/5QQ2i5ddnGITLlC+EhfLW9oJ"
        "KONrMouFSQU0xMcXxj99ihAQwaqP3ZekRwNtIc=\n"
    )
    with pytest.raises(UntrustedNoteError) as caught:
        open_note(note=note, verifiers=[])
    assert caught.value.text == note[: note.rindex("\n\n") + 1]
    assert caught.value.text.count("\n\n") == 1
    (signature,) = caught.value.signatures
    assert signature.name == "quasimodo.example/salvatore"
    assert len(signature.signature) == 64


# --- checkpoints -----------------------------------------------------------------------------

TLOG_TREE = "go.sum database tree\n123456789012\nTszzRgjTG6xce+z2AG31kAXYKBgQVtCSCE40HmuwBb0=\n"
SPEC_CHECKPOINT = "example.com/behind-the-sofa\n20852163\nCsUYapGGPo4dkMgIAUqom/Xajj7h2fB2MPA3j2jxq2I=\n"


def test_format_reproduces_the_published_tree_head():
    # [tlog_test] TestFormatTree: the root there is RecordHash("hello world") = RFC 6962 leaf hash.
    body = format_checkpoint(origin="go.sum database tree", size=123456789012, root_hash=leaf_hash(b"hello world"))
    assert body == TLOG_TREE


def test_parse_reads_the_published_tree_head():
    # [tlog_test] TestParseTree.
    assert parse_checkpoint(TLOG_TREE) == Checkpoint(
        origin="go.sum database tree", size=123456789012, root_hash=leaf_hash(b"hello world")
    )
    # Its "junk on end" case, in checkpoint terms: a newline-terminated extension line.
    assert parse_checkpoint(TLOG_TREE + "JOE\n").extensions == ("JOE",)


def test_spec_checkpoint_parses_and_formats_back():
    # [checkpoint] example note text.
    checkpoint = parse_checkpoint(SPEC_CHECKPOINT)
    assert (checkpoint.origin, checkpoint.size, checkpoint.extensions) == (
        "example.com/behind-the-sofa",
        20852163,
        (),
    )
    assert base64.b64encode(checkpoint.root_hash).decode() == "CsUYapGGPo4dkMgIAUqom/Xajj7h2fB2MPA3j2jxq2I="
    assert (
        format_checkpoint(origin=checkpoint.origin, size=checkpoint.size, root_hash=checkpoint.root_hash)
        == SPEC_CHECKPOINT
    )


@pytest.mark.parametrize(
    ("text", "message"),
    [
        # [tlog_test] badTrees (the "not-" origin case is Go-specific and does not apply).
        (
            "go.sum database tree\n0xabcdef\nTszzRgjTG6xce+z2AG31kAXYKBgQVtCSCE40HmuwBb0=\n",
            "tree size",
        ),
        (
            TLOG_TREE.replace("Bb0=", "BTOOBIG="),
            "root hash",
        ),
        # [checkpoint] "Note text" rules.
        ("example.com/log\n7\n", "at least 3 lines"),
        ("example.com/log\n7\nCsUYapGGPo4dkMgIAUqom/Xajj7h2fB2MPA3j2jxq2I=", "end with a newline"),
        (
            "\n7\nCsUYapGGPo4dkMgIAUqom/Xajj7h2fB2MPA3j2jxq2I=\n",
            "line 1 must be one non-empty line",
        ),
        ("example.com/log\n007\nCsUYapGGPo4dkMgIAUqom/Xajj7h2fB2MPA3j2jxq2I=\n", "leading zeros"),
        ("example.com/log\n+7\nCsUYapGGPo4dkMgIAUqom/Xajj7h2fB2MPA3j2jxq2I=\n", "tree size"),
        ("example.com/log\n 7\nCsUYapGGPo4dkMgIAUqom/Xajj7h2fB2MPA3j2jxq2I=\n", "tree size"),
        ("example.com/log\n1_000\nCsUYapGGPo4dkMgIAUqom/Xajj7h2fB2MPA3j2jxq2I=\n", "tree size"),
        (
            "example.com/log\n\u0663\nCsUYapGGPo4dkMgIAUqom/Xajj7h2fB2MPA3j2jxq2I=\n",
            "ASCII decimal",
        ),
        (
            "example.com/log\n18446744073709551616\nCsUYapGGPo4dkMgIAUqom/Xajj7h2fB2MPA3j2jxq2I=\n",
            "2\\*\\*64 - 1",
        ),
        (
            "example.com/log\n" + "9" * 5000 + "\nCsUYapGGPo4dkMgIAUqom/Xajj7h2fB2MPA3j2jxq2I=\n",
            "tree size",
        ),
        ("example.com/log\n7\nCsUYapGGPo4dkMgIAUqom/Xajj7h2fB2MPA3j2jxq2I\n", "standard base64"),
        ("example.com/log\n7\nCsUYapGGPo4dkMgIAUqom/Xajj7h2fB2MPA3j2jxq2J=\n", "canonical"),
        ("example.com/log\n7\nAAAA\n", "decode to 32 bytes"),
        (
            "example.com/log\n7\nCsUYapGGPo4dkMgIAUqom/Xajj7h2fB2MPA3j2jxq2I=\n\next\n",
            "line 4 must be one non-empty",
        ),
        (
            "example.com/log\n7\nCsUYapGGPo4dkMgIAUqom/Xajj7h2fB2MPA3j2jxq2I=\nbad\x7f\x01\n",
            "U\\+0001",
        ),
    ],
)
def test_malformed_checkpoints_are_rejected(text, message):
    with pytest.raises(CheckpointFormatError, match=message):
        parse_checkpoint(text)


def test_the_largest_tree_size_is_accepted():
    body = format_checkpoint(origin="example.com/log", size=2**64 - 1, root_hash=bytes(32))
    assert parse_checkpoint(body).size == 2**64 - 1


@pytest.mark.parametrize(
    ("arguments", "message"),
    [
        ({"origin": "", "size": 1, "root_hash": bytes(32)}, "origin must be one non-empty line"),
        (
            {"origin": "a\nb", "size": 1, "root_hash": bytes(32)},
            "origin must be one non-empty line",
        ),
        ({"origin": "log", "size": -1, "root_hash": bytes(32)}, "tree size must be an integer"),
        ({"origin": "log", "size": 2**64, "root_hash": bytes(32)}, "tree size must be an integer"),
        ({"origin": "log", "size": 1, "root_hash": bytes(31)}, "root hash must be 32 bytes"),
        (
            {"origin": "log", "size": 1, "root_hash": bytes(32), "extensions": [""]},
            "extension line 1",
        ),
    ],
)
def test_format_refuses_what_parse_would_reject(arguments, message):
    with pytest.raises(CheckpointFormatError, match=message):
        format_checkpoint(**arguments)


def test_extensions_round_trip():
    body = format_checkpoint(origin="ledger.example/log", size=8, root_hash=bytes(32), extensions=["a b", "c"])
    assert parse_checkpoint(body).extensions == ("a b", "c")


def test_signed_checkpoint_of_the_published_eight_leaf_tree(log_signer):
    # Root for size 8 from transparency-dev/merkle testonly/constants.go (RootHashes()[8]).
    root = bytes.fromhex("5dc9da79a70659a9ad559cb701ded9a2ab9d823aad2f4960cfe370eff4604328")
    note = sign_note(text=format_checkpoint(origin=log_signer.name, size=8, root_hash=root), signer=log_signer)
    opened = open_note(note=note, verifiers=[log_signer.verifier])
    checkpoint = parse_checkpoint(opened.text)
    assert (checkpoint.origin, checkpoint.size, checkpoint.root_hash) == (log_signer.name, 8, root)
