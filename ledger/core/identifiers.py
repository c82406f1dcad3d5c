"""Identifier formats: ORCID iD, DOI, and the opaque codes Forebook uses in its URLs.

Pure functions: no Django, so the statistics-free parts of the app and the tests can share them.
"""

import re
import secrets

# Crockford's base-32 alphabet: no I, L, O or U, so a code read aloud or copied by hand survives.
CODE_ALPHABET = "0123456789ABCDEFGHJKMNPQRSTVWXYZ"

ORCID_PATTERN = re.compile(r"^(\d{4})-(\d{4})-(\d{4})-(\d{3}[\dX])$")
# DOI Handbook, section 2.2: the prefix is "10." followed by dot-separated digit groups, then "/",
# then a suffix of any printable characters. DOIs compare case-insensitively.
DOI_PATTERN = re.compile(r"^10\.\d{4,9}(\.\d+)*/\S+$", re.IGNORECASE)
DOI_URL_PREFIXES = ("https://doi.org/", "http://doi.org/", "https://dx.doi.org/", "http://dx.doi.org/", "doi:")


def random_code(length: int = 6) -> str:
    return "".join(secrets.choice(CODE_ALPHABET) for _ in range(length))


def orcid_check_digit(base_digits: str) -> str:
    """ISO 7064 MOD 11-2 check character over the first 15 digits of an ORCID iD."""
    total = 0
    for digit in base_digits:
        total = (total + int(digit)) * 2
    remainder = total % 11
    result = (12 - remainder) % 11
    return "X" if result == 10 else str(result)


def orcid_problem(value: str) -> str | None:
    """Why ``value`` is not a valid ORCID iD, or None when it is."""
    match = ORCID_PATTERN.match(value.strip().upper())
    if not match:
        return "An ORCID iD has four groups of four characters, like 0000-0002-1825-0097."
    digits = "".join(match.groups())
    if orcid_check_digit(digits[:15]) != digits[15]:
        return (
            "This ORCID iD's last character does not match its check digit (ISO 7064 MOD 11-2); "
            "copy the iD again from the researcher's ORCID record."
        )
    return None


def normalise_doi(value: str) -> str:
    """Strip resolver prefixes (https://doi.org/, doi:) and surrounding space; keep the DOI itself."""
    text = value.strip()
    for prefix in DOI_URL_PREFIXES:
        if text.lower().startswith(prefix):
            return text[len(prefix) :]
    return text


def doi_problem(value: str) -> str | None:
    """Why ``value`` is not a DOI, or None when it is (after normalise_doi)."""
    if not DOI_PATTERN.match(normalise_doi(value)):
        return "A DOI starts with 10., then a number, a slash and a suffix, like 10.1000/xyz123."
    return None
