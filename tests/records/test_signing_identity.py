"""create_signing_identity and loading the identity: files, permissions, certificate profile, errors.

External reference: the certificate is read back with the `cryptography` package's X.509 parser;
the profile (BasicConstraints cA=false, KeyUsage digitalSignature + contentCommitment, i.e.
nonRepudiation) is what RFC 5280 section 4.2.1.3 and ETSI EN 319 412-2 expect of a document-signing
certificate (section numbers from memory), and what /work/shared/STACK-NOTES.md found pdfsig and
pyHanko to accept.
"""

import datetime as dt
import stat

import pytest
from cryptography import x509
from cryptography.hazmat.primitives import hashes, serialization
from cryptography.hazmat.primitives.asymmetric import ec, rsa
from django.core.management import CommandError, call_command

from ledger.chain import checkpoints, notes
from ledger.records import signing

FILES = ("record-signing.key", "record-signing.crt", "log.key", "log.vkey")


@pytest.fixture
def fresh_dir(settings, tmp_path):
    settings.FOREBOOK_IDENTITY_DIR = tmp_path / "identity"
    return tmp_path / "identity"


def certificate_in(directory) -> x509.Certificate:
    return x509.load_pem_x509_certificate((directory / "record-signing.crt").read_bytes())


def test_the_command_makes_every_file_private_in_the_identity_dir(fresh_dir, capsys):
    call_command("create_signing_identity", "--origin", "lab.test.invalid/forebook-log")
    out = capsys.readouterr().out
    assert stat.S_IMODE(fresh_dir.stat().st_mode) == 0o700
    for name in FILES:
        assert stat.S_IMODE((fresh_dir / name).stat().st_mode) == 0o600, name
    assert out.count("created ") == 3
    assert "log verifier key: lab.test.invalid/forebook-log+" in out


def test_the_certificate_is_a_self_signed_document_signing_certificate(fresh_dir):
    call_command("create_signing_identity")
    certificate = certificate_in(fresh_dir)
    assert certificate.issuer == certificate.subject
    constraints = certificate.extensions.get_extension_for_class(x509.BasicConstraints)
    assert constraints.critical and constraints.value.ca is False
    usage = certificate.extensions.get_extension_for_class(x509.KeyUsage).value
    assert usage.digital_signature and usage.content_commitment
    assert not usage.key_cert_sign
    public_key = certificate.public_key()
    assert isinstance(public_key, rsa.RSAPublicKey) and public_key.key_size == 3072
    key = serialization.load_pem_private_key((fresh_dir / "record-signing.key").read_bytes(), password=None)
    assert key.public_key().public_numbers() == public_key.public_numbers()
    certificate.verify_directly_issued_by(certificate)


def test_the_log_key_is_a_c2sp_signer_key_named_after_the_origin(fresh_dir):
    call_command("create_signing_identity", "--origin", "lab.test.invalid/forebook-log")
    signer = notes.NoteSigner.from_private_key_string((fresh_dir / "log.key").read_text().strip())
    assert signer.name == "lab.test.invalid/forebook-log"
    assert (fresh_dir / "log.vkey").read_text().strip() == signer.verifier.to_key_string()
    assert checkpoints.log_verifier() == signer.verifier


def test_running_twice_keeps_the_identity(fresh_dir, capsys):
    call_command("create_signing_identity")
    first_key = (fresh_dir / "log.key").read_text()
    first_certificate = certificate_in(fresh_dir).fingerprint(hashes.SHA256())
    capsys.readouterr()
    call_command("create_signing_identity")
    out, err = capsys.readouterr()
    assert "created" not in out and out.count("kept ") == 3
    assert "nothing was replaced" in err
    assert (fresh_dir / "log.key").read_text() == first_key
    assert certificate_in(fresh_dir).fingerprint(hashes.SHA256()) == first_certificate


def test_force_replaces_the_identity(fresh_dir):
    call_command("create_signing_identity")
    first_key = (fresh_dir / "log.key").read_text()
    first_certificate = certificate_in(fresh_dir).fingerprint(hashes.SHA256())
    call_command("create_signing_identity", "--force")
    assert (fresh_dir / "log.key").read_text() != first_key
    assert certificate_in(fresh_dir).fingerprint(hashes.SHA256()) != first_certificate


def test_a_key_without_its_certificate_is_not_silently_paired(fresh_dir):
    call_command("create_signing_identity")
    (fresh_dir / "record-signing.crt").unlink()
    with pytest.raises(CommandError, match="without its pair.*--force"):
        call_command("create_signing_identity")


def test_an_origin_with_a_space_is_refused(fresh_dir):
    with pytest.raises(CommandError, match="without spaces"):
        call_command("create_signing_identity", "--origin", "my lab log")


def test_missing_identity_errors_name_the_command(fresh_dir):
    with pytest.raises(signing.SigningIdentityError, match="python manage.py create_signing_identity"):
        signing.record_signer()
    with pytest.raises(checkpoints.LogKeyMissing, match="python manage.py create_signing_identity"):
        checkpoints.log_signer()


def test_a_damaged_log_key_is_reported(fresh_dir):
    call_command("create_signing_identity")
    (fresh_dir / "log.key").write_text("PRIVATE+KEY+not-a-key\n")
    with pytest.raises(checkpoints.LogKeyMissing, match="does not hold a valid log signing key"):
        checkpoints.log_signer()


# --- an operator's own key and certificate, named by environment variables -------------------


def _operator_identity(directory, *, passphrase: bytes | None):
    key = ec.generate_private_key(ec.SECP256R1())
    other = ec.generate_private_key(ec.SECP256R1())
    name = x509.Name([x509.NameAttribute(x509.oid.NameOID.COMMON_NAME, "Invented Operator Signing")])
    now = dt.datetime.now(dt.UTC)
    certificate = (
        x509.CertificateBuilder()
        .subject_name(name)
        .issuer_name(name)
        .public_key(key.public_key())
        .serial_number(x509.random_serial_number())
        .not_valid_before(now)
        .not_valid_after(now + dt.timedelta(days=1))
        .sign(key, hashes.SHA256())
    )
    encryption = serialization.BestAvailableEncryption(passphrase) if passphrase else serialization.NoEncryption()
    (directory / "operator.key").write_bytes(
        key.private_bytes(serialization.Encoding.PEM, serialization.PrivateFormat.PKCS8, encryption)
    )
    (directory / "other.key").write_bytes(
        other.private_bytes(serialization.Encoding.PEM, serialization.PrivateFormat.PKCS8, serialization.NoEncryption())
    )
    (directory / "operator.crt").write_bytes(certificate.public_bytes(serialization.Encoding.PEM))


def test_environment_paths_take_precedence_and_a_passphrase_unlocks_the_key(settings, tmp_path):
    _operator_identity(tmp_path, passphrase=b"invented passphrase")
    settings.FOREBOOK_SIGNING_KEY = str(tmp_path / "operator.key")
    settings.FOREBOOK_SIGNING_CERT = str(tmp_path / "operator.crt")
    settings.FOREBOOK_SIGNING_KEY_PASSPHRASE = "invented passphrase"
    signer = signing.record_signer()
    assert signer.signing_cert.subject.human_friendly == "Common Name: Invented Operator Signing"
    settings.FOREBOOK_SIGNING_KEY_PASSPHRASE = "wrong"
    with pytest.raises(signing.SigningIdentityError, match="FOREBOOK_SIGNING_KEY_PASSPHRASE"):
        signing.record_signer()


def test_only_one_of_key_and_certificate_is_an_error(settings, tmp_path):
    settings.FOREBOOK_SIGNING_KEY = str(tmp_path / "operator.key")
    settings.FOREBOOK_SIGNING_CERT = ""
    with pytest.raises(signing.SigningIdentityError, match="Set both FOREBOOK_SIGNING_KEY and FOREBOOK_SIGNING_CERT"):
        signing.record_signer()


def test_a_key_that_does_not_belong_to_the_certificate_is_refused(settings, tmp_path):
    _operator_identity(tmp_path, passphrase=None)
    settings.FOREBOOK_SIGNING_KEY = str(tmp_path / "other.key")
    settings.FOREBOOK_SIGNING_CERT = str(tmp_path / "operator.crt")
    with pytest.raises(signing.SigningIdentityError, match="does not belong to the certificate"):
        signing.record_signer()
