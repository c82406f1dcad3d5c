"""Ledger pages inside a lab: the list of the lab's entries and one entry with its hashes."""

import json

from django.core.paginator import Paginator
from django.views.generic import TemplateView

from ledger.chain.models import EntryKind
from ledger.chain.selectors import access_entry, lab_entries
from ledger.labs.mixins import LabMemberMixin

ENTRIES_PER_PAGE = 50


class LabEntriesView(LabMemberMixin, TemplateView):
    template_name = "chain/entries.html"

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        kind = self.request.GET.get("kind", "")
        if kind not in EntryKind.values:
            kind = ""
        page = Paginator(lab_entries(lab=self.lab, kind=kind), ENTRIES_PER_PAGE).get_page(self.request.GET.get("page"))
        context.update(page=page, kind=kind, kinds=EntryKind.choices)
        return context


class EntryDetailView(LabMemberMixin, TemplateView):
    template_name = "chain/entry.html"

    def resolve_objects(self, **kwargs):
        self.entry = access_entry(member=self.member, entry_hash=kwargs["entry_hash"])

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        context["entry"] = self.entry
        context["payload_pretty"] = json.dumps(json.loads(self.entry.payload), indent=2, ensure_ascii=False)
        return context
