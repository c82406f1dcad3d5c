"""Background work for lab reports. Tasks are thin: ids in, one service call."""

from celery import shared_task

from ledger.reports import services


# acks_late: a worker that dies mid-export leaves the message queued, so another worker redoes it
# (report_export_run skips exports that already finished).
@shared_task(name="ledger.reports.tasks.report_export", acks_late=True, reject_on_worker_lost=True, ignore_result=True)
def report_export(export_id: int) -> None:
    services.report_export_run(export_id=export_id)


@shared_task(name="ledger.reports.tasks.report_exports_purge", ignore_result=True)
def report_exports_purge() -> int:
    return services.report_exports_purge()


@shared_task(name="ledger.reports.tasks.overdue_scan", ignore_result=True)
def overdue_scan() -> int:
    return len(services.overdue_scan())
