import uuid

from django.conf import settings
from django.db import models

from ledger.core.identifiers import random_code


class Role(models.TextChoices):
    MANAGER = "manager", "Lab manager"
    INVESTIGATOR = "investigator", "Investigator"
    READER = "reader", "Reader"


class Lab(models.Model):
    # The uid is what the ledger hashes: slugs and names may change, the uid never does.
    uid = models.UUIDField(default=uuid.uuid4, unique=True, editable=False)
    slug = models.SlugField(max_length=50, unique=True)
    name = models.CharField(max_length=200)
    created_at = models.DateTimeField(auto_now_add=True)
    sample_size_tolerance_pct = models.PositiveSmallIntegerField(
        default=10,
        help_text="How far (in %) the N analysed may differ from the planned N before it is flagged.",
    )
    overdue_grace_months = models.PositiveSmallIntegerField(
        default=12,
        help_text="Months after the expected completion date before a study without results is overdue.",
    )

    class Meta:
        ordering = ["name"]

    def __str__(self) -> str:
        return self.name


def new_member_code() -> str:
    return random_code(10)


class Membership(models.Model):
    # URLs name members by this opaque code, never by a sequential id.
    code = models.CharField(max_length=10, unique=True, default=new_member_code, editable=False)
    lab = models.ForeignKey(Lab, on_delete=models.CASCADE, related_name="memberships")
    user = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.CASCADE, related_name="memberships")
    role = models.CharField(max_length=20, choices=Role.choices)
    orcid = models.CharField("ORCID iD", max_length=19, blank=True)
    is_active = models.BooleanField(default=True)
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        constraints = [models.UniqueConstraint(fields=["lab", "user"], name="one_membership_per_lab")]
        ordering = ["user__last_name", "user__first_name", "user__username"]

    def __str__(self) -> str:
        return f"{self.display_name} ({self.get_role_display()}, {self.lab.slug})"

    @property
    def display_name(self) -> str:
        return self.user.get_full_name() or self.user.username
