"""Lab report exports (files on disk, like signed records) and the notices the overdue scan sent."""

from django.db import models

from ledger.core.exports import GeneratedFile, progress_percent_constraint


class ReportFormat(models.TextChoices):
    PDF = "pdf", "PDF report"
    STUDIES_CSV = "studies_csv", "Studies (CSV)"
    SUMMARY_CSV = "summary_csv", "Summary counts (CSV)"


# Format -> (end of the file name, media type of the download).
FORMAT_FILES = {
    ReportFormat.PDF: (".pdf", "application/pdf"),
    ReportFormat.STUDIES_CSV: ("-studies.csv", "text/csv; charset=utf-8"),
    ReportFormat.SUMMARY_CSV: ("-summary.csv", "text/csv; charset=utf-8"),
}


class ReportExport(GeneratedFile):
    """One request for the lab's outcome report as a file, with the report's parameters (see GeneratedFile)."""

    lab = models.ForeignKey("labs.Lab", on_delete=models.CASCADE, related_name="report_exports")
    file_format = models.CharField(max_length=12, choices=ReportFormat.choices)
    # The studies counted: those first sealed within these dates (inclusive; empty means open-ended).
    sealed_from = models.DateField(null=True, blank=True)
    sealed_to = models.DateField(null=True, blank=True)
    # The lab's assumed pre-study odds that a tested hypothesis is true (Ioannidis' R), for the PPV.
    prior_odds = models.FloatField(default=1.0)

    class Meta(GeneratedFile.Meta):
        indexes = [models.Index(fields=["lab", "created_by", "created_at"], name="report_export_lab_user")]
        constraints = [
            progress_percent_constraint(name="report_export_progress_percent"),
            models.CheckConstraint(condition=models.Q(prior_odds__gt=0), name="report_export_prior_odds_positive"),
        ]

    def __str__(self) -> str:
        return f"{self.get_file_format_display()} {self.code} of lab {self.lab_id} ({self.status})"

    def storage_name(self, *, suffix: str) -> str:
        # Beside the lab's record files, in their own folder.
        return f"{self.lab.uid}/reports/{self.code}{suffix}"


class NoticeThreshold(models.TextChoices):
    DUE_SOON = "due_soon", "Results due within 30 days"
    OVERDUE = "overdue", "Results overdue"


class OverdueNotice(models.Model):
    """One e-mail the daily scan sent about a study's results, at most one per study and threshold.

    The row is inserted in the transaction that schedules the e-mail (``transaction.on_commit``),
    so the unique constraint, not a check in Python, is what keeps two scans from both sending.
    """

    study = models.ForeignKey("plans.Study", on_delete=models.CASCADE, related_name="overdue_notices")
    threshold = models.CharField(max_length=12, choices=NoticeThreshold.choices)
    due_on = models.DateField()
    recipients = models.TextField(help_text="The addresses the notice went to, one per line.")
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["-created_at"]
        constraints = [models.UniqueConstraint(fields=["study", "threshold"], name="one_notice_per_study_threshold")]

    def __str__(self) -> str:
        return f"{self.get_threshold_display()}: {self.study.code}"
