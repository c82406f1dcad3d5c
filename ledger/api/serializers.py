"""What the API answers, and the query parameters it reads. Request bodies are described in
ledger.api.binding from the page forms that validate them."""

from __future__ import annotations

from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import extend_schema_field
from rest_framework import serializers

from ledger.chain.hashing import format_timestamp
from ledger.chain.models import Entry, EntryKind
from ledger.compare import Finding, Severity
from ledger.labs.permissions import member_can
from ledger.plans.models import Study, StudyState
from ledger.results.models import PublicationStatus, Verdict

# Ledger sequence numbers are PostgreSQL bigints.
MAX_SEQ = 2**63 - 1
MAX_PAGE = 500


class PublicEntrySerializer(serializers.Serializer):
    """An entry's public fields: everything needed to recompute its hash and check its place in the chain,
    nothing of what it says (the payload itself is never public: it may be under embargo)."""

    seq = serializers.IntegerField()
    kind = serializers.ChoiceField(choices=EntryKind.choices)
    created_at = serializers.SerializerMethodField(
        help_text="UTC with six fractional digits and Z, exactly as hashed into entry_hash."
    )
    payload_sha256 = serializers.CharField(source="payload_hash")
    prev_hash = serializers.CharField()
    entry_hash = serializers.CharField()
    lab_uid = serializers.CharField(help_text="The lab's uid as hashed (empty for entries of no lab).")
    study_code = serializers.CharField(help_text="The study's code as hashed (empty for entries of no study).")
    author = serializers.IntegerField(source="author_id", allow_null=True, help_text="User id, as hashed.")

    @extend_schema_field(OpenApiTypes.STR)
    def get_created_at(self, entry: Entry) -> str:
        return format_timestamp(entry.created_at)


class LabEntrySerializer(PublicEntrySerializer):
    """An entry of the token's lab, with its payload text as sealed."""

    payload = serializers.CharField(
        help_text="The canonical JSON text (RFC 8785) exactly as sealed: SHA-256 of its UTF-8 bytes is payload_sha256."
    )


class LabEntryPageSerializer(serializers.Serializer):
    entries = LabEntrySerializer(many=True)
    next_after = serializers.IntegerField(
        allow_null=True, help_text="Pass as ?after= for the next page; null at the end."
    )
    next = serializers.URLField(allow_null=True)


class PublicEntryPageSerializer(serializers.Serializer):
    entries = PublicEntrySerializer(many=True)
    next_after = serializers.IntegerField(
        allow_null=True, help_text="Pass as ?after= for the next page; null at the end."
    )
    next = serializers.URLField(allow_null=True)


class PublicEntryQuerySerializer(serializers.Serializer):
    after = serializers.IntegerField(
        required=False, default=0, min_value=0, max_value=MAX_SEQ, help_text="Entries after this sequence number."
    )
    limit = serializers.IntegerField(
        required=False, default=100, min_value=1, max_value=MAX_PAGE, help_text="Entries per page."
    )


class LabEntryQuerySerializer(PublicEntryQuerySerializer):
    kind = serializers.ChoiceField(choices=EntryKind.choices, required=False, help_text="Only entries of this kind.")
    study = serializers.CharField(required=False, max_length=16, help_text="Only entries of this study (its code).")


class StudySerializer(serializers.Serializer):
    code = serializers.CharField()
    title = serializers.CharField()
    state = serializers.ChoiceField(choices=StudyState.choices)
    plan_version = serializers.IntegerField(help_text="The latest sealed plan version; 0 while the plan is a draft.")
    sealed_at = serializers.DateTimeField(allow_null=True)
    collection_started_on = serializers.DateField(allow_null=True)
    reported_at = serializers.DateTimeField(allow_null=True)
    withdrawn_at = serializers.DateTimeField(allow_null=True)
    expected_completion = serializers.DateField(allow_null=True)
    embargo_until = serializers.DateField(allow_null=True)
    investigators = serializers.SerializerMethodField()
    can_record_results = serializers.SerializerMethodField(help_text="Whether this token may record its results.")
    url = serializers.SerializerMethodField(help_text="The study's page in Forebook.")

    @extend_schema_field(serializers.ListField(child=serializers.CharField()))
    def get_investigators(self, study: Study) -> list[str]:
        return [member.display_name for member in study.investigators.all()]

    @extend_schema_field(OpenApiTypes.BOOL)
    def get_can_record_results(self, study: Study) -> bool:
        return member_can(self.context["member"], "can_record_results", study=study)

    @extend_schema_field(OpenApiTypes.URI)
    def get_url(self, study: Study) -> str:
        return self.context["request"].build_absolute_uri(study.get_absolute_url())


class StudyListSerializer(serializers.Serializer):
    studies = StudySerializer(many=True)


class StudyQuerySerializer(serializers.Serializer):
    state = serializers.ChoiceField(choices=StudyState.choices, required=False, help_text="Only studies in this state.")
    mine = serializers.BooleanField(
        required=False, default=False, help_text="Only studies the token's owner is an investigator on."
    )


class SealedPlanSerializer(serializers.Serializer):
    study = serializers.CharField()
    version = serializers.IntegerField()
    latest = serializers.BooleanField(help_text="Whether this is the plan the study follows now.")
    entry = PublicEntrySerializer()
    payload = serializers.CharField(
        help_text="The plan as sealed: canonical JSON text (RFC 8785). SHA-256 of its UTF-8 bytes is "
        "entry.payload_sha256; hash it yourself rather than re-serialising the parsed JSON."
    )


class FindingSerializer(serializers.Serializer):
    """One difference between the sealed plan and the result, found by Forebook's deviation rules."""

    identity = serializers.CharField(help_text="CODE:subject, the key an explanation is given under.")
    code = serializers.CharField()
    severity = serializers.ChoiceField(choices=[(severity.value, severity.value) for severity in Severity])
    subject = serializers.CharField()
    message = serializers.CharField()
    evidence = serializers.DictField(help_text="Planned and reported values, and the keys concerned.")
    explanation_required = serializers.BooleanField()
    explained = serializers.SerializerMethodField(help_text="Whether an explanation was given for it.")

    @extend_schema_field(OpenApiTypes.BOOL)
    def get_explained(self, finding: Finding) -> bool:
        # context["explained"]: identities explained in the request, or by sealed explanations.
        return finding.identity in self.context.get("explained", ())


class ChecksField(serializers.ListField):
    child = serializers.DictField()


class ResultPreviewSerializer(serializers.Serializer):
    study = serializers.CharField()
    plan_version = serializers.IntegerField()
    checks = ChecksField(help_text="The check of each reported p against its own statistic.")
    findings = FindingSerializer(many=True)
    unconfirmed_checks = serializers.ListField(
        child=serializers.CharField(), help_text="Rows whose p disagrees with its statistic: set report.confirm_checks."
    )
    unexplained = serializers.ListField(
        child=serializers.CharField(), help_text="Identities of findings that need an explanation and have none."
    )
    ready_to_seal = serializers.BooleanField()
    result = serializers.DictField(help_text="The result document as it would be sealed.")


class SealedExplanationSerializer(serializers.Serializer):
    finding = serializers.CharField()
    entry = PublicEntrySerializer()


class ResultSealedSerializer(serializers.Serializer):
    study = serializers.CharField()
    state = serializers.ChoiceField(choices=StudyState.choices)
    primary_verdict = serializers.ChoiceField(choices=Verdict.choices)
    entry = PublicEntrySerializer()
    checks = ChecksField()
    findings = FindingSerializer(many=True)
    explanations = SealedExplanationSerializer(many=True)


class PublicationSealedSerializer(serializers.Serializer):
    study = serializers.CharField()
    status = serializers.ChoiceField(choices=PublicationStatus.choices)
    doi = serializers.CharField(allow_blank=True)
    entry = PublicEntrySerializer()


class ErrorSerializer(serializers.Serializer):
    """Every error: a sentence that says what to change, and, where they apply, the details to change it."""

    error = serializers.CharField()
    field = serializers.CharField(required=False, help_text="The field or header the refusal concerns.")
    problems = serializers.DictField(
        child=serializers.ListField(child=serializers.CharField()),
        required=False,
        help_text='What to fix, per field, keyed by where it is: "rows[0].statistic", "report.stopping_note".',
    )
    findings = FindingSerializer(many=True, required=False)
    unexplained = serializers.ListField(child=serializers.CharField(), required=False)
    checks = ChecksField(required=False)
