"""ORCID iD check characters, DOI syntax and the opaque codes used in URLs."""
import string

import pytest
from hypothesis import given
from hypothesis import strategies as st

from ledger.core.identifiers import (
    CODE_ALPHABET,
    doi_problem,
    normalise_doi,
    orcid_check_digit,
    orcid_problem,
    random_code,
)

# --- ORCID iD --------------------------------------------------------------------------------------------------
# ORCID support documentation, "Structure of the ORCID Identifier"
# (https://support.orcid.org/hc/en-us/articles/360006897674): 16 characters in four groups of four;
# the last is an ISO/IEC 7064:2003 MOD 11-2 check character over the first 15 digits, "X" meaning
# 10. Its worked examples: 0000-0002-1825-0097 (check 7) and 0000-0002-1694-233X (check X).
ORCID_EXAMPLES = [("000000021825009", "7"), ("000000021694233", "X")]


def iso7064_mod_11_2_weighted_sum(characters: str) -> int:
    """The standard's own formulation, independent of the recursive one in the app.

    ISO/IEC 7064 pure system MOD 11-2: weight the character in position i (counted from the right,
    the check character at i = 1) by 2**(i-1); a string with a correct check character has a
    weighted sum congruent to 1 modulo 11. From memory of the standard; confirmed on ORCID's two
    documented examples in test_the_weighted_sum_formulation_agrees_with_orcids_examples.
    """
    values = [10 if c == "X" else int(c) for c in characters]
    return sum(value * pow(2, position, 11) for position, value in enumerate(reversed(values))) % 11


@pytest.mark.parametrize(("base", "check"), ORCID_EXAMPLES)
def test_check_characters_of_orcids_documented_examples(base, check):
    assert orcid_check_digit(base) == check


@pytest.mark.parametrize(("base", "check"), ORCID_EXAMPLES)
def test_the_weighted_sum_formulation_agrees_with_orcids_examples(base, check):
    assert iso7064_mod_11_2_weighted_sum(base + check) == 1
    wrong = "0" if check != "0" else "1"
    assert iso7064_mod_11_2_weighted_sum(base + wrong) != 1


@given(st.text(alphabet=string.digits, min_size=15, max_size=15))
def test_check_character_satisfies_the_standards_congruence_for_any_digits(base):
    assert iso7064_mod_11_2_weighted_sum(base + orcid_check_digit(base)) == 1


@given(
    st.text(alphabet=string.digits, min_size=15, max_size=15),
    st.integers(min_value=0, max_value=14),
    st.integers(min_value=1, max_value=9),
)
def test_any_single_mistyped_digit_is_caught(base, position, shift):
    # Each weight 2**k is invertible modulo the prime 11 and a digit changes by less than 11, so a
    # single substitution always changes the weighted sum: MOD 11-2 catches every such typo.
    check = orcid_check_digit(base)
    typo = base[:position] + str((int(base[position]) + shift) % 10) + base[position + 1:]
    orcid_id = f"{typo[0:4]}-{typo[4:8]}-{typo[8:12]}-{typo[12:15]}{check}"
    assert orcid_problem(orcid_id) is not None


@pytest.mark.parametrize(
    "orcid_id", ["0000-0002-1825-0097", "0000-0002-1694-233X", "0000-0002-1694-233x", " 0000-0002-1825-0097 "]
)
def test_documented_orcid_ids_are_valid(orcid_id):
    assert orcid_problem(orcid_id) is None


def test_a_wrong_check_character_is_named_and_the_fix_given():
    problem = orcid_problem("0000-0002-1825-0098")
    assert "check digit" in problem and "ISO 7064 MOD 11-2" in problem and "copy the iD again" in problem


@pytest.mark.parametrize(
    "text", ["0000000218250097", "0000-0002-1825-009", "0000-0002-1825-00977", "0000-0002-1825-009Y", ""]
)
def test_a_malformed_orcid_id_is_told_the_shape(text):
    assert "like 0000-0002-1825-0097" in orcid_problem(text)


# --- DOI ---------------------------------------------------------------------------------------------------
# DOI Handbook, section 2.2 (Syntax): prefix "/" suffix; the prefix is the directory indicator "10."
# and a registrant code, optionally subdivided by "."; the suffix may hold any printable characters;
# DOI names are case-insensitive. Forebook requires at least four registrant-code digits, as the
# owners specified (10.NNNN). 10.1000 is the prefix of the Handbook's own examples.


@pytest.mark.parametrize(
    "doi",
    [
        "10.1000/182", "10.1000/xyz123", "10.1000.10/123456", "10.123456789/a", "10.1000/ABC-def_(1);2:3<4>",
        "10.1000/XYZ123",
    ],
)
def test_dois_in_handbook_syntax_are_accepted(doi):
    assert doi_problem(doi) is None


@pytest.mark.parametrize(
    "text", ["10.1000", "10.1000/", "10/182", "10.123/182", "11.1000/182", "10.1000a/182", "10.1000/sp ace", "", "182"],
)
def test_text_outside_the_syntax_is_refused_with_an_example(text):
    assert doi_problem(text) == "A DOI starts with 10., then a number, a slash and a suffix, like 10.1000/xyz123."


@pytest.mark.parametrize(
    ("typed", "doi"),
    [
        ("https://doi.org/10.1000/182", "10.1000/182"),
        ("http://doi.org/10.1000/182", "10.1000/182"),
        ("https://dx.doi.org/10.1000/182", "10.1000/182"),
        ("HTTPS://DOI.ORG/10.1000/182", "10.1000/182"),
        ("doi:10.1000/182", "10.1000/182"),
        ("DOI:10.1000/182", "10.1000/182"),
        ("  10.1000/182\n", "10.1000/182"),
        ("https://example.invalid/10.1000/182", "https://example.invalid/10.1000/182"),
    ],
)
def test_resolver_prefixes_are_dropped_whatever_their_case(typed, doi):
    assert normalise_doi(typed) == doi


def test_a_resolver_url_is_judged_by_the_doi_inside_it():
    assert doi_problem("https://doi.org/10.1000/182") is None
    assert doi_problem("https://doi.org/10.12/182") is not None


# --- opaque codes ------------------------------------------------------------------------------------------
# Douglas Crockford, "Base 32" (https://www.crockford.com/wrmg/base32.html): ten digits and 22
# letters, excluding I, L, O and U, so that codes survive being read aloud or copied by hand.
CROCKFORD = set(string.digits + string.ascii_uppercase) - set("ILOU")


def test_the_code_alphabet_is_crockfords_base_32():
    assert len(CODE_ALPHABET) == 32
    assert set(CODE_ALPHABET) == CROCKFORD


@pytest.mark.parametrize("length", [6, 10])
def test_random_codes_have_the_length_asked_and_only_alphabet_characters(length):
    codes = {random_code(length) for _ in range(200)}
    assert all(len(code) == length and set(code) <= CROCKFORD for code in codes)
    # 200 draws from 32**6 ≈ 1.07e9 values collide with probability below 2e-5.
    assert len(codes) == 200
