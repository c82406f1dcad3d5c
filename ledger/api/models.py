"""Personal API tokens, and the replies kept for idempotent submissions.

Neither is part of the ledger: a token only lets a script act as its owner, and every entry the
script causes is sealed by the same services the pages call.
"""

from django.db import models
from django.utils import timezone


class ApiToken(models.Model):
    """One member's token for one lab. Only the SHA-256 of the token text is stored.

    The token reads ``fb_<prefix>_<secret>``; ``prefix`` is public (it names the token on the
    page and finds the row), the secret is shown once, when the token is created.
    """

    member = models.ForeignKey("labs.Membership", on_delete=models.CASCADE, related_name="api_tokens")
    name = models.CharField(max_length=100)
    prefix = models.CharField(max_length=8, unique=True)
    token_sha256 = models.CharField(max_length=64)
    created_at = models.DateTimeField(auto_now_add=True)
    expires_at = models.DateTimeField(null=True, blank=True)
    revoked_at = models.DateTimeField(null=True, blank=True)
    last_used_at = models.DateTimeField(null=True, blank=True)

    class Meta:
        ordering = ["-created_at"]

    def __str__(self) -> str:
        return f"fb_{self.prefix}_… ({self.name})"

    @property
    def is_expired(self) -> bool:
        return self.expires_at is not None and self.expires_at <= timezone.now()

    @property
    def is_usable(self) -> bool:
        return self.revoked_at is None and not self.is_expired


class IdempotentRequest(models.Model):
    """The reply to a submission that sealed something, kept under the client's Idempotency-Key.

    Invariant: a committed row always holds the reply of a request that succeeded. The row is
    inserted before the submission runs, in the same transaction, and the reply is filled in before
    commit; a refused submission rolls the row back with everything else, so its key stays free.
    """

    member = models.ForeignKey("labs.Membership", on_delete=models.CASCADE, related_name="+")
    key = models.CharField(max_length=200)
    # SHA-256 of the method, the path and the body in a canonical spelling.
    fingerprint = models.CharField(max_length=64)
    status_code = models.PositiveSmallIntegerField(default=0)
    reply_json = models.TextField(blank=True)
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        constraints = [models.UniqueConstraint(fields=["member", "key"], name="one_reply_per_member_key")]

    def __str__(self) -> str:
        return f"{self.key} → {self.status_code}"
