"""Shared helpers for the signed-record and checkpoint tests.

The signing identity is made once per test session in a temporary directory (RSA key generation
is slow), with the same service `create_signing_identity` uses. Every test that signs anything
points FOREBOOK_IDENTITY_DIR and FOREBOOK_RECORDS_DIR at temporary directories, so the suite never
writes to the real data directory.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import io
import re
import subprocess
from pathlib import Path

import pytest
from asn1crypto import keys as asn1_keys
from asn1crypto import x509 as asn1_x509
from cryptography import x509
from cryptography.hazmat.primitives import hashes, serialization
from cryptography.hazmat.primitives.asymmetric import rsa
from cryptography.x509.oid import ExtendedKeyUsageOID, NameOID
from django.test import override_settings

TEST_LOG_ORIGIN = "records.test.invalid/forebook-log"


def identity_overrides(*, identity_dir: Path, records_dir: Path) -> dict:
    return {
        "FOREBOOK_IDENTITY_DIR": identity_dir,
        "FOREBOOK_RECORDS_DIR": records_dir,
        "FOREBOOK_SIGNING_KEY": "",
        "FOREBOOK_SIGNING_CERT": "",
        "FOREBOOK_SIGNING_KEY_PASSPHRASE": "",
        "FOREBOOK_LOG_KEY": "",
        "FOREBOOK_TSA_URL": "",
    }


@pytest.fixture(scope="session")
def instance_identity(tmp_path_factory) -> Path:
    """A development identity made by the same service as `create_signing_identity`."""
    from ledger.records.signing import identity_create

    directory = tmp_path_factory.mktemp("identity")
    with override_settings(FOREBOOK_SITE_NAME="Forebook test instance"):
        identity_create(directory=directory, origin=TEST_LOG_ORIGIN)
    return directory


@pytest.fixture
def identity_settings(settings, instance_identity, tmp_path):
    """This test runs as an instance with the session identity and its own records directory."""
    for name, value in identity_overrides(identity_dir=instance_identity, records_dir=tmp_path / "records").items():
        setattr(settings, name, value)
    return settings


def record_certificate(identity_dir: Path) -> asn1_x509.Certificate:
    from pyhanko.keys import load_cert_from_pemder

    return load_cert_from_pemder(str(identity_dir / "record-signing.crt"))


def pdfsig_output(pdf_path: Path) -> str:
    # pdfsig exits 0 for a valid signature and for "Digest Mismatch" alike: read what it says.
    result = subprocess.run(["pdfsig", str(pdf_path)], capture_output=True, text=True, timeout=60)
    return result.stdout + result.stderr


def pdf_text(pdf_path: Path) -> str:
    result = subprocess.run(["pdftotext", str(pdf_path), "-"], capture_output=True, text=True, timeout=60, check=True)
    return result.stdout


def signed_byte_ranges(pdf: bytes) -> list[tuple[int, int]]:
    match = re.search(rb"/ByteRange\s*\[\s*(\d+)\s+(\d+)\s+(\d+)\s+(\d+)\s*\]", pdf)
    assert match, "the PDF has no /ByteRange"
    start1, length1, start2, length2 = (int(value) for value in match.groups())
    return [(start1, start1 + length1), (start2, start2 + length2)]


def flip_one_signed_byte(pdf: bytes) -> bytes:
    """Change one letter of the producer name, a byte inside the first signed range that keeps the
    PDF parseable, so validators get as far as comparing digests."""
    offset = pdf.index(b"WeasyPrint") + len(b"WeasyPrin")
    (first_start, first_end), _second = signed_byte_ranges(pdf)
    assert first_start <= offset < first_end
    tampered = bytearray(pdf)
    tampered[offset] = ord("T") if tampered[offset] != ord("T") else ord("t")
    return bytes(tampered)


def make_timestamp_authority() -> tuple[asn1_x509.Certificate, asn1_keys.PrivateKeyInfo]:
    """A throwaway RFC 3161 authority for pyHanko's in-process DummyTimeStamper.

    RFC 3161 section 2.3 (from memory): a TSA certificate carries exactly one extended key usage,
    id-kp-timeStamping, marked critical. (pyHanko 0.38 trusts the token without it too, so this
    only keeps the fixture realistic.)
    """
    key = rsa.generate_private_key(public_exponent=65537, key_size=2048)
    name = x509.Name([x509.NameAttribute(NameOID.COMMON_NAME, "Invented Test Timestamp Authority")])
    now = dt.datetime.now(dt.UTC)
    certificate = (
        x509.CertificateBuilder()
        .subject_name(name)
        .issuer_name(name)
        .public_key(key.public_key())
        .serial_number(x509.random_serial_number())
        .not_valid_before(now - dt.timedelta(hours=1))
        .not_valid_after(now + dt.timedelta(days=30))
        .add_extension(x509.BasicConstraints(ca=False, path_length=None), critical=True)
        .add_extension(
            x509.KeyUsage(
                digital_signature=True,
                content_commitment=True,
                key_encipherment=False,
                data_encipherment=False,
                key_agreement=False,
                key_cert_sign=False,
                crl_sign=False,
                encipher_only=False,
                decipher_only=False,
            ),
            critical=True,
        )
        .add_extension(x509.ExtendedKeyUsage([ExtendedKeyUsageOID.TIME_STAMPING]), critical=True)
        .sign(key, hashes.SHA256())
    )
    der_key = key.private_bytes(
        serialization.Encoding.DER, serialization.PrivateFormat.PKCS8, serialization.NoEncryption()
    )
    return (
        asn1_x509.Certificate.load(certificate.public_bytes(serialization.Encoding.DER)),
        asn1_keys.PrivateKeyInfo.load(der_key),
    )


def validate_with_pyhanko(pdf: bytes, trust_roots: list):
    from pyhanko.pdf_utils.reader import PdfFileReader
    from pyhanko.sign.validation import validate_pdf_signature
    from pyhanko_certvalidator import ValidationContext

    reader = PdfFileReader(io.BytesIO(pdf))
    context = ValidationContext(trust_roots=trust_roots, allow_fetching=False)
    return validate_pdf_signature(reader.embedded_signatures[0], context, ts_validation_context=context)


def mth(leaves: list[bytes]) -> bytes:
    """RFC 6962 section 2.1: MTH({}) = SHA-256(), MTH({d0}) = SHA-256(0x00 || d0),
    MTH(D[n]) = SHA-256(0x01 || MTH(D[0:k]) || MTH(D[k:n])) with k the largest power of two < n."""
    if not leaves:
        return hashlib.sha256(b"").digest()
    if len(leaves) == 1:
        return hashlib.sha256(b"\x00" + leaves[0]).digest()
    split = 1 << ((len(leaves) - 1).bit_length() - 1)
    return hashlib.sha256(b"\x01" + mth(leaves[:split]) + mth(leaves[split:])).digest()


def ledger_leaves(size: int) -> list[bytes]:
    """The first ``size`` leaf inputs of the ledger's log: raw entry hashes in sequence order."""
    from ledger.chain.models import Entry

    return [bytes.fromhex(value) for value in Entry.objects.order_by("seq").values_list("entry_hash", flat=True)[:size]]
