"""C2SP signed notes (c2sp.org/signed-note@v1.0.0) with Ed25519 keys, and checkpoint bodies
(c2sp.org/tlog-checkpoint).

A signed note is UTF-8 text ending in a newline, a blank line, then one or more lines
``— <key name> <base64(4-byte key ID || signature)>``. Only newline may appear among the
ASCII control characters, and the text is separated from the signatures by the *last*
blank line, so the text itself may contain blank lines.

Keys use the same string forms as Go's golang.org/x/mod/sumdb/note, so keys made there
work here and the other way round::

    verifier key  <name>+<8 hex digits key ID>+<base64(0x01 || 32-byte public key)>
    signer key    PRIVATE+KEY+<name>+<8 hex digits key ID>+<base64(0x01 || 32-byte seed)>
    key ID        first 4 bytes, big-endian, of SHA-256(name || 0x0A || 0x01 || public key)

``open_note`` follows the spec's rules on signatures: signatures from keys not given to it
(witness cosignatures, a rotated-out log key) are kept as unverified and never fail the
note; a signature from a given key that does not verify fails the whole note; a note with
no verified signature fails. When a note carries a checkpoint, the caller must still check
that the verified signature is the log's own key (the key name SHOULD equal the origin).

All base64 here is the standard alphabet with padding (RFC 4648 section 4), and this
module only accepts its canonical form, so one signature has exactly one spelling.
"""

from __future__ import annotations

import base64
import binascii
import hashlib
import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import NamedTuple

from cryptography.exceptions import InvalidSignature
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey, Ed25519PublicKey

ED25519_SIGNATURE_TYPE = 0x01
"""Signature type byte for Ed25519 in key IDs and key strings (signed-note, "Signature types")."""

MAX_SIGNATURES = 100
"""The spec requires accepting at least 16; 100 is Go's limit (common practice, no spec value)."""

MAX_TREE_SIZE = 2**64 - 1
"""Tree sizes are uint64 in RFC 6962 (section 3.5, TreeHeadSignature.tree_size)."""

_SIGNATURE_PREFIX = "\u2014 "  # em dash, space
_KEY_ID_PATTERN = re.compile(r"[0-9a-fA-F]{8}")
_TREE_SIZE_PATTERN = re.compile(r"0|[1-9][0-9]*")  # ASCII digits only; no sign, no leading zeros
_ED25519_KEY_SIZE = 32
_ED25519_SIGNATURE_SIZE = 64
_ROOT_HASH_SIZE = 32


class NoteError(ValueError):
    """Base class for every note, key and checkpoint problem in this module."""


class KeyFormatError(NoteError):
    """A verifier or signer key string, or a key name, is malformed."""


class MalformedNoteError(NoteError):
    """The note breaks the signed-note grammar; nothing in it can be trusted."""


class SignatureMismatchError(NoteError):
    """A signature from a trusted key does not verify: the text or the signature was altered."""


class UntrustedNoteError(NoteError):
    """The note is well formed but no trusted key signed it.

    ``text`` and ``signatures`` hold what was parsed, for diagnostics only: the spec says
    the text MUST be ignored unless a trusted signature verifies.
    """

    def __init__(self, message: str, *, text: str, signatures: tuple[NoteSignature, ...]):
        super().__init__(message)
        self.text = text
        self.signatures = signatures


class AmbiguousKeyError(NoteError):
    """Two different trusted keys share a key name and key ID."""


class CheckpointFormatError(NoteError):
    """A checkpoint body breaks the tlog-checkpoint format."""


# --- shared validation ---------------------------------------------------------------------


def is_valid_key_name(name: object) -> bool:
    """Key names are non-empty, with no Unicode space and no plus sign (signed-note, "Format")."""
    return (
        isinstance(name, str)
        and name != ""
        and "+" not in name
        and not any(character.isspace() for character in name)
        and _first_forbidden_character(name) is None
    )


def _first_forbidden_character(value: str) -> tuple[int, str] | None:
    """Offset and description of the first ASCII control character other than newline, or a
    lone surrogate (which cannot be UTF-8), if any."""
    for offset, character in enumerate(value):
        if (character < " " and character != "\n") or "\ud800" <= character <= "\udfff":
            return offset, f"U+{ord(character):04X}"
    return None


def _reject_forbidden_characters(value: str, *, what: str, error: type[NoteError]) -> None:
    found = _first_forbidden_character(value)
    if found is not None:
        offset, character = found
        raise error(
            f"{what} contains {character} at offset {offset}; signed notes must be valid UTF-8"
            " with no control characters except newline (U+000A)"
        )


def _decode_canonical_base64(text: str, *, what: str, error: type[NoteError]) -> bytes:
    try:
        raw = base64.b64decode(text, validate=True)
    except (binascii.Error, ValueError):
        raise error(f"{what} is not standard base64 (RFC 4648 section 4, with padding): {text!r}") from None
    if base64.b64encode(raw).decode("ascii") != text:
        raise error(f"{what} is not in canonical base64 form; re-encode it: {text!r}")
    return raw


def _encode_base64(raw: bytes) -> str:
    return base64.b64encode(raw).decode("ascii")


def _encode_key_data(key: bytes) -> str:
    """The key-string form of Ed25519 key material: base64(type byte || key)."""
    return _encode_base64(bytes([ED25519_SIGNATURE_TYPE]) + key)


# --- keys ----------------------------------------------------------------------------------


def ed25519_key_id(*, name: str, public_key: bytes) -> int:
    """SHA-256(name || 0x0A || 0x01 || public key)[:4] as a big-endian integer (signed-note)."""
    digest = hashlib.sha256(name.encode("utf-8") + b"\n" + bytes([ED25519_SIGNATURE_TYPE]) + bytes(public_key)).digest()
    return int.from_bytes(digest[:4], "big")


def _require_key_name(name: object) -> None:
    if not is_valid_key_name(name):
        raise KeyFormatError(
            f"key name {name!r} is invalid: it must be non-empty text without spaces, plus signs"
            " or control characters (a schema-less URL such as 'ledger.example/log' is recommended)"
        )


def _parse_key_fields(fields: list[str], *, what: str, layout: str) -> tuple[str, int, bytes]:
    """Name, key ID and 32-byte Ed25519 key material from the last three '+' fields."""
    if len(fields) != 3:
        raise KeyFormatError(f"{what} must look like {layout}")
    name, key_id_hex, encoded = fields
    _require_key_name(name)
    if not _KEY_ID_PATTERN.fullmatch(key_id_hex):
        raise KeyFormatError(f"{what} key ID must be 8 hexadecimal digits; got {key_id_hex!r}")
    raw = _decode_canonical_base64(encoded, what=f"{what} key data", error=KeyFormatError)
    if not raw or raw[0] != ED25519_SIGNATURE_TYPE:
        found = f"0x{raw[0]:02x}" if raw else "nothing"
        raise KeyFormatError(f"{what} has signature type {found}; only Ed25519 (0x01) keys are supported")
    if len(raw) != 1 + _ED25519_KEY_SIZE:
        raise KeyFormatError(
            f"{what} holds {len(raw) - 1} key bytes after the type byte; Ed25519 keys are {_ED25519_KEY_SIZE}"
        )
    return name, int(key_id_hex, 16), raw[1:]


@dataclass(frozen=True)
class NoteVerifier:
    """A trusted Ed25519 public key under a key name."""

    name: str
    public_key: bytes

    def __post_init__(self):
        _require_key_name(self.name)
        if not isinstance(self.public_key, bytes) or len(self.public_key) != _ED25519_KEY_SIZE:
            raise KeyFormatError(f"an Ed25519 public key is {_ED25519_KEY_SIZE} bytes; got {self.public_key!r}")

    @property
    def key_id(self) -> int:
        return ed25519_key_id(name=self.name, public_key=self.public_key)

    @classmethod
    def from_key_string(cls, verifier_key: str) -> NoteVerifier:
        """Parse ``<name>+<hex key ID>+<base64(0x01 || public key)>``; the key ID must match."""
        if not isinstance(verifier_key, str):
            raise KeyFormatError(f"a verifier key is a string; got {type(verifier_key).__name__}")
        layout = "<name>+<8 hex digits>+<base64 of 0x01 and the 32-byte public key>"
        # maxsplit: the base64 part may itself contain '+'; names and IDs never do.
        name, key_id, public_key = _parse_key_fields(verifier_key.split("+", 2), what="verifier key", layout=layout)
        verifier = cls(name=name, public_key=public_key)
        if verifier.key_id != key_id:
            raise KeyFormatError(
                f"verifier key ID {key_id:08x} does not match its name and public key (expected"
                f" {verifier.key_id:08x}); the key string was altered or mistyped"
            )
        return verifier

    def to_key_string(self) -> str:
        return f"{self.name}+{self.key_id:08x}+{_encode_key_data(self.public_key)}"

    def verify(self, *, message: bytes, signature: bytes) -> bool:
        if len(signature) != _ED25519_SIGNATURE_SIZE:
            return False
        try:
            Ed25519PublicKey.from_public_bytes(self.public_key).verify(signature, message)
        except (InvalidSignature, ValueError):
            return False
        return True


class NoteSigner:
    """An Ed25519 signing key under a key name. Keep ``to_private_key_string()`` secret."""

    def __init__(self, *, name: str, seed: bytes):
        _require_key_name(name)
        if not isinstance(seed, bytes) or len(seed) != _ED25519_KEY_SIZE:
            raise KeyFormatError(f"an Ed25519 private key seed is {_ED25519_KEY_SIZE} bytes")
        self.name = name
        self._seed = seed
        self._private_key = Ed25519PrivateKey.from_private_bytes(seed)
        self.verifier = NoteVerifier(name=name, public_key=self._private_key.public_key().public_bytes_raw())

    def __repr__(self) -> str:  # never show the seed
        return f"NoteSigner(name={self.name!r}, key_id={self.key_id:08x})"

    @property
    def key_id(self) -> int:
        return self.verifier.key_id

    @classmethod
    def generate(cls, *, name: str) -> NoteSigner:
        return cls(name=name, seed=Ed25519PrivateKey.generate().private_bytes_raw())

    @classmethod
    def from_private_key_string(cls, signer_key: str) -> NoteSigner:
        """Parse ``PRIVATE+KEY+<name>+<hex key ID>+<base64(0x01 || seed)>``; the ID must match."""
        if not isinstance(signer_key, str):
            raise KeyFormatError(f"a signer key is a string; got {type(signer_key).__name__}")
        layout = "PRIVATE+KEY+<name>+<8 hex digits>+<base64 of 0x01 and the 32-byte seed>"
        fields = signer_key.split("+", 4)
        if fields[:2] != ["PRIVATE", "KEY"]:
            raise KeyFormatError(f"a signer key must look like {layout}")
        name, key_id, seed = _parse_key_fields(fields[2:], what="signer key", layout=layout)
        signer = cls(name=name, seed=seed)
        if signer.key_id != key_id:
            raise KeyFormatError(
                f"signer key ID {key_id:08x} does not match its name and the public key"
                f" derived from its seed (expected {signer.key_id:08x});"
                " the key string was altered or mistyped"
            )
        return signer

    def to_private_key_string(self) -> str:
        return f"PRIVATE+KEY+{self.name}+{self.key_id:08x}+{_encode_key_data(self._seed)}"

    def sign(self, message: bytes) -> bytes:
        return self._private_key.sign(message)


# --- notes ---------------------------------------------------------------------------------


@dataclass(frozen=True)
class NoteSignature:
    """One signature line; ``encoded`` is the base64 exactly as written in the note."""

    name: str
    key_id: int
    encoded: str

    @property
    def signature(self) -> bytes:
        """The signature bytes after the 4-byte key ID."""
        return base64.b64decode(self.encoded)[4:]

    @property
    def line(self) -> str:
        return f"{_SIGNATURE_PREFIX}{self.name} {self.encoded}\n"


class OpenedNote(NamedTuple):
    text: str
    verified_signatures: tuple[NoteSignature, ...]
    unverified_signatures: tuple[NoteSignature, ...]
    """Signatures by keys the caller did not pass (e.g. witness cosignatures), kept unchecked."""


def _require_note_text(text: object) -> None:
    if not isinstance(text, str):
        raise MalformedNoteError(f"note text must be a str; got {type(text).__name__}")
    if not text.endswith("\n"):
        raise MalformedNoteError("note text must end with a newline (U+000A); append '\\n'")
    _reject_forbidden_characters(text, what="note text", error=MalformedNoteError)


def sign_note(*, text: str, signer: NoteSigner) -> str:
    """The signed note: ``text``, a blank line, and ``signer``'s signature line."""
    _require_note_text(text)
    signature = signer.sign(text.encode("utf-8"))
    encoded = _encode_base64(signer.key_id.to_bytes(4, "big") + signature)
    return f"{text}\n{NoteSignature(name=signer.name, key_id=signer.key_id, encoded=encoded).line}"


def _parse_signature_line(line: str, *, number: int) -> NoteSignature:
    where = f"signature line {number}"
    if not line.startswith(_SIGNATURE_PREFIX):
        raise MalformedNoteError(f"{where} must start with an em dash (U+2014) and a space: {line!r}")
    name, separator, encoded = line[len(_SIGNATURE_PREFIX) :].partition(" ")
    if not separator or not is_valid_key_name(name):
        raise MalformedNoteError(f"{where} must be '— <key name> <base64 signature>' with a valid key name: {line!r}")
    raw = _decode_canonical_base64(encoded, what=where, error=MalformedNoteError)
    if len(raw) < 5:
        raise MalformedNoteError(f"{where} holds {len(raw)} bytes; it needs a 4-byte key ID and a signature")
    return NoteSignature(name=name, key_id=int.from_bytes(raw[:4], "big"), encoded=encoded)


def _split_note(note: str) -> tuple[str, list[NoteSignature]]:
    separator = note.rfind("\n\n")
    if separator < 0:
        raise MalformedNoteError(
            "no blank line before the signatures; a signed note is text ending in a newline,"
            " a blank line, then one or more '— <key name> <signature>' lines"
        )
    text, block = note[: separator + 1], note[separator + 2 :]
    if not block.endswith("\n"):
        raise MalformedNoteError("the signature lines must be non-empty and end with a newline")
    lines = block[:-1].split("\n")
    if len(lines) > MAX_SIGNATURES:
        raise MalformedNoteError(f"note has {len(lines)} signature lines; at most {MAX_SIGNATURES} are accepted")
    return text, [_parse_signature_line(line, number=number) for number, line in enumerate(lines, start=1)]


def _index_verifiers(verifiers: Iterable[NoteVerifier]) -> dict[tuple[str, int], NoteVerifier]:
    index: dict[tuple[str, int], NoteVerifier] = {}
    for verifier in verifiers:
        known = index.setdefault((verifier.name, verifier.key_id), verifier)
        if known != verifier:
            raise AmbiguousKeyError(
                f"two different trusted keys are both named {verifier.name}+{verifier.key_id:08x};"
                " remove the one that does not belong to that signer"
            )
    return index


def open_note(*, note: str | bytes, verifiers: Iterable[NoteVerifier]) -> OpenedNote:
    """Parse ``note`` and verify every signature made by one of ``verifiers``.

    Raises ``MalformedNoteError`` for grammar errors, ``SignatureMismatchError`` when a
    trusted key's signature fails, and ``UntrustedNoteError`` when none verified.
    """
    if isinstance(note, bytes):
        try:
            note = note.decode("utf-8")
        except UnicodeDecodeError as exc:
            raise MalformedNoteError(f"note is not valid UTF-8 (byte {exc.start}); signed notes are UTF-8") from None
    if not isinstance(note, str):
        raise MalformedNoteError(f"note must be str or bytes; got {type(note).__name__}")
    _reject_forbidden_characters(note, what="note", error=MalformedNoteError)
    text, signatures = _split_note(note)
    trusted = _index_verifiers(verifiers)

    message = text.encode("utf-8")
    verified: dict[tuple[str, int], NoteSignature] = {}
    unverified: list[NoteSignature] = []
    for signature in signatures:
        verifier = trusted.get((signature.name, signature.key_id))
        if verifier is None:
            if signature not in unverified:
                unverified.append(signature)
            continue
        # Every signature from a trusted key is checked, repeats included: the spec says
        # verifiers MUST verify signatures whose name and key ID match a known key.
        if not verifier.verify(message=message, signature=signature.signature):
            raise SignatureMismatchError(
                f"the signature by {signature.name}+{signature.key_id:08x} does not verify:"
                " the note text or the signature was altered; discard this note"
            )
        verified.setdefault((signature.name, signature.key_id), signature)
    if not verified:
        found = ", ".join(f"{s.name}+{s.key_id:08x}" for s in signatures)
        expected = ", ".join(f"{name}+{key_id:08x}" for name, key_id in trusted) or "none"
        raise UntrustedNoteError(
            f"no trusted key signed this note (signed by: {found}; trusted: {expected});"
            " pass the verifier key of the expected signer",
            text=text,
            signatures=tuple(signatures),
        )
    return OpenedNote(
        text=text,
        verified_signatures=tuple(verified.values()),
        unverified_signatures=tuple(unverified),
    )


# --- checkpoints ---------------------------------------------------------------------------


@dataclass(frozen=True)
class Checkpoint:
    origin: str
    size: int
    root_hash: bytes
    extensions: tuple[str, ...] = ()


def _require_checkpoint_line(value: object, *, what: str) -> None:
    if not isinstance(value, str) or value == "" or "\n" in value:
        raise CheckpointFormatError(f"{what} must be one non-empty line of text; got {value!r}")
    _reject_forbidden_characters(value, what=what, error=CheckpointFormatError)


def format_checkpoint(*, origin: str, size: int, root_hash: bytes, extensions: Sequence[str] = ()) -> str:
    """The checkpoint note text: origin, decimal tree size, base64 root hash, extension lines.

    The spec recommends (without requiring) an origin that is a schema-less URL with no
    spaces or plus signs, and equal to the log's key name.
    """
    _require_checkpoint_line(origin, what="origin")
    if not isinstance(size, int) or isinstance(size, bool) or not 0 <= size <= MAX_TREE_SIZE:
        raise CheckpointFormatError(f"tree size must be an integer from 0 to 2**64 - 1; got {size!r}")
    if not isinstance(root_hash, bytes) or len(root_hash) != _ROOT_HASH_SIZE:
        raise CheckpointFormatError(f"root hash must be {_ROOT_HASH_SIZE} bytes (SHA-256); got {root_hash!r}")
    for number, extension in enumerate(extensions, start=1):
        _require_checkpoint_line(extension, what=f"extension line {number}")
    return "".join(f"{line}\n" for line in [origin, str(size), _encode_base64(root_hash), *extensions])


def parse_checkpoint(text: str) -> Checkpoint:
    """Parse and validate a checkpoint note text (as returned in ``OpenedNote.text``)."""
    if not isinstance(text, str) or not text.endswith("\n"):
        raise CheckpointFormatError("a checkpoint is note text and must end with a newline (U+000A)")
    lines = text[:-1].split("\n")
    if len(lines) < 3:
        raise CheckpointFormatError(
            f"a checkpoint needs at least 3 lines (origin, tree size, root hash); got {len(lines)}"
        )
    for number, line in enumerate(lines, start=1):
        _require_checkpoint_line(line, what=f"checkpoint line {number}")
    origin, size_text, root_text, *extensions = lines
    # Length first: int() of thousands of digits is slow (and capped by Python itself).
    if (
        len(size_text) > len(str(MAX_TREE_SIZE))
        or not _TREE_SIZE_PATTERN.fullmatch(size_text)
        or int(size_text) > MAX_TREE_SIZE
    ):
        raise CheckpointFormatError(
            f"tree size must be ASCII decimal digits without sign or leading zeros, at most"
            f" 2**64 - 1; got {size_text!r}"
        )
    root_hash = _decode_canonical_base64(root_text, what="root hash", error=CheckpointFormatError)
    if len(root_hash) != _ROOT_HASH_SIZE:
        raise CheckpointFormatError(f"root hash must decode to {_ROOT_HASH_SIZE} bytes; got {len(root_hash)}")
    return Checkpoint(origin=origin, size=int(size_text), root_hash=root_hash, extensions=tuple(extensions))
