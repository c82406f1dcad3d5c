from django.contrib import admin

from ledger.plans.models import Study


@admin.register(Study)
class StudyAdmin(admin.ModelAdmin):
    """Studies are read here; every change goes through the app so the ledger records it."""

    list_display = ("code", "title", "lab", "state", "created_at")
    list_filter = ("state", "lab")
    search_fields = ("code", "title")

    def has_change_permission(self, request, obj=None):
        return False

    def has_delete_permission(self, request, obj=None):
        return False

    def has_add_permission(self, request):
        return False
