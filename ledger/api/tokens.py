"""The text of a personal API token: ``fb_<prefix>_<secret>``.

Pure functions, no database. The prefix (8 characters of Crockford's base-32 alphabet) is stored
in clear to find the token; the secret (40 characters of [0-9A-Za-z], about 238 bits) is never
stored. Both alphabets avoid "-" and "_", so a double-click selects the whole token.
"""

from __future__ import annotations

import hashlib
import re
import secrets
import string

from ledger.core.identifiers import CODE_ALPHABET, random_code

TOKEN_SCHEME = "fb"
PREFIX_LENGTH = 8
SECRET_LENGTH = 40
SECRET_ALPHABET = string.digits + string.ascii_letters
PREFIX_PATTERN = re.compile(rf"[{CODE_ALPHABET}]{{{PREFIX_LENGTH}}}")
TOKEN_PATTERN = re.compile(
    rf"^{TOKEN_SCHEME}_(?P<prefix>[{CODE_ALPHABET}]{{{PREFIX_LENGTH}}})_[{SECRET_ALPHABET}]{{{SECRET_LENGTH}}}$"
)


def new_prefix() -> str:
    return random_code(PREFIX_LENGTH)


def token_text(*, prefix: str) -> str:
    secret = "".join(secrets.choice(SECRET_ALPHABET) for _ in range(SECRET_LENGTH))
    return f"{TOKEN_SCHEME}_{prefix}_{secret}"


def token_prefix(*, text: str) -> str | None:
    """The prefix of a well-formed token text, or None."""
    match = TOKEN_PATTERN.match(text)
    return match.group("prefix") if match else None


def token_digest(*, text: str) -> str:
    # A fast hash is enough: the secret has ~238 random bits, so there is nothing to brute-force.
    return hashlib.sha256(text.encode("ascii")).hexdigest()
