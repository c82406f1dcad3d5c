"""The public log: signed checkpoints and Merkle proofs for anyone, with no sign-in.

Only hashes, sizes and signed notes leave through these views, never an entry's payload, lab or
study: an embargoed study's content stays private while its entries are provably in the log.
Every JSON error is ``{"error": "<what to change>"}`` with a 4xx status.
"""

from __future__ import annotations

import re
from typing import Any

from django.http import HttpResponse, JsonResponse
from django.views.generic import TemplateView, View

from ledger.chain import checkpoints
from ledger.chain.models import Entry

ENTRY_HASH_PATTERN = re.compile(r"[0-9a-fA-F]{64}")
# Checkpoints never change once signed; the latest one does, so caches must ask again.
IMMUTABLE = "public, max-age=31536000, immutable"
REVALIDATE = "no-cache"


class BadParameter(ValueError):
    """A query parameter is malformed or missing (400)."""


class UnknownEntry(LookupError):
    """No entry has the hash asked for (404)."""


def _json(data: dict[str, Any], *, status: int = 200, cache: str = REVALIDATE) -> JsonResponse:
    response = JsonResponse(data, status=status, json_dumps_params={"ensure_ascii": False})
    response["Cache-Control"] = cache
    # Browser-based verifiers and witness dashboards on other origins may read the log.
    response["Access-Control-Allow-Origin"] = "*"
    return response


def _error(message: str, *, status: int) -> JsonResponse:
    return _json({"error": message}, status=status)


def _int_parameter(request, name: str) -> int | None:
    raw = request.GET.get(name, "").strip()
    if not raw:
        return None
    if not raw.isascii() or not raw.isdigit() or len(raw) > 19:
        raise BadParameter(f"{name} must be a whole number of entries, like {name}=42; got {raw!r}.")
    return int(raw)


def _no_checkpoint() -> JsonResponse:
    return _error(
        "No checkpoint has been signed yet. One is signed every hour when the ledger has new entries, "
        "and whenever a signed record is exported.",
        status=404,
    )


def _proof_json(hashes: list[bytes]) -> list[str]:
    return [node.hex() for node in hashes]


class PublicJsonView(View):
    http_method_names = ["get", "head", "options"]

    def get(self, request, *args, **kwargs):
        try:
            return self.respond(request, **kwargs)
        except BadParameter as problem:
            return _error(str(problem), status=400)
        except checkpoints.ProofRequestError as problem:
            return _error(str(problem), status=400)
        except UnknownEntry as problem:
            return _error(str(problem), status=404)

    def respond(self, request, **kwargs) -> HttpResponse:
        raise NotImplementedError


class LogIndexView(TemplateView):
    """A page for people: what the log is, the latest checkpoint, and the endpoints."""

    template_name = "chain/public_log.html"

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        context["checkpoint"] = checkpoints.latest_checkpoint()
        try:
            context["vkey"] = checkpoints.log_verifier().to_key_string()
        except checkpoints.LogKeyMissing:
            context["vkey"] = ""
        return context


class CheckpointNoteView(View):
    """The latest signed note as text/plain: the stable URL witnesses fetch."""

    http_method_names = ["get", "head"]

    def get(self, request, *args, **kwargs):
        latest = checkpoints.latest_checkpoint()
        if latest is None:
            response = HttpResponse(
                "No checkpoint has been signed yet.\n", status=404, content_type="text/plain; charset=utf-8"
            )
        else:
            response = HttpResponse(latest.note, content_type="text/plain; charset=utf-8")
        response["Cache-Control"] = REVALIDATE
        response["Access-Control-Allow-Origin"] = "*"
        return response


class LatestCheckpointView(PublicJsonView):
    def respond(self, request, **kwargs):
        latest = checkpoints.latest_checkpoint()
        return _json(latest.as_json()) if latest else _no_checkpoint()


class CheckpointBySizeView(PublicJsonView):
    def respond(self, request, *, size: int, **kwargs):
        found = checkpoints.checkpoint_of_size(size=size)
        if found is None:
            return _error(
                f"No checkpoint was signed for tree size {size}. The latest is at /log/checkpoint.json; "
                "for proofs against any size use /log/inclusion.json or /log/consistency.json.",
                status=404,
            )
        return _json(found.as_json(), cache=IMMUTABLE)


class InclusionProofView(PublicJsonView):
    """?entry=<entry hash> or ?seq=<n>, and optionally &size=<tree size> (default: latest checkpoint)."""

    def respond(self, request, **kwargs):
        seq = self._entry_seq(request)
        size = _int_parameter(request, "size")
        checkpoint = None
        if size is None:
            checkpoint = checkpoints.latest_checkpoint()
            if checkpoint is None:
                return _no_checkpoint()
            size = checkpoint.size
        proofs, root = checkpoints.inclusion_proofs(seqs=[seq], size=size)
        if checkpoint is None:
            checkpoint = checkpoints.checkpoint_of_size(size=size)
        entry_hash = Entry.objects.filter(seq=seq).values_list("entry_hash", flat=True).get()
        return _json(
            {
                "entry_seq": seq,
                "leaf_index": seq - 1,
                "entry_hash": entry_hash,
                "tree_size": size,
                "root_hash": root.hex(),
                "proof": _proof_json(proofs[seq]),
                "checkpoint": checkpoint.as_json() if checkpoint else None,
            }
        )

    def _entry_seq(self, request) -> int:
        entry_hash = request.GET.get("entry", "").strip()
        if entry_hash:
            if not ENTRY_HASH_PATTERN.fullmatch(entry_hash):
                raise BadParameter("entry must be an entry hash: 64 hexadecimal characters.")
            seq = Entry.objects.filter(entry_hash=entry_hash.lower()).values_list("seq", flat=True).first()
            if seq is None:
                raise UnknownEntry(
                    f"No entry with hash {entry_hash.lower()} is in this log; check the hash you copied."
                )
            return seq
        seq = _int_parameter(request, "seq")
        if seq is None:
            raise BadParameter("Name the entry: ?entry=<64-character entry hash> or ?seq=<sequence number>.")
        return seq


class ConsistencyProofView(PublicJsonView):
    """?from=<older size>&to=<newer size> (default: the latest checkpoint's size)."""

    def respond(self, request, **kwargs):
        old_size = _int_parameter(request, "from")
        if old_size is None:
            raise BadParameter(
                "Give the older tree size: ?from=<size>&to=<size> (to defaults to the latest checkpoint)."
            )
        new_size = _int_parameter(request, "to")
        if new_size is None:
            latest = checkpoints.latest_checkpoint()
            if latest is None:
                return _no_checkpoint()
            new_size = latest.size
        proof, old_root, new_root = checkpoints.consistency_proof(old_size=old_size, new_size=new_size)
        return _json(
            {
                "old_size": old_size,
                "new_size": new_size,
                "old_root_hash": old_root.hex(),
                "new_root_hash": new_root.hex(),
                "proof": _proof_json(proof),
            }
        )


class LogKeyView(PublicJsonView):
    def respond(self, request, **kwargs):
        try:
            verifier = checkpoints.log_verifier()
        except checkpoints.LogKeyMissing:
            return _error(
                "This instance has no log key yet; its operator must run `python manage.py create_signing_identity`.",
                status=503,
            )
        return _json(
            {
                "origin": verifier.name,
                "key_id": f"{verifier.key_id:08x}",
                "vkey": verifier.to_key_string(),
                "algorithm": "Ed25519 (C2SP signed-note v1.0.0)",
            }
        )
