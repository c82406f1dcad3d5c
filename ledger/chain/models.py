"""The ledger: append-only entries, the chain head, and stored Merkle subtree hashes.

Entries are written only by ``ledger.chain.services.entry_append``. Python refuses every update
or delete path below; the database refuses them too (triggers in ``ledger.chain.triggers``).
"""

from django.conf import settings
from django.db import models

from ledger.chain.errors import LedgerImmutableError

GENESIS_HASH = "0" * 64


class EntryKind(models.TextChoices):
    PLAN_SEALED = "PLAN_SEALED", "Plan sealed"
    PLAN_AMENDED = "PLAN_AMENDED", "Plan amended"
    COLLECTION_STARTED = "COLLECTION_STARTED", "Data collection started"
    RESULT_RECORDED = "RESULT_RECORDED", "Results recorded"
    FINDING_EXPLAINED = "FINDING_EXPLAINED", "Deviation explained"
    PUBLICATION_LINKED = "PUBLICATION_LINKED", "Publication status recorded"
    STUDY_WITHDRAWN = "STUDY_WITHDRAWN", "Study withdrawn"
    MEMBER_ROLE_CHANGED = "MEMBER_ROLE_CHANGED", "Member role changed"
    CHECKPOINT_SIGNED = "CHECKPOINT_SIGNED", "Checkpoint signed"


class AppendOnlyQuerySet(models.QuerySet):
    def update(self, **kwargs):
        raise LedgerImmutableError(f"{self.model.__name__} rows are append-only: they cannot be updated.")

    def delete(self):
        raise LedgerImmutableError(f"{self.model.__name__} rows are append-only: they cannot be deleted.")

    def bulk_update(self, objs, fields, batch_size=None):
        raise LedgerImmutableError(f"{self.model.__name__} rows are append-only: they cannot be updated.")


class AppendOnlyModel(models.Model):
    objects = AppendOnlyQuerySet.as_manager()

    class Meta:
        abstract = True

    def save(self, *args, **kwargs):
        if not self._state.adding:
            raise LedgerImmutableError(
                f"{type(self).__name__} rows are append-only: a stored row cannot be saved again."
            )
        kwargs["force_insert"] = True
        super().save(*args, **kwargs)

    def delete(self, *args, **kwargs):
        raise LedgerImmutableError(f"{type(self).__name__} rows are append-only: they cannot be deleted.")


class ChainHead(models.Model):
    """The single row that serialises appends: writers lock it FOR UPDATE and read the tip from it.

    ``frontier`` holds the roots of the perfect Merkle subtrees that make up the current size,
    left to right, as comma-separated hex, so an append computes its new subtree hashes without
    reading the tree.
    """

    id = models.PositiveSmallIntegerField(primary_key=True, default=1)
    size = models.BigIntegerField(default=0)
    head_hash = models.CharField(max_length=64, default=GENESIS_HASH)
    last_created_at = models.DateTimeField(null=True)
    frontier = models.TextField(default="", blank=True)

    class Meta:
        constraints = [models.CheckConstraint(condition=models.Q(id=1), name="single_chain_head")]

    def __str__(self) -> str:
        return f"chain head at {self.size}"


class Entry(AppendOnlyModel):
    # The sequence number is the primary key and comes from the locked chain head: gap-free by
    # construction, and an INSERT trigger refuses any row that does not extend the tip.
    seq = models.BigIntegerField(primary_key=True)
    kind = models.CharField(max_length=32, choices=EntryKind.choices)
    lab = models.ForeignKey("labs.Lab", null=True, on_delete=models.PROTECT, related_name="entries")
    study = models.ForeignKey("plans.Study", null=True, on_delete=models.PROTECT, related_name="entries")
    # Hashed copies of the lab's uid and the study's code, so an entry verifies on its own.
    lab_uid = models.CharField(max_length=36, blank=True)
    study_code = models.CharField(max_length=16, blank=True)
    author = models.ForeignKey(settings.AUTH_USER_MODEL, null=True, on_delete=models.PROTECT, related_name="+")
    created_at = models.DateTimeField()
    # The exact canonical JSON text that was hashed; never re-serialised.
    payload = models.TextField()
    payload_hash = models.CharField(max_length=64)
    prev_hash = models.CharField(max_length=64)
    entry_hash = models.CharField(max_length=64, unique=True)

    class Meta:
        ordering = ["seq"]
        verbose_name_plural = "entries"
        indexes = [
            models.Index(fields=["lab", "seq"], name="entry_lab_seq"),
            models.Index(fields=["study", "seq"], name="entry_study_seq"),
        ]

    def __str__(self) -> str:
        return f"#{self.seq} {self.kind}"


class MerkleNode(AppendOnlyModel):
    """The hash of one complete perfect subtree: leaves [index * 2**level, (index + 1) * 2**level)."""

    level = models.PositiveSmallIntegerField()
    index = models.BigIntegerField()
    hash = models.BinaryField(max_length=32)

    class Meta:
        constraints = [models.UniqueConstraint(fields=["level", "index"], name="one_node_per_position")]

    def __str__(self) -> str:
        return f"node {self.level}/{self.index}"
