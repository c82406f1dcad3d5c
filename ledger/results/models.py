"""Projections of result and publication entries, for listing and reporting."""

from django.db import models


class Verdict(models.TextChoices):
    SUPPORTED = "supported", "Supported"
    NULL = "null", "Not supported (null result)"
    OPPOSITE = "opposite", "Opposite direction"
    INCONCLUSIVE = "inconclusive", "Inconclusive"


class ResultReport(models.Model):
    study = models.OneToOneField("plans.Study", on_delete=models.PROTECT, related_name="result_report")
    entry = models.OneToOneField("chain.Entry", on_delete=models.PROTECT, related_name="result_report")
    recorded_at = models.DateTimeField()
    # The verdict on the first primary result: the study-level outcome the lab report counts.
    primary_verdict = models.CharField(max_length=16, choices=Verdict.choices)
    n_analysed = models.PositiveIntegerField(null=True, blank=True)
    # Projections of the findings sealed in the payload, so reports count them without parsing
    # every payload: how many are major, and the identities of those that need an explanation.
    major_findings = models.PositiveIntegerField(default=0)
    findings_requiring_explanation = models.JSONField(default=list, blank=True)

    def __str__(self) -> str:
        return f"results of {self.study.code}"


class PublicationStatus(models.TextChoices):
    PUBLISHED = "published", "Published (DOI)"
    NOT_SUBMITTED = "not_submitted", "Not submitted"


class PublicationLink(models.Model):
    study = models.ForeignKey("plans.Study", on_delete=models.PROTECT, related_name="publication_links")
    entry = models.OneToOneField("chain.Entry", on_delete=models.PROTECT, related_name="publication_link")
    status = models.CharField(max_length=16, choices=PublicationStatus.choices)
    doi = models.CharField(max_length=300, blank=True)
    recorded_at = models.DateTimeField()

    class Meta:
        ordering = ["study", "recorded_at"]

    def __str__(self) -> str:
        return f"{self.study.code}: {self.doi or self.get_status_display()}"
