"""Background work for records. Tasks are thin: ids in, one service call."""

from celery import shared_task

from ledger.records import services


# acks_late: a worker that dies mid-export leaves the message queued, so another worker redoes it
# (record_export_run skips exports that already finished).
@shared_task(name="ledger.records.tasks.record_export", acks_late=True, reject_on_worker_lost=True, ignore_result=True)
def record_export(export_id: int) -> None:
    services.record_export_run(export_id=export_id)


@shared_task(name="ledger.records.tasks.record_exports_purge", ignore_result=True)
def record_exports_purge() -> int:
    return services.record_exports_purge()
