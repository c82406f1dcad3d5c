"""Scheduled ledger work. Tasks are thin: they call one service and pass nothing but ids."""

from celery import shared_task

from ledger.chain.checkpoints import checkpoint_sign_if_due


@shared_task(name="ledger.chain.tasks.checkpoint_sign_due", ignore_result=True)
def checkpoint_sign_due() -> int | None:
    """Run by Celery beat (CELERY_BEAT_SCHEDULE, hourly by default); returns the signed size, if any.

    A refused checkpoint raises, so the failure shows in the worker log as an error every hour
    until an operator acts; it is never retried silently.
    """
    checkpoint = checkpoint_sign_if_due()
    return checkpoint.size if checkpoint else None
