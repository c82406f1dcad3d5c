"""Reads of the ledger for pages: always scoped to one lab or one study."""

from __future__ import annotations

import json
from typing import Any

from django.db.models import QuerySet
from django.http import Http404

from ledger.chain.models import Entry
from ledger.labs.models import Lab, Membership


def study_entries(*, study) -> list[Entry]:
    return list(Entry.objects.filter(study=study).select_related("author").order_by("seq"))


def lab_entries(*, lab: Lab, kind: str = "") -> QuerySet[Entry]:
    entries = Entry.objects.filter(lab=lab).select_related("author", "study").order_by("-seq")
    if kind:
        entries = entries.filter(kind=kind)
    return entries


def access_entry(*, member: Membership, entry_hash: str) -> Entry:
    entry = (
        Entry.objects.filter(lab=member.lab, entry_hash=entry_hash.lower()).select_related("author", "study").first()
    )
    if entry is None:
        raise Http404("No such entry in this lab.")
    return entry


def entry_payload(entry: Entry) -> dict[str, Any]:
    return json.loads(entry.payload)
