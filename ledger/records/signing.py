"""The instance's signing identity, and PAdES signing of record PDFs with pyHanko.

Two keys, kept in files outside the repository and never in the database:

* the **record signing key** and its X.509 certificate (PEM), which sign record PDFs
  (PAdES baseline B-B, or B-T when FOREBOOK_TSA_URL names a timestamp authority);
* the **log key**, an Ed25519 C2SP signer key (``PRIVATE+KEY+…``) that signs checkpoints
  (see ``ledger.chain.checkpoints``), with its public verifier key beside it.

FOREBOOK_SIGNING_KEY / FOREBOOK_SIGNING_CERT (and FOREBOOK_SIGNING_KEY_PASSPHRASE) name an
operator's own key and certificate; FOREBOOK_LOG_KEY an operator's log key. Unset, all of them
default to files in FOREBOOK_IDENTITY_DIR (under DATA_DIR), which
``python manage.py create_signing_identity`` fills with a self-signed *development* identity.
"""

from __future__ import annotations

import asyncio
import datetime as dt
import io
import os
import tempfile
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path

from asn1crypto import keys as asn1_keys
from asn1crypto import x509 as asn1_x509
from cryptography import x509
from cryptography.hazmat.primitives import hashes, serialization
from cryptography.hazmat.primitives.asymmetric import rsa
from cryptography.x509.oid import NameOID
from django.conf import settings
from pyhanko.keys import load_certs_from_pemder, load_private_key_from_pemder
from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter
from pyhanko.sign import fields, signers
from pyhanko.sign.timestamps import HTTPTimeStamper, TimeStamper
from pyhanko_certvalidator.registry import SimpleCertificateStore

from ledger.chain import checkpoints, notes

RECORD_KEY_FILE_NAME = "record-signing.key"
RECORD_CERT_FILE_NAME = "record-signing.crt"
LOG_VKEY_FILE_NAME = "log.vkey"
SIGNATURE_FIELD_NAME = "ForebookRecordSignature"
DEFAULT_LOG_ORIGIN = "localhost/forebook-log"
# RSA 3072: 128-bit security by NIST SP 800-57 Part 1's comparison table (from memory); RSA is what
# every PDF reader verifies (pdfsig checked in the tests).
RSA_KEY_BITS = 3072
DEVELOPMENT_CERT_DAYS = 730
PRIVATE_FILE_MODE = 0o600
IDENTITY_DIR_MODE = 0o700
RUN_CREATE = "run `python manage.py create_signing_identity`"


class SigningIdentityError(Exception):
    """The signing identity is missing, unreadable or inconsistent; the message says how to fix it."""


@dataclass(frozen=True)
class RecordIdentityPaths:
    key: Path
    cert: Path
    passphrase: bytes | None
    from_environment: bool


def identity_dir() -> Path:
    return Path(settings.FOREBOOK_IDENTITY_DIR)


def record_identity_paths() -> RecordIdentityPaths:
    key = settings.FOREBOOK_SIGNING_KEY
    cert = settings.FOREBOOK_SIGNING_CERT
    passphrase = settings.FOREBOOK_SIGNING_KEY_PASSPHRASE
    if bool(key) != bool(cert):
        raise SigningIdentityError(
            "Set both FOREBOOK_SIGNING_KEY and FOREBOOK_SIGNING_CERT (your key and certificate files), "
            f"or neither to use the development identity that {RUN_CREATE} makes."
        )
    if key:
        return RecordIdentityPaths(
            key=Path(key),
            cert=Path(cert),
            passphrase=passphrase.encode() if passphrase else None,
            from_environment=True,
        )
    directory = identity_dir()
    return RecordIdentityPaths(
        key=directory / RECORD_KEY_FILE_NAME,
        cert=directory / RECORD_CERT_FILE_NAME,
        passphrase=passphrase.encode() if passphrase else None,
        from_environment=False,
    )


def _missing_message(paths: RecordIdentityPaths, missing: Path) -> str:
    if paths.from_environment:
        return (
            f"The record signing file {missing} does not exist. Fix FOREBOOK_SIGNING_KEY / "
            f"FOREBOOK_SIGNING_CERT, or unset both and {RUN_CREATE} for a development identity."
        )
    return f"No record signing identity at {missing}: {RUN_CREATE} first (it makes a development key and certificate)."


def record_certificates() -> list[asn1_x509.Certificate]:
    """The signing certificate first, then any chain certificates from the same file."""
    paths = record_identity_paths()
    if not paths.cert.exists():
        raise SigningIdentityError(_missing_message(paths, paths.cert))
    try:
        certificates = list(load_certs_from_pemder([str(paths.cert)]))
    except (OSError, ValueError, TypeError) as error:
        raise SigningIdentityError(
            f"The certificate file {paths.cert} cannot be read as PEM or DER ({error}); replace it with the "
            "certificate that belongs to the signing key."
        ) from None
    if not certificates:
        raise SigningIdentityError(f"The certificate file {paths.cert} holds no certificate.")
    return certificates


def record_trust_roots() -> list[asn1_x509.Certificate]:
    """What a verifier on this instance trusts: the last certificate of the configured file, i.e. the
    self-signed development certificate itself, or the root that ends an operator's chain."""
    return record_certificates()[-1:]


def record_signer() -> signers.SimpleSigner:
    paths = record_identity_paths()
    if not paths.key.exists():
        raise SigningIdentityError(_missing_message(paths, paths.key))
    certificates = record_certificates()
    try:
        key = load_private_key_from_pemder(str(paths.key), passphrase=paths.passphrase)
    except (OSError, ValueError, TypeError) as error:
        hint = (
            "check FOREBOOK_SIGNING_KEY_PASSPHRASE"
            if paths.passphrase or "encrypted" in str(error).lower() or "password" in str(error).lower()
            else "replace it with the PEM private key that belongs to the certificate"
        )
        raise SigningIdentityError(f"The signing key {paths.key} cannot be loaded ({error}); {hint}.") from None
    if not private_key_matches(key=key, certificate=certificates[0]):
        raise SigningIdentityError(
            f"The signing key {paths.key} does not belong to the certificate {paths.cert}; configure the "
            "matching pair (the first certificate in the file must be the signer's)."
        )
    return signers.SimpleSigner(
        signing_cert=certificates[0],
        signing_key=key,
        cert_registry=SimpleCertificateStore.from_certs(certificates),
    )


def configured_timestamper() -> TimeStamper | None:
    """An RFC 3161 client for FOREBOOK_TSA_URL (PAdES B-T), or None for B-B."""
    url = settings.FOREBOOK_TSA_URL
    return HTTPTimeStamper(url) if url else None


def pdf_sign(*, pdf: bytes, signer: signers.Signer, timestamper: TimeStamper | None = None) -> bytes:
    """Sign ``pdf`` in an incremental update, so the bytes before it (and the embedded JSON) stay as they were."""
    metadata = signers.PdfSignatureMetadata(
        field_name=SIGNATURE_FIELD_NAME,
        md_algorithm="sha256",
        # pyHanko's default is adbe.pkcs7.detached; PAdES (ETSI.CAdES.detached) must be asked for.
        subfilter=fields.SigSeedSubFilter.PADES,
        reason="Forebook record: registered entries, their Merkle inclusion proofs and the signed checkpoint",
    )
    output = io.BytesIO()

    def sign() -> None:
        signers.PdfSigner(metadata, signer=signer, timestamper=timestamper).sign_pdf(
            IncrementalPdfFileWriter(io.BytesIO(pdf)), output=output
        )

    _outside_event_loop(sign)
    return output.getvalue()


def _outside_event_loop(work) -> None:
    """Run ``work`` where asyncio.run is allowed.

    pyHanko's synchronous signing calls asyncio.run, which refuses to start inside a thread that
    already runs an event loop (an ASGI server running an eager task, Playwright in the tests).
    """
    try:
        asyncio.get_running_loop()
    except RuntimeError:
        work()
        return
    with ThreadPoolExecutor(max_workers=1) as pool:
        pool.submit(work).result()


# --- making a development identity -----------------------------------------------------------


@dataclass(frozen=True)
class IdentityReport:
    directory: Path
    created: tuple[Path, ...]
    kept: tuple[Path, ...]
    vkey: str
    certificate_sha256: str


def _write_private(path: Path, data: bytes) -> None:
    """Write ``data`` readable by the owner only, atomically, never leaving a world-readable copy."""
    descriptor, temporary = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.")
    try:
        os.fchmod(descriptor, PRIVATE_FILE_MODE)
        with os.fdopen(descriptor, "wb") as handle:
            handle.write(data)
        os.replace(temporary, path)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise


def _development_certificate(*, key: rsa.RSAPrivateKey, origin: str) -> x509.Certificate:
    # RFC 5280's upper bounds cap each of these attributes at 64 characters (cryptography enforces it).
    name = x509.Name(
        [
            x509.NameAttribute(NameOID.COMMON_NAME, "Forebook record signing (self-signed, development)"),
            x509.NameAttribute(NameOID.ORGANIZATION_NAME, settings.FOREBOOK_SITE_NAME[:64] or "Forebook"),
            x509.NameAttribute(NameOID.ORGANIZATIONAL_UNIT_NAME, origin[:64]),
        ]
    )
    now = dt.datetime.now(dt.UTC)
    return (
        x509.CertificateBuilder()
        .subject_name(name)
        .issuer_name(name)
        .public_key(key.public_key())
        .serial_number(x509.random_serial_number())
        .not_valid_before(now - dt.timedelta(minutes=5))
        .not_valid_after(now + dt.timedelta(days=DEVELOPMENT_CERT_DAYS))
        # A signing certificate, not a CA; key usage as PDF validators expect for document signatures.
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
        .add_extension(x509.SubjectKeyIdentifier.from_public_key(key.public_key()), critical=False)
        .sign(key, hashes.SHA256())
    )


def _create_record_pair(*, directory: Path, origin: str) -> tuple[Path, Path]:
    key = rsa.generate_private_key(public_exponent=65537, key_size=RSA_KEY_BITS)
    certificate = _development_certificate(key=key, origin=origin)
    key_path, cert_path = directory / RECORD_KEY_FILE_NAME, directory / RECORD_CERT_FILE_NAME
    _write_private(
        key_path,
        key.private_bytes(serialization.Encoding.PEM, serialization.PrivateFormat.PKCS8, serialization.NoEncryption()),
    )
    _write_private(cert_path, certificate.public_bytes(serialization.Encoding.PEM))
    return key_path, cert_path


def identity_create(*, directory: Path, origin: str, force: bool = False) -> IdentityReport:
    """Make the development identity in ``directory``; keep whatever is already there unless ``force``.

    The key and certificate are one unit: finding only one of them is an error, because a new
    certificate for an old key (or the reverse) would not match.
    """
    if not notes.is_valid_key_name(origin):
        raise SigningIdentityError(
            f"The log name {origin!r} cannot be used: it must be one word without spaces or '+', ideally the "
            "instance's address and a path, like lab.example.org/forebook-log."
        )
    directory.mkdir(parents=True, exist_ok=True)
    directory.chmod(IDENTITY_DIR_MODE)
    created: list[Path] = []
    kept: list[Path] = []

    key_path, cert_path = directory / RECORD_KEY_FILE_NAME, directory / RECORD_CERT_FILE_NAME
    present = [path for path in (key_path, cert_path) if path.exists()]
    if len(present) == 1 and not force:
        raise SigningIdentityError(
            f"Found {present[0]} without its pair in {directory}. Restore the missing file from your backup, or "
            "run with --force to replace both (records signed before then verify only with the old certificate)."
        )
    if force or not present:
        created += _create_record_pair(directory=directory, origin=origin)
    else:
        kept += present

    log_key_path = directory / checkpoints.LOG_KEY_FILE_NAME
    if force or not log_key_path.exists():
        signer = notes.NoteSigner.generate(name=origin)
        _write_private(log_key_path, (signer.to_private_key_string() + "\n").encode("ascii"))
        created.append(log_key_path)
    else:
        kept.append(log_key_path)
        try:
            signer = notes.NoteSigner.from_private_key_string(log_key_path.read_text(encoding="ascii").strip())
        except (notes.KeyFormatError, UnicodeDecodeError) as error:
            raise SigningIdentityError(
                f"The existing log key {log_key_path} is not a valid signer key ({error}); restore it from your "
                "backup, or run with --force to make a new one (witnesses then need the new verifier key)."
            ) from None
    vkey = signer.verifier.to_key_string()
    vkey_path = directory / LOG_VKEY_FILE_NAME
    _write_private(vkey_path, (vkey + "\n").encode("ascii"))
    certificate = x509.load_pem_x509_certificate(cert_path.read_bytes())
    return IdentityReport(
        directory=directory,
        created=tuple(created),
        kept=tuple(kept),
        vkey=vkey,
        certificate_sha256=certificate.fingerprint(hashes.SHA256()).hex(),
    )


def default_log_origin() -> str:
    return settings.FOREBOOK_LOG_ORIGIN or DEFAULT_LOG_ORIGIN


def certificate_pem(*, certificate: asn1_x509.Certificate) -> str:
    return x509.load_der_x509_certificate(certificate.dump()).public_bytes(serialization.Encoding.PEM).decode("ascii")


def private_key_matches(*, key: asn1_keys.PrivateKeyInfo, certificate: asn1_x509.Certificate) -> bool:
    public = serialization.load_der_private_key(key.dump(), password=None).public_key()
    spki = public.public_bytes(serialization.Encoding.DER, serialization.PublicFormat.SubjectPublicKeyInfo)
    return spki == certificate.public_key.dump()
