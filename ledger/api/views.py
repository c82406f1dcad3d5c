"""The JSON API: a lab's studies, sealed plans and entries for its members' tokens; results and
publication links sealed by the same services as the pages; and a public mirror of the ledger.

Every view resolves objects through the lab-scoped selectors with the token's membership, so a
token of one lab gets 404 for everything of another, exactly like the pages.
"""

from __future__ import annotations

import json
import re
from collections.abc import Callable
from typing import Any
from urllib.parse import urlencode

from django.http import Http404, JsonResponse
from django.urls import Resolver404, resolve, reverse
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiExample, OpenApiParameter, OpenApiResponse, extend_schema
from drf_spectacular.views import SpectacularSwaggerSplitView
from rest_framework.permissions import AllowAny
from rest_framework.request import Request
from rest_framework.response import Response
from rest_framework.views import APIView

from ledger.api import serializers as out
from ledger.api.binding import (
    ResultSubmission,
    publication_body_schema,
    publication_data,
    result_body_schema,
    result_submission,
)
from ledger.api.errors import UNPROCESSABLE_FIELDS, FieldProblems, refusal_from
from ledger.api.selectors import lab_entries_after, public_entries
from ledger.api.services import IDEMPOTENCY_HEADER, StoredReply, request_fingerprint, submission_once
from ledger.api.throttling import PublicRateThrottle, ReadRateThrottle, SubmissionRateThrottle
from ledger.chain.models import Entry, EntryKind
from ledger.compare import Finding, Severity
from ledger.core.errors import ActionRefused
from ledger.labs.models import Membership
from ledger.labs.services import require
from ledger.plans.models import Study
from ledger.plans.selectors import access_plan_version, access_study, studies_visible_to
from ledger.results.comparison import current_plan, sealed_explanations
from ledger.results.models import ResultReport
from ledger.results.services import ResultPreview, publication_link_add, result_preview, result_record

# Study codes are Crockford base-32; anything else cannot name a study, and never reaches the database.
STUDY_CODE = re.compile(r"[0-9A-Za-z]{1,16}")
# Printable ASCII without spaces: what a UUID, a hash or a script's own naming scheme fits in.
IDEMPOTENCY_KEY = re.compile(r"[!-~]{1,200}")
REPLAYED_HEADER = "Idempotency-Replayed"
# Result refusals a script answers with more in its next call; they come back with the findings and checks.
ASKED_FOR_MORE = UNPROCESSABLE_FIELDS - {IDEMPOTENCY_HEADER}

ERROR_MEANINGS = {
    400: "A parameter or field needs fixing: `problems` says where and how. Nothing was sealed.",
    401: "No usable API token: missing, unknown, revoked or expired. The message says where to create one.",
    403: "The token owner's role does not allow this on this study.",
    404: "No such study, plan version or endpoint in the token's lab (another lab's look the same).",
    409: "The study's state does not allow this now (e.g. results are already sealed).",
    422: "The request needs more: an explanation of each major finding (`findings`, `unexplained`), "
    "confirmation of flagged p-value checks (`checks`), or a fresh Idempotency-Key.",
    429: "Too many requests with this token: wait for Retry-After seconds.",
}


def errors(*codes: int) -> dict[int, OpenApiResponse]:
    return {code: OpenApiResponse(out.ErrorSerializer, description=ERROR_MEANINGS[code]) for code in codes}


RETRY_AFTER = OpenApiParameter(
    "Retry-After", OpenApiTypes.INT, OpenApiParameter.HEADER, response=[429], description="Seconds to wait."
)
IDEMPOTENCY_PARAMETERS = [
    OpenApiParameter(
        IDEMPOTENCY_HEADER,
        OpenApiTypes.STR,
        OpenApiParameter.HEADER,
        pattern=r"^[!-~]{1,200}$",
        description="Any string you choose per submission (a UUID, or a hash of your result). Retrying with the "
        "same key and the same body returns the first reply and seals nothing more; the same key with a "
        "different body is refused (422).",
    ),
    OpenApiParameter(
        REPLAYED_HEADER,
        OpenApiTypes.STR,
        OpenApiParameter.HEADER,
        response=[201],
        enum=["true"],
        description="Present when this reply is the stored reply of an earlier request with the same key.",
    ),
    RETRY_AFTER,
]


class TokenApiView(APIView):
    """A view for a lab member's API token: ``self.member`` is the token's membership."""

    throttle_classes = [ReadRateThrottle]

    @property
    def member(self) -> Membership:
        return self.request.auth.member

    def study_for(self, code: str, *, capability: str | None = None) -> Study:
        if not STUDY_CODE.fullmatch(code):
            raise Http404("No such study.")
        study = access_study(member=self.member, code=code)
        if capability:
            require(self.member, capability, study=study)
        return study


class SubmissionView(TokenApiView):
    """A POST that seals: rate-limited per token, and sealed at most once per Idempotency-Key."""

    throttle_classes = [SubmissionRateThrottle]

    def submit(self, perform: Callable[[], StoredReply]) -> Response:
        request = self.request
        key = request.headers.get(IDEMPOTENCY_HEADER)
        if key is None:
            reply = perform()
        elif not IDEMPOTENCY_KEY.fullmatch(key):
            raise FieldProblems(
                {IDEMPOTENCY_HEADER: ["Use 1 to 200 printable ASCII characters without spaces, such as a UUID."]},
                message=f"The {IDEMPOTENCY_HEADER} header is malformed; nothing was sealed.",
            )
        else:
            fingerprint = request_fingerprint(method=request.method, path=request.path, body=request.data)
            reply = submission_once(member=self.member, key=key, fingerprint=fingerprint, perform=perform)
        return Response(reply.body, status=reply.status, headers={REPLAYED_HEADER: "true"} if reply.replayed else None)


# --- studies and plans -----------------------------------------------------------------------------------


class StudyListView(TokenApiView):
    @extend_schema(
        operation_id="studies_list",
        summary="The studies of the token's lab",
        description="Every study of the token's lab, newest first, with its state, and whether this token may "
        "record its results.",
        parameters=[out.StudyQuerySerializer, RETRY_AFTER],
        responses={200: out.StudyListSerializer, **errors(400, 401, 429)},
    )
    def get(self, request: Request) -> Response:
        query = out.StudyQuerySerializer(data=request.query_params)
        query.is_valid(raise_exception=True)
        studies = studies_visible_to(
            member=self.member, state=query.validated_data.get("state", ""), mine=query.validated_data["mine"]
        )
        context = {"member": self.member, "request": request}
        return Response(out.StudyListSerializer({"studies": studies}, context=context).data)


class StudyDetailView(TokenApiView):
    @extend_schema(
        operation_id="study_read",
        summary="One study and its state",
        description="A code of another lab's study answers 404, like a code that does not exist.",
        parameters=[RETRY_AFTER],
        responses={200: out.StudySerializer, **errors(401, 404, 429)},
    )
    def get(self, request: Request, code: str) -> Response:
        study = self.study_for(code)
        return Response(out.StudySerializer(study, context={"member": self.member, "request": request}).data)


class SealedPlanView(TokenApiView):
    @extend_schema(
        operation_id="plan_read_latest",
        summary="The study's current sealed plan, as sealed",
        description="`payload` is the canonical JSON text exactly as it was hashed: SHA-256 of its UTF-8 bytes is "
        "`entry.payload_sha256`. 404 while the plan is still a draft.",
        parameters=[RETRY_AFTER],
        responses={200: out.SealedPlanSerializer, **errors(401, 404, 429)},
    )
    def get(self, request: Request, code: str) -> Response:
        study = self.study_for(code)
        return self.plan_reply(study, number=study.plan_version)

    def plan_reply(self, study: Study, *, number: int) -> Response:
        if study.plan_version == 0:
            raise Http404(f"Study {study.code} has no sealed plan yet; its plan is a draft.")
        if not 1 <= number <= study.plan_version:
            raise Http404(f"Study {study.code} has plan versions 1 to {study.plan_version}.")
        version = access_plan_version(study=study, number=number)
        body = {
            "study": study.code,
            "version": version.number,
            "latest": version.number == study.plan_version,
            "entry": version.entry,
            "payload": version.entry.payload,
        }
        return Response(out.SealedPlanSerializer(body).data)


class SealedPlanVersionView(SealedPlanView):
    @extend_schema(
        operation_id="plan_read_version",
        summary="One sealed plan version, as sealed",
        description="Version 1 is the first registration; later versions are amendments, sealed before data "
        "collection started.",
        parameters=[RETRY_AFTER],
        responses={200: out.SealedPlanSerializer, **errors(401, 404, 429)},
    )
    def get(self, request: Request, code: str, number: int) -> Response:
        return self.plan_reply(self.study_for(code), number=number)


# --- results and publication links -----------------------------------------------------------------------


def sealed_plan_of(study: Study) -> dict[str, Any]:
    if study.plan_version == 0:
        raise ActionRefused(
            f"Study {study.code} is still a draft: seal its plan and record the start of data collection first."
        )
    return current_plan(study)


def explained_identities(submission: ResultSubmission) -> set[str]:
    return {identity for identity, text in submission.explanations.items() if text.strip()}


def preview_details(preview: ResultPreview, submission: ResultSubmission) -> dict[str, Any]:
    """What a script needs to answer a refusal: every finding, the unexplained ones, the p-value checks."""
    return {
        "findings": preview.findings,
        "unexplained": [finding.identity for finding in preview.unexplained(submission.explanations)],
        "checks": preview.checks,
    }


NULL_RESULT_EXAMPLE = OpenApiExample(
    "A null result on H1",
    request_only=True,
    value={
        "rows": [
            {
                "hypothesis": "H1",
                "outcome": "O1",
                "reported_as": "primary",
                "direction": "increase",
                "test_family": "t_independent",
                "sides": "two",
                "alpha": 0.05,
                "multiplicity": "none",
                "statistic_kind": "t",
                "statistic": "0.84",
                "df1": 126,
                "p_reported": "0.40",
                "n_analysed": 128,
                "verdict": "null",
            }
        ],
        "report": {"stopping_rule_followed": "yes", "exclusions_as_planned": "yes"},
    },
)
NOT_SUBMITTED_EXAMPLE = OpenApiExample(
    "Not submitted for publication", request_only=True, value={"status": "not_submitted"}
)

RESULT_DESCRIPTION = (
    "Rows and report are validated by the result page's own forms (ResultRowForm, ResultReportForm) against the "
    'study\'s sealed plan, then sealed by the same service. Send numbers as JSON numbers, or as text ("2.10") to '
    "keep trailing zeros: the p-value check uses the precision you report. A result with major deviations from "
    "the plan is refused (422) with the findings; send their explanations under `explanations` "
    "({identity: text}) in the next call, and they are sealed with the result."
)


class ResultRecordView(SubmissionView):
    @extend_schema(
        operation_id="results_record",
        summary="Seal the study's results (null results included)",
        description=RESULT_DESCRIPTION,
        request={"application/json": result_body_schema()},
        examples=[NULL_RESULT_EXAMPLE],
        parameters=IDEMPOTENCY_PARAMETERS,
        responses={201: out.ResultSealedSerializer, **errors(400, 401, 403, 404, 409, 422, 429)},
    )
    def post(self, request: Request, code: str) -> Response:
        study = self.study_for(code, capability="can_record_results")
        return self.submit(lambda: self.record(study))

    def record(self, study: Study) -> StoredReply:
        submission = result_submission(plan=sealed_plan_of(study), body=self.request.data)
        try:
            result = result_record(
                member=self.member,
                study=study,
                rows=submission.rows,
                report=submission.report,
                confirm_checks=submission.confirm_checks,
                explanations=submission.explanations,
            )
        except ActionRefused as refusal:
            if refusal.field not in ASKED_FOR_MORE:
                raise
            preview = result_preview(study=study, rows=submission.rows, report=submission.report)
            details = preview_details(preview, submission)
            details["findings"] = out.FindingSerializer(
                details["findings"], many=True, context={"explained": explained_identities(submission)}
            ).data
            raise refusal_from(refusal, **details) from None
        return StoredReply(status=201, body=sealed_result_body(result))


def sealed_result_body(result: ResultReport) -> dict[str, Any]:
    entry = result.entry
    payload = json.loads(entry.payload)
    findings = [Finding(**{**item, "severity": Severity(item["severity"])}) for item in payload["findings"]]
    explanation_entries = [
        (explanation, json.loads(explanation.payload))
        for explanation in Entry.objects.filter(
            study=result.study, kind=EntryKind.FINDING_EXPLAINED, seq__gt=entry.seq
        ).order_by("seq")
    ]
    body = {
        "study": result.study.code,
        "state": result.study.state,
        "primary_verdict": result.primary_verdict,
        "entry": entry,
        "checks": payload["checks"],
        "findings": findings,
        "explanations": [
            {"finding": sealed["finding"], "entry": explanation}
            for explanation, sealed in explanation_entries
            if sealed["result_entry"] == entry.entry_hash
        ],
    }
    explained = set(sealed_explanations(study=result.study))
    return out.ResultSealedSerializer(body, context={"explained": explained}).data


class ResultPreviewView(TokenApiView):
    throttle_classes = [SubmissionRateThrottle]

    @extend_schema(
        operation_id="results_preview",
        summary="Check results against the plan without sealing anything",
        description="The same validation, p-value checks and findings as sealing, and the result document as it "
        "would be sealed. Nothing is written.",
        request={"application/json": result_body_schema()},
        examples=[NULL_RESULT_EXAMPLE],
        parameters=[RETRY_AFTER],
        responses={200: out.ResultPreviewSerializer, **errors(400, 401, 403, 404, 409, 429)},
    )
    def post(self, request: Request, code: str) -> Response:
        study = self.study_for(code, capability="can_record_results")
        submission = result_submission(plan=sealed_plan_of(study), body=request.data)
        preview = result_preview(study=study, rows=submission.rows, report=submission.report)
        details = preview_details(preview, submission)
        unconfirmed = [check["row"] for check in preview.unconfirmed]
        body = {
            "study": study.code,
            "plan_version": preview.plan_version.number,
            **details,
            "unconfirmed_checks": unconfirmed,
            "ready_to_seal": not details["unexplained"] and (not unconfirmed or submission.confirm_checks),
            "result": preview.payload,
        }
        context = {"explained": explained_identities(submission)}
        return Response(out.ResultPreviewSerializer(body, context=context).data)


class PublicationLinkView(SubmissionView):
    @extend_schema(
        operation_id="publications_link",
        summary="Seal the study's publication status (a DOI, or not submitted)",
        description="Validated by the study page's publication form. Send an Idempotency-Key so that a retry "
        "seals nothing twice.",
        request={"application/json": publication_body_schema()},
        examples=[NOT_SUBMITTED_EXAMPLE],
        parameters=IDEMPOTENCY_PARAMETERS,
        responses={201: out.PublicationSealedSerializer, **errors(400, 401, 403, 404, 409, 422, 429)},
    )
    def post(self, request: Request, code: str) -> Response:
        study = self.study_for(code, capability="can_link_publications")
        return self.submit(lambda: self.link(study))

    def link(self, study: Study) -> StoredReply:
        data = publication_data(body=self.request.data)
        link = publication_link_add(member=self.member, study=study, status=data["status"], doi=data["doi"])
        body = {"study": study.code, "status": link.status, "doi": link.doi, "entry": link.entry}
        return StoredReply(status=201, body=out.PublicationSealedSerializer(body).data)


# --- entries ----------------------------------------------------------------------------------------------


def entry_page(request: Request, entries: list[Entry], *, limit: int, serializer: type) -> Response:
    """One page of entries in sequence order; ``entries`` holds up to limit + 1, the extra one meaning "more"."""
    page = entries[:limit]
    next_after = page[-1].seq if len(entries) > limit else None
    next_url = None
    if next_after is not None:
        query = {**request.query_params.dict(), "after": next_after}
        next_url = request.build_absolute_uri(f"{request.path}?{urlencode(query)}")
    return Response(serializer({"entries": page, "next_after": next_after, "next": next_url}).data)


class LabEntryListView(TokenApiView):
    @extend_schema(
        operation_id="entries_list",
        summary="The ledger entries of the token's lab, with their payloads, oldest first",
        description="Each entry has every field of its hashed header, so its entry_hash can be recomputed. Page "
        "with `after` (the last `seq` you have) and `limit`; `next` is the following page, null at the end.",
        parameters=[out.LabEntryQuerySerializer, RETRY_AFTER],
        responses={200: out.LabEntryPageSerializer, **errors(400, 401, 429)},
    )
    def get(self, request: Request) -> Response:
        query = out.LabEntryQuerySerializer(data=request.query_params)
        query.is_valid(raise_exception=True)
        study_code = query.validated_data.get("study", "")
        if study_code and not STUDY_CODE.fullmatch(study_code):
            raise FieldProblems(
                {"study": ["Give a study code such as Q3T8ZK."]}, message="The study parameter is not a study code."
            )
        limit = query.validated_data["limit"]
        entries = lab_entries_after(
            member=self.member,
            after=query.validated_data["after"],
            limit=limit + 1,
            kind=query.validated_data.get("kind", ""),
            study_code=study_code,
        )
        return entry_page(request, entries, limit=limit, serializer=out.LabEntryPageSerializer)


class PublicEntryListView(APIView):
    """Every entry's public fields, for anyone mirroring the log. Never a payload: embargoed content stays private."""

    authentication_classes: list = []
    permission_classes = [AllowAny]
    throttle_classes = [PublicRateThrottle]

    @extend_schema(
        operation_id="public_entries_list",
        summary="All ledger entries, public fields only, oldest first (no token needed)",
        description="Sequence number, kind, time, hashes, lab uid and study code of every entry: never a payload "
        "or an author, so embargoed studies stay private. Rate-limited per client address.",
        parameters=[out.PublicEntryQuerySerializer, RETRY_AFTER],
        responses={200: out.PublicEntryPageSerializer, **errors(400, 429)},
    )
    def get(self, request: Request) -> Response:
        query = out.PublicEntryQuerySerializer(data=request.query_params)
        query.is_valid(raise_exception=True)
        limit = query.validated_data["limit"]
        entries = public_entries(after=query.validated_data["after"], limit=limit + 1)
        response = entry_page(request, entries, limit=limit, serializer=out.PublicEntryPageSerializer)
        # Mirrors and verifiers on other origins may read it, like the public log at /log/.
        response["Access-Control-Allow-Origin"] = "*"
        return response


# --- the document and what is not there --------------------------------------------------------------------


class ApiDocsView(SpectacularSwaggerSplitView):
    """The OpenAPI document rendered by Swagger UI from the sidecar package: no CDN, no inline script."""

    template_name = "api/swagger_ui.html"
    url_name = "api:schema"
    title = "Forebook API"


def api_not_found(request, *args, **kwargs) -> JsonResponse:
    """A JSON 404 for any /api/v1/ address that is not an endpoint (Django's own 404 is a page)."""
    message = f"No API endpoint at {request.path}."
    if not request.path.endswith("/"):
        try:
            match = resolve(request.path + "/")
        except Resolver404:
            match = None
        if match is not None and match.url_name != "not-found":
            message += f" The API's addresses end with a slash: {request.path}/."
    message += f" The endpoints are listed at {request.build_absolute_uri(reverse('api:docs'))}."
    return JsonResponse({"error": message}, status=404)
