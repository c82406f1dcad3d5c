from django.contrib import admin

from ledger.labs.models import Lab, Membership


@admin.register(Lab)
class LabAdmin(admin.ModelAdmin):
    list_display = ("name", "slug", "created_at")
    prepopulated_fields = {"slug": ("name",)}


@admin.register(Membership)
class MembershipAdmin(admin.ModelAdmin):
    list_display = ("user", "lab", "role", "is_active")
    list_filter = ("role", "is_active", "lab")
    # Role changes made here would bypass the ledger entry that records them.
    readonly_fields = ("lab", "user", "role", "is_active", "code")
