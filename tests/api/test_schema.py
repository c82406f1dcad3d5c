"""The OpenAPI document: valid, generated from the forms that validate, and true of the running API.

The last test hands the served document to schemathesis (PyPI), which generates requests from it,
valid and invalid ones, sends them to the live test server with a real token, and checks every
answer: no server error, a documented status, a documented content type, a body that matches the
documented schema.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import pytest
import schemathesis
from django.core.management import call_command
from hypothesis import HealthCheck, given, settings
from schemathesis.checks import (
    content_type_conformance,
    not_a_server_error,
    response_headers_conformance,
    response_schema_conformance,
    status_code_conformance,
)
from schemathesis.generation import GenerationMode

from ledger.labs.models import Membership, Role
from ledger.plans.models import Study
from ledger.results.forms import PublicationForm, ResultReportForm, ResultRowForm
from tests.api.conftest import token_text
from tests.factories import LabFactory, MembershipFactory, collecting_study, reported_study, sealed_study

# Enough for every operation to meet real codes, bodies and refusals, and the run stays near a minute.
EXAMPLES_PER_OPERATION = 40


def test_the_document_validates_against_the_openapi_3_schema_without_warnings(tmp_path):
    # drf-spectacular's --validate checks the document against the OpenAPI 3.0 JSON Schema published by
    # the OpenAPI Initiative (bundled with the package); --fail-on-warn fails on anything it could not type.
    call_command("spectacular", "--validate", "--fail-on-warn", "--file", str(tmp_path / "openapi.yaml"))


def test_the_request_bodies_are_described_from_the_page_forms(client):
    document = client.get("/api/v1/schema/").json()
    operations = document["paths"]

    result_body = operations["/api/v1/studies/{code}/results/"]["post"]["requestBody"]["content"]["application/json"]
    row = result_body["schema"]["properties"]["rows"]["items"]
    report = result_body["schema"]["properties"]["report"]
    publication = operations["/api/v1/studies/{code}/publications/"]["post"]["requestBody"]["content"]

    assert set(row["properties"]) == set(ResultRowForm.base_fields)
    assert set(row["required"]) == {name for name, field in ResultRowForm.base_fields.items() if field.required}
    assert set(report["properties"]) == set(ResultReportForm.base_fields)
    assert set(publication["application/json"]["schema"]["properties"]) == set(PublicationForm.base_fields)
    assert row["properties"]["verdict"]["enum"] == [
        value for value, _label in ResultRowForm.base_fields["verdict"].choices
    ]


def test_token_endpoints_declare_the_bearer_scheme_and_the_mirror_needs_none(client):
    document = client.get("/api/v1/schema/").json()

    scheme = document["components"]["securitySchemes"]["apiToken"]
    assert (scheme["type"], scheme["scheme"]) == ("http", "bearer")
    assert document["paths"]["/api/v1/studies/"]["get"]["security"] == [{"apiToken": []}]
    assert document["paths"]["/api/v1/public/entries/"]["get"].get("security", [{}]) == [{}]


@dataclass
class ApiWorld:
    token: str
    study_codes: itertools.cycle
    codes_in_cycle: int


@pytest.fixture
def api_world(transactional_db) -> ApiWorld:
    lab = LabFactory(name="Fuzzed Lab", slug="fuzzed-lab")
    investigator = MembershipFactory(lab=lab, role=Role.INVESTIGATOR)
    MembershipFactory(lab=lab, role=Role.MANAGER)
    studies = [
        collecting_study(member=investigator, title="Open for results"),
        reported_study(member=investigator, title="Already reported"),
        sealed_study(member=investigator, title="Sealed, not collecting"),
        sealed_study(member=MembershipFactory(role=Role.MANAGER), title="Another lab's study"),
    ]
    assert Membership.objects.filter(lab=lab).count() == 2
    # Half of the generated cases keep their invented code; the rest name one of these studies.
    codes = [None, *(study.code for study in studies)]
    return ApiWorld(token=token_text(investigator), study_codes=itertools.cycle(codes), codes_in_cycle=len(codes))


@pytest.fixture
def served_document(live_server, settings, api_world):
    # The fuzzer sends hundreds of requests a minute: lift the rate limits so they reach the views.
    settings.FOREBOOK_API_SUBMISSION_RATE = settings.FOREBOOK_API_READ_RATE = "100000/minute"
    settings.FOREBOOK_API_PUBLIC_RATE = "100000/minute"
    return schemathesis.openapi.from_url(f"{live_server.url}/api/v1/schema/")


CHECKS = [
    not_a_server_error,
    status_code_conformance,
    content_type_conformance,
    response_headers_conformance,
    response_schema_conformance,
]


def exchange_many(strategy, *, api_world: ApiWorld, base_url: str):
    @given(case=strategy)
    @settings(
        max_examples=EXAMPLES_PER_OPERATION, deadline=None, database=None, suppress_health_check=list(HealthCheck)
    )
    def exchange(case):
        code = next(api_world.study_codes)
        if code is not None and "code" in (case.path_parameters or {}):
            case.path_parameters["code"] = code
        case.call_and_validate(base_url=base_url, headers={"Authorization": f"Bearer {api_world.token}"}, checks=CHECKS)

    return exchange


@pytest.mark.django_db(transaction=True)
@pytest.mark.parametrize("mode", [GenerationMode.POSITIVE, GenerationMode.NEGATIVE], ids=lambda mode: mode.value)
def test_the_running_api_answers_as_its_document_says(served_document, api_world, live_server, mode):
    # schemathesis's pytest plugin does not run under pytest 9, so its Python API drives Hypothesis here.
    operations = [result.ok() for result in served_document.get_all_operations()]
    assert len(operations) == 9

    for operation in operations:
        generated = operation.as_strategy(generation_mode=mode)
        exchange_many(generated, api_world=api_world, base_url=live_server.url)()
        if mode is GenerationMode.POSITIVE:
            # The document's own examples (a valid null result, a publication status), sent once per study
            # of the world: they reach the 201 and 409 answers that random bodies never do.
            for documented in served_document.get_strategies_from_examples(operation):
                for _ in range(api_world.codes_in_cycle):
                    exchange_many(documented, api_world=api_world, base_url=live_server.url)()

    if mode is GenerationMode.POSITIVE:
        assert Study.objects.get(title="Open for results").state == "reported", "the documented example never sealed"
    # Whatever was sent, another lab's study was not touched.
    assert Study.objects.filter(title="Another lab's study", state="sealed").exists()
