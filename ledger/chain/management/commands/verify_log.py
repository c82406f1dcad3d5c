import sys
from pathlib import Path

from django.core.management.base import BaseCommand, CommandError

from ledger.chain import checkpoints, merkle, notes


class Command(BaseCommand):
    help = (
        "Check that the current log extends a checkpoint saved earlier: verify the saved signed note "
        "with the instance's log key (or --vkey), then prove with stored Merkle nodes that the tree it "
        "names is a prefix of the current tree. Exit status 0 when consistent, 1 otherwise."
    )

    def add_arguments(self, parser):
        parser.add_argument(
            "--from-checkpoint",
            dest="checkpoint_file",
            required=True,
            metavar="FILE",
            help="A signed checkpoint note saved earlier, e.g. from /log/checkpoint.",
        )
        parser.add_argument(
            "--vkey",
            default="",
            help="Verifier key (name+id+key) to check the note with; default: this instance's log key.",
        )

    def handle(self, *args, checkpoint_file: str, vkey: str = "", **options):
        try:
            saved_note = Path(checkpoint_file).read_bytes()
        except OSError as error:
            raise CommandError(
                f"Cannot read {checkpoint_file}: {error.strerror}. Give the path of a saved note."
            ) from None
        try:
            verifier = notes.NoteVerifier.from_key_string(vkey) if vkey else checkpoints.log_verifier()
        except (notes.KeyFormatError, checkpoints.LogKeyMissing) as error:
            raise CommandError(str(error)) from None

        try:
            opened = notes.open_note(note=saved_note, verifiers=[verifier])
            saved = notes.parse_checkpoint(opened.text)
        except notes.NoteError as error:
            self._fail(
                f"the saved checkpoint's signature does not verify with {verifier.name}+{verifier.key_id:08x}: {error}"
            )
        self.stdout.write(f"ok: signature by {verifier.name}+{verifier.key_id:08x} verifies")
        if saved.origin != verifier.name:
            self._fail(f"the saved checkpoint names origin {saved.origin!r}, but this log is {verifier.name!r}")

        current_size = checkpoints.log_size()
        if saved.size > current_size:
            self._fail(
                f"the saved checkpoint has {saved.size} entries but the log now has only {current_size}: "
                "entries were removed, or the checkpoint comes from another log"
            )
        proof, old_root, new_root = checkpoints.consistency_proof(old_size=saved.size, new_size=current_size)
        try:
            merkle.check_consistency(
                old_size=saved.size, new_size=current_size, old_root=saved.root_hash, new_root=new_root, proof=proof
            )
        except merkle.ProofError as error:
            self._fail(
                f"the current log of {current_size} entries does not extend the saved checkpoint of size "
                f"{saved.size} ({error}); the stored tree of that size has root {old_root.hex()}, the saved "
                f"one {saved.root_hash.hex()}. Run `python manage.py verify_ledger` and keep the saved note "
                "as evidence"
            )
        self.stdout.write(
            f"ok: the log of {current_size} entries (root {new_root.hex()}) extends the saved checkpoint "
            f"of size {saved.size} (root {saved.root_hash.hex()}); consistency proof of {len(proof)} hashes"
        )

    def _fail(self, reason: str) -> None:
        self.stdout.write(f"FAILED: {reason}")
        sys.exit(1)
