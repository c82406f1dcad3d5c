"""Studies, their editable plan drafts, and the sealed plan versions.

A ``Study`` row is a projection: its state and dates are updated by the services in the same
transaction as the ledger entry that justifies them, and can be rebuilt from the entries.
"""

from django.conf import settings
from django.db import models
from django.urls import reverse

from ledger.core.identifiers import random_code


class StudyState(models.TextChoices):
    DRAFT = "draft", "Draft"
    SEALED = "sealed", "Sealed"
    COLLECTING = "collecting", "Collecting data"
    REPORTED = "reported", "Reported"
    WITHDRAWN = "withdrawn", "Withdrawn"


def new_study_code() -> str:
    return random_code(6)


class Study(models.Model):
    # Opaque, random and unique across the instance: printed on records, used in URLs and
    # commands; sequential ids never leave the database.
    code = models.CharField(max_length=16, unique=True, default=new_study_code, editable=False)
    lab = models.ForeignKey("labs.Lab", on_delete=models.PROTECT, related_name="studies")
    title = models.CharField(max_length=300)
    state = models.CharField(max_length=16, choices=StudyState.choices, default=StudyState.DRAFT)
    investigators = models.ManyToManyField("labs.Membership", related_name="studies", blank=True)
    created_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="+")
    created_at = models.DateTimeField(auto_now_add=True)
    # Projection of the ledger, kept current by the services.
    plan_version = models.PositiveIntegerField(default=0)
    sealed_at = models.DateTimeField(null=True, blank=True)
    collection_started_on = models.DateField(null=True, blank=True)
    reported_at = models.DateTimeField(null=True, blank=True)
    withdrawn_at = models.DateTimeField(null=True, blank=True)
    expected_completion = models.DateField(null=True, blank=True)
    embargo_until = models.DateField(null=True, blank=True)

    class Meta:
        ordering = ["-created_at"]
        verbose_name_plural = "studies"
        indexes = [models.Index(fields=["lab", "state"], name="study_lab_state")]

    def __str__(self) -> str:
        return f"{self.code} {self.title}"

    def get_absolute_url(self) -> str:
        return reverse("plans:study", kwargs={"lab_slug": self.lab.slug, "code": self.code})

    def is_investigator(self, member) -> bool:
        # Uses the prefetched set when a view prefetched it, one query otherwise.
        return any(m.pk == member.pk for m in self.investigators.all())


class PlanDraft(models.Model):
    """The editable plan: the first registration before sealing, or an amendment in progress."""

    study = models.OneToOneField(Study, on_delete=models.CASCADE, related_name="draft")
    # 0 for a first registration; otherwise the sealed version this draft amends.
    base_version = models.PositiveIntegerField(default=0)
    content = models.JSONField(default=dict)
    # Bumped on every save; the seal form carries it so that sealing a stale view is refused.
    revision = models.PositiveIntegerField(default=1)
    updated_at = models.DateTimeField(auto_now=True)
    updated_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="+")

    def __str__(self) -> str:
        return f"draft of {self.study.code} (revision {self.revision})"

    @property
    def is_amendment(self) -> bool:
        return self.base_version > 0


class PlanVersion(models.Model):
    """A sealed plan version: a pointer to its ledger entry plus the figures reports query."""

    study = models.ForeignKey(Study, on_delete=models.PROTECT, related_name="versions")
    number = models.PositiveIntegerField()
    entry = models.OneToOneField("chain.Entry", on_delete=models.PROTECT, related_name="plan_version")
    sealed_at = models.DateTimeField()
    planned_n = models.PositiveIntegerField(null=True, blank=True)
    registered_power = models.FloatField(null=True, blank=True)

    class Meta:
        ordering = ["study", "number"]
        constraints = [models.UniqueConstraint(fields=["study", "number"], name="one_plan_version_number")]

    def __str__(self) -> str:
        return f"{self.study.code} v{self.number}"
