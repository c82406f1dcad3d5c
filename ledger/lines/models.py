"""Research lines: studies of one lab grouped because they test the same effect.

A line is an ordinary, editable grouping, not a ledger record: what it shows is computed from the
studies' sealed entries each time it is read, so changing a line never changes what was sealed.
"""

from django.conf import settings
from django.db import models
from django.urls import reverse

from ledger.core.identifiers import random_code
from ledger.lines.conversions import MEASURE_LABELS


class EffectMeasure(models.TextChoices):
    SMD = "smd", MEASURE_LABELS["smd"]
    LOG_ODDS_RATIO = "log_or", MEASURE_LABELS["log_or"]
    LOG_RISK_RATIO = "log_rr", MEASURE_LABELS["log_rr"]
    FISHER_Z = "fisher_z", MEASURE_LABELS["fisher_z"]


def new_line_code() -> str:
    return random_code(8)


class ResearchLine(models.Model):
    # URLs name a line by this opaque code, never by its sequential id.
    code = models.CharField(max_length=8, unique=True, default=new_line_code, editable=False)
    lab = models.ForeignKey("labs.Lab", on_delete=models.CASCADE, related_name="research_lines")
    name = models.CharField(max_length=200)
    description = models.TextField(blank=True)
    measure = models.CharField(max_length=16, choices=EffectMeasure.choices)
    # Studies of the same lab only (ledger.lines.services checks it); a study may be on many lines.
    studies = models.ManyToManyField("plans.Study", related_name="research_lines", blank=True)
    created_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="+")
    created_at = models.DateTimeField(auto_now_add=True)
    updated_at = models.DateTimeField(auto_now=True)

    class Meta:
        ordering = ["name"]
        constraints = [models.UniqueConstraint(fields=["lab", "name"], name="one_line_name_per_lab")]

    def __str__(self) -> str:
        return f"{self.name} ({self.lab.slug})"

    def get_absolute_url(self) -> str:
        return reverse("lines:line", kwargs={"lab_slug": self.lab.slug, "line_code": self.code})
