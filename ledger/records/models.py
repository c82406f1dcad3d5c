"""Generated record files. The PDF itself lives on disk (FOREBOOK_RECORDS_DIR), never in the database."""

from django.db import models

from ledger.core.exports import ExportStatus, GeneratedFile, new_export_code, progress_percent_constraint

# Re-exported: migration 0001 names ``new_export_code`` here, and callers import ExportStatus from here.
__all__ = ["ExportStatus", "RecordExport", "new_export_code"]


class RecordExport(GeneratedFile):
    """One request to export a study's signed record, and the file it produced (see GeneratedFile)."""

    lab = models.ForeignKey("labs.Lab", on_delete=models.CASCADE, related_name="record_exports")
    study = models.ForeignKey("plans.Study", on_delete=models.CASCADE, related_name="record_exports")
    checkpoint_size = models.PositiveBigIntegerField(null=True, blank=True)

    class Meta(GeneratedFile.Meta):
        indexes = [models.Index(fields=["study", "created_by", "created_at"], name="record_export_study_user")]
        constraints = [progress_percent_constraint(name="record_export_progress_percent")]

    def __str__(self) -> str:
        return f"record {self.code} of {self.study.code} ({self.status})"
