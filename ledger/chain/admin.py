from django.contrib import admin

from ledger.chain.models import ChainHead, Entry, MerkleNode


class ReadOnlyAdmin(admin.ModelAdmin):
    """Ledger rows are shown, never edited: the database would refuse the change anyway."""

    def has_add_permission(self, request):
        return False

    def has_change_permission(self, request, obj=None):
        return False

    def has_delete_permission(self, request, obj=None):
        return False


@admin.register(Entry)
class EntryAdmin(ReadOnlyAdmin):
    list_display = ("seq", "kind", "lab", "study_code", "author", "created_at", "entry_hash")
    list_filter = ("kind",)
    search_fields = ("entry_hash", "study_code")


@admin.register(MerkleNode)
class MerkleNodeAdmin(ReadOnlyAdmin):
    list_display = ("level", "index")


@admin.register(ChainHead)
class ChainHeadAdmin(ReadOnlyAdmin):
    list_display = ("size", "head_hash", "last_created_at")
