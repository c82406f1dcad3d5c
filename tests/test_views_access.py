"""Who gets what from every URL: walked from the URL conf, checked against an explicit table.

Every named route of ``ledger.urls`` (admin/, accounts/ and static files aside) is requested by six
kinds of visitor, with GET and with POST, each as its own test. A route missing from EXPECTED fails
its tests, so a new page cannot ship without saying who may use it.

Statuses: 302 to the sign-in page for anonymous visitors; 404 for a member of another lab on every
lab URL (missing and foreign look the same); 403 for a member whose role lacks the capability; 405
for a method the view does not take; 200 or 302 when the request is served. The public log and the
public record check answer everyone alike, from an instance without a signing identity (404 or 503
where they need one; a plain 404 has nothing to do with access there).
"""
from __future__ import annotations

import datetime as dt
import re
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import Any

import pytest
from django.conf import settings
from django.contrib.messages import constants as message_levels
from django.contrib.messages import get_messages
from django.urls import URLResolver, get_resolver, reverse

from ledger.chain.models import Entry
from ledger.labs.models import Lab, Membership, Role
from ledger.lines.services import line_create
from ledger.plans import services as plan_services
from ledger.plans.models import Study
from ledger.records.services import record_export_request
from ledger.reports.services import report_export_request
from ledger.results.comparison import study_findings
from tests.factories import (
    MembershipFactory,
    collecting_study,
    complete_plan,
    enrolled_study,
    reported_study,
    result_row,
    sealed_study,
)

SKIPPED_PREFIXES = ("admin/", "accounts/", settings.STATIC_URL.lstrip("/"))
VISITORS = ("anonymous", "outsider", "reader", "investigator_off_study", "investigator_on_study", "manager")


def named_routes() -> Iterator[tuple[str, tuple[str, ...]]]:
    """(namespaced name, URL parameters) for every route the access rules apply to."""

    def walk(patterns, prefix: str, namespace: str, parameters: tuple[str, ...]):
        for pattern in patterns:
            route = prefix + str(pattern.pattern)
            if route.startswith(SKIPPED_PREFIXES):
                continue
            names = parameters + tuple(getattr(pattern.pattern, "converters", {}))
            if isinstance(pattern, URLResolver):
                inner = ":".join(part for part in (namespace, pattern.namespace) if part)
                yield from walk(pattern.url_patterns, route, inner, names)
            else:
                assert pattern.name, f"The route {route!r} has no name; name it and add it to EXPECTED."
                yield (f"{namespace}:{pattern.name}" if namespace else pattern.name), names

    yield from walk(get_resolver().url_patterns, "", "", ())


ROUTES = dict(named_routes())


# --- the world each request meets -------------------------------------------------------------------------


@dataclass
class World:
    lab: Lab
    visitors: dict[str, Membership | None]
    target: Membership  # a further member, for the member pages
    study: Study | None = None

    def url_kwargs(self, parameters: tuple[str, ...], route_values: dict[str, Any]) -> dict[str, Any]:
        values = {"lab_slug": self.lab.slug, "member_code": self.target.code, "number": 1, "old": 1, "new": 2}
        if self.study is not None:
            values["code"] = self.study.code
            first_entry = Entry.objects.filter(study=self.study).order_by("seq").first()
            if first_entry is not None:
                values["entry_hash"] = first_entry.entry_hash
                values["size"] = first_entry.seq
        values.update(route_values)
        missing = set(parameters) - set(values)
        assert not missing, f"No value for URL parameter(s) {missing}: give the route a study or url_values."
        return {name: values[name] for name in parameters}


def amending_study(*, member: Membership) -> Study:
    study = sealed_study(member=member)
    plan_services.plan_amendment_begin(member=member, study=study)
    return study


def amended_study(*, member: Membership) -> Study:
    study = amending_study(member=member)
    content = complete_plan()
    content["sample_size"]["planned_n"] = 168
    draft = plan_services.plan_draft_save(member=member, study=study, content=content)
    plan_services.plan_seal(member=member, study=study, revision=draft.revision, amendment_reason="Larger N.")
    return Study.objects.get(pk=study.pk)


STUDY_BUILDERS: dict[str, Callable[..., Study]] = {
    "draft": enrolled_study,
    "sealed": sealed_study,
    "amending": amending_study,
    "amended": amended_study,
    "collecting": collecting_study,
    "reported": reported_study,
}


# --- URL values of objects only some routes need ------------------------------------------------------------
# Exports are requested through their services and stay queued: their tasks start only after commit.


def record_export(world: World) -> dict[str, str]:
    export = record_export_request(member=world.visitors["investigator_on_study"], study=world.study)
    return {"export_code": export.code}


def report_export(world: World) -> dict[str, str]:
    export = report_export_request(member=world.visitors["manager"], file_format="summary_csv")
    return {"export_code": export.code}


def research_line(world: World) -> dict[str, str]:
    line = line_create(member=world.visitors["manager"], name="Flicker effects", measure="smd")
    return {"line_code": line.code}


# --- POST bodies that make each action succeed when it is allowed ------------------------------------------


def management_form(prefix: str, count: int) -> dict[str, str]:
    return {f"{prefix}-TOTAL_FORMS": str(count), f"{prefix}-INITIAL_FORMS": str(count)}


def plan_edit_body(world: World) -> dict[str, str]:
    return {
        "plan-title": "Retitled draft", **management_form("outcomes", 0), **management_form("hypotheses", 0),
        **management_form("investigators", 0),
    }


def plan_review_body(world: World) -> dict[str, str]:
    return {"revision": str(world.study.draft.revision), "confirm": "on"}


def explanation_body(world: World) -> dict[str, str]:
    # The factory's reported study leaves its secondary outcome unreported: a finding to explain.
    first = study_findings(study=world.study)[0].finding
    return {"identity": first.identity, "explanation": "The confidence ratings were lost in a file-format error."}


def result_body(world: World) -> dict[str, str]:
    row = {f"rows-0-{name}": "" if value is None else str(value) for name, value in result_row().items()}
    report = {"report-stopping_rule_followed": "yes", "report-exclusions_as_planned": "yes"}
    return {**management_form("rows", 1), **row, **report}


# --- the table ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Expect:
    """Expected statuses per visitor, in VISITORS order, for GET and POST, and what the route needs."""

    get: tuple[int, int, int, int, int, int]
    post: tuple[int, int, int, int, int, int]
    study: str | None = None  # a key of STUDY_BUILDERS
    body: Callable[[World], dict[str, str]] = lambda world: {}
    query: Callable[[World], dict[str, str]] = lambda world: {}
    url_values: Callable[[World], dict[str, str]] = lambda world: {}


EXPECTED: dict[str, Expect] = {
    #                                      anon outsider reader inv-off inv-on manager
    "home": Expect(get=(302, 302, 302, 302, 302, 302), post=(302, 405, 405, 405, 405, 405)),
    "lab-create": Expect(get=(302, 200, 200, 200, 200, 200), post=(302, 302, 302, 302, 302, 302),
                         body=lambda world: {"name": "Freshly founded group"}),
    "labs:dashboard": Expect(get=(302, 404, 200, 200, 200, 200), post=(302, 404, 405, 405, 405, 405)),
    "labs:members": Expect(get=(302, 404, 200, 200, 200, 200), post=(302, 404, 403, 403, 403, 302),
                           body=lambda world: {"email": "new.member@example.invalid", "name": "New Member",
                                               "role": Role.READER}),
    "labs:member-role": Expect(get=(302, 404, 403, 403, 403, 405), post=(302, 404, 403, 403, 403, 302),
                               body=lambda world: {"role": Role.READER}),
    "labs:member-remove": Expect(get=(302, 404, 403, 403, 403, 405), post=(302, 404, 403, 403, 403, 302)),
    "labs:settings": Expect(get=(302, 404, 403, 403, 403, 200), post=(302, 404, 403, 403, 403, 302),
                            body=lambda world: {"name": "Renamed", "sample_size_tolerance_pct": "5",
                                                "overdue_grace_months": "6"}),
    "plans:study-list": Expect(get=(302, 404, 200, 200, 200, 200), post=(302, 404, 405, 405, 405, 405)),
    "plans:study-enrol": Expect(get=(302, 404, 403, 200, 200, 200), post=(302, 404, 403, 302, 302, 302),
                                body=lambda world: {"title": "A newly enrolled study"}),
    "plans:study": Expect(get=(302, 404, 200, 200, 200, 200), post=(302, 404, 405, 405, 405, 405), study="draft"),
    "plans:plan-edit": Expect(get=(302, 404, 403, 403, 200, 200), post=(302, 404, 403, 403, 302, 302),
                              study="draft", body=plan_edit_body),
    "plans:power-preview": Expect(get=(302, 404, 403, 403, 200, 200), post=(302, 404, 403, 403, 405, 405),
                                  study="draft"),
    "plans:plan-review": Expect(get=(302, 404, 403, 403, 200, 200), post=(302, 404, 403, 403, 302, 302),
                                study="draft", body=plan_review_body),
    "plans:plan-version": Expect(get=(302, 404, 200, 200, 200, 200), post=(302, 404, 405, 405, 405, 405),
                                 study="sealed"),
    "plans:plan-diff": Expect(get=(302, 404, 200, 200, 200, 200), post=(302, 404, 405, 405, 405, 405),
                              study="amended"),
    "plans:amend-begin": Expect(get=(302, 404, 403, 403, 405, 405), post=(302, 404, 403, 403, 302, 302),
                                study="sealed"),
    "plans:amend-discard": Expect(get=(302, 404, 403, 403, 405, 405), post=(302, 404, 403, 403, 302, 302),
                                  study="amending"),
    "plans:collection-start": Expect(get=(302, 404, 403, 403, 405, 405), post=(302, 404, 403, 403, 302, 302),
                                     study="sealed", body=lambda world: {"started_on": dt.date.today().isoformat()}),
    "plans:withdraw": Expect(get=(302, 404, 403, 403, 405, 405), post=(302, 404, 403, 403, 302, 302),
                             study="sealed", body=lambda world: {"reason": "Funding ended."}),
    "plans:discard": Expect(get=(302, 404, 403, 403, 405, 405), post=(302, 404, 403, 403, 302, 302), study="draft"),
    "results:record": Expect(get=(302, 404, 403, 403, 200, 200), post=(302, 404, 403, 403, 302, 302),
                             study="collecting", body=result_body),
    "results:check": Expect(get=(302, 404, 403, 403, 200, 200), post=(302, 404, 403, 403, 405, 405),
                            study="collecting"),
    "results:explain": Expect(get=(302, 404, 403, 403, 405, 405), post=(302, 404, 403, 403, 302, 302),
                              study="reported", body=explanation_body),
    "results:publication": Expect(get=(302, 404, 403, 403, 405, 405), post=(302, 404, 403, 403, 302, 302),
                                  study="reported", body=lambda world: {"status": "not_submitted", "doi": ""}),
    "chain:entries": Expect(get=(302, 404, 200, 200, 200, 200), post=(302, 404, 405, 405, 405, 405)),
    "chain:entry": Expect(get=(302, 404, 200, 200, 200, 200), post=(302, 404, 405, 405, 405, 405), study="sealed"),
    # Record exports: every member of the lab may export and fetch a study's signed record.
    "records:export": Expect(get=(302, 404, 405, 405, 405, 405), post=(302, 404, 302, 302, 302, 302), study="sealed"),
    "records:status": Expect(get=(302, 404, 200, 200, 200, 200), post=(302, 404, 405, 405, 405, 405),
                             study="sealed", url_values=record_export),
    # 409: the export is still queued; the download answers once it is ready.
    "records:download": Expect(get=(302, 404, 409, 409, 409, 409), post=(302, 404, 405, 405, 405, 405),
                               study="sealed", url_values=record_export),
    # Research lines are lab-wide: investigators on and off a study are alike here.
    "lines:list": Expect(get=(302, 404, 200, 200, 200, 200), post=(302, 404, 405, 405, 405, 405)),
    "lines:create": Expect(get=(302, 404, 403, 200, 200, 200), post=(302, 404, 403, 302, 302, 302),
                           body=lambda world: {"name": "Lamp effects", "measure": "smd"}),
    "lines:line": Expect(get=(302, 404, 200, 200, 200, 200), post=(302, 404, 405, 405, 405, 405),
                         url_values=research_line),
    "lines:edit": Expect(get=(302, 404, 403, 200, 200, 200), post=(302, 404, 403, 302, 302, 302),
                         url_values=research_line, body=lambda world: {"name": "Renamed line", "measure": "smd"}),
    "lines:delete": Expect(get=(302, 404, 403, 405, 405, 405), post=(302, 404, 403, 302, 302, 302),
                           url_values=research_line),
    "lines:funnel": Expect(get=(302, 404, 200, 200, 200, 200), post=(302, 404, 405, 405, 405, 405),
                           url_values=research_line),
    "lines:pcurve": Expect(get=(302, 404, 200, 200, 200, 200), post=(302, 404, 405, 405, 405, 405),
                           url_values=research_line),
    # The lab report: every member may read it and ask for it as a file.
    "reports:lab": Expect(get=(302, 404, 200, 200, 200, 200), post=(302, 404, 405, 405, 405, 405)),
    "reports:chart": Expect(get=(302, 404, 200, 200, 200, 200), post=(302, 404, 405, 405, 405, 405),
                            url_values=lambda world: {"chart": "outcomes"}),
    "reports:export": Expect(get=(302, 404, 405, 405, 405, 405), post=(302, 404, 302, 302, 302, 302),
                             body=lambda world: {"file_format": "summary_csv"}),
    "reports:status": Expect(get=(302, 404, 200, 200, 200, 200), post=(302, 404, 405, 405, 405, 405),
                             url_values=report_export),
    # 409: the file is still queued; the download answers once it is ready.
    "reports:download": Expect(get=(302, 404, 409, 409, 409, 409), post=(302, 404, 405, 405, 405, 405),
                               url_values=report_export),
    # Public, no sign-in: the same answer for everyone.
    "log:index": Expect(get=(200, 200, 200, 200, 200, 200), post=(405, 405, 405, 405, 405, 405)),
    "log:checkpoint-note": Expect(get=(404, 404, 404, 404, 404, 404), post=(405, 405, 405, 405, 405, 405)),
    "log:checkpoint-latest": Expect(get=(404, 404, 404, 404, 404, 404), post=(405, 405, 405, 405, 405, 405)),
    "log:checkpoint-size": Expect(get=(404, 404, 404, 404, 404, 404), post=(405, 405, 405, 405, 405, 405),
                                  study="sealed"),
    "log:inclusion": Expect(get=(200, 200, 200, 200, 200, 200), post=(405, 405, 405, 405, 405, 405), study="sealed",
                            query=lambda world: {"seq": "1", "size": "1"}),
    "log:consistency": Expect(get=(200, 200, 200, 200, 200, 200), post=(405, 405, 405, 405, 405, 405),
                              study="sealed", query=lambda world: {"from": "1", "to": "1"}),
    "log:key": Expect(get=(503, 503, 503, 503, 503, 503), post=(405, 405, 405, 405, 405, 405)),
    "public-records:verify": Expect(get=(200, 200, 200, 200, 200, 200), post=(200, 200, 200, 200, 200, 200)),
    "public-records:certificate": Expect(get=(404, 404, 404, 404, 404, 404), post=(405, 405, 405, 405, 405, 405)),
    # API tokens: every member manages their own (a POST that creates one answers 200, showing it once).
    "api-tokens:list": Expect(get=(302, 404, 200, 200, 200, 200), post=(302, 404, 200, 200, 200, 200),
                              body=lambda world: {"name": "matrix token"}),
    # The JSON API takes API tokens only: a signed-in browser session is no credential there (401).
    # Its own access rules per token are in tests/api.
    "api:schema": Expect(get=(200, 200, 200, 200, 200, 200), post=(405, 405, 405, 405, 405, 405)),
    "api:docs": Expect(get=(200, 200, 200, 200, 200, 200), post=(405, 405, 405, 405, 405, 405)),
    "api:public-entries": Expect(get=(200, 200, 200, 200, 200, 200), post=(405, 405, 405, 405, 405, 405)),
    "api:studies": Expect(get=(401, 401, 401, 401, 401, 401), post=(401, 401, 401, 401, 401, 401)),
    "api:study": Expect(get=(401, 401, 401, 401, 401, 401), post=(401, 401, 401, 401, 401, 401), study="collecting"),
    "api:plan": Expect(get=(401, 401, 401, 401, 401, 401), post=(401, 401, 401, 401, 401, 401), study="collecting"),
    "api:plan-version": Expect(get=(401, 401, 401, 401, 401, 401), post=(401, 401, 401, 401, 401, 401),
                               study="collecting"),
    "api:results": Expect(get=(401, 401, 401, 401, 401, 401), post=(401, 401, 401, 401, 401, 401),
                          study="collecting"),
    "api:results-preview": Expect(get=(401, 401, 401, 401, 401, 401), post=(401, 401, 401, 401, 401, 401),
                                  study="collecting"),
    "api:publications": Expect(get=(401, 401, 401, 401, 401, 401), post=(401, 401, 401, 401, 401, 401),
                               study="collecting"),
    "api:entries": Expect(get=(401, 401, 401, 401, 401, 401), post=(401, 401, 401, 401, 401, 401)),
    "api:not-found": Expect(get=(404, 404, 404, 404, 404, 404), post=(404, 404, 404, 404, 404, 404)),
}

CASES = [
    pytest.param(name, method, visitor, id=f"{name}-{method}-{visitor}")
    for name in ROUTES
    for method in ("GET", "POST")
    for visitor in VISITORS
]


@pytest.fixture(autouse=True)
def no_signing_identity(settings, tmp_path):
    # The public log and record pages answer from the instance's signing identity and checkpoints;
    # pinning "none" keeps the table the same on every machine.
    settings.FOREBOOK_IDENTITY_DIR = str(tmp_path / "no-identity")
    settings.FOREBOOK_SIGNING_KEY = settings.FOREBOOK_SIGNING_CERT = settings.FOREBOOK_LOG_KEY = ""
    settings.FOREBOOK_RECORDS_DIR = str(tmp_path / "records")


@pytest.fixture
def world(lab, manager, investigator, other_investigator, reader, outsider) -> World:
    return World(
        lab=lab,
        visitors={
            "anonymous": None, "outsider": outsider, "reader": reader, "investigator_off_study": other_investigator,
            "investigator_on_study": investigator, "manager": manager,
        },
        target=MembershipFactory(lab=lab, role=Role.INVESTIGATOR),
    )


def test_the_table_names_only_routes_that_exist():
    assert set(EXPECTED) - set(ROUTES) == set()


@pytest.mark.django_db
@pytest.mark.parametrize(("name", "method", "visitor"), CASES)
def test_access(client, world, name, method, visitor):
    expect = EXPECTED.get(name)
    assert expect is not None, f"{name} is not in EXPECTED: say who may GET and POST it."
    if expect.study is not None:
        world.study = STUDY_BUILDERS[expect.study](member=world.visitors["investigator_on_study"])
    url = reverse(name, kwargs=world.url_kwargs(ROUTES[name], expect.url_values(world)))
    member = world.visitors[visitor]
    if member is not None:
        client.force_login(member.user)

    if method == "GET":
        response = client.get(url, data=expect.query(world))
    else:
        response = client.post(url, data=expect.body(world))

    statuses = expect.get if method == "GET" else expect.post
    expected_status = statuses[VISITORS.index(visitor)]
    assert response.status_code == expected_status
    if visitor == "anonymous" and expected_status == 302:
        assert response["Location"].startswith(f"{reverse('login')}?next=")
    elif method == "POST" and expected_status == 302:
        # The action went through: a refused one also redirects, but with an error message.
        errors = [m.message for m in get_messages(response.wsgi_request) if m.level == message_levels.ERROR]
        assert errors == []


# --- guessing codes under one's own lab --------------------------------------------------------------------

# The API answers a browser session with 401 before it looks at a code; tests/api checks its 404s per token.
STUDY_ROUTES = [name for name, parameters in ROUTES.items() if "code" in parameters and not name.startswith("api:")]


def without_csrf_token(page: bytes) -> bytes:
    # The page header's sign-out form carries a fresh CSRF token on every response.
    return re.sub(rb'name="csrfmiddlewaretoken" value="[^"]*"', b"", page)


@pytest.mark.django_db
@pytest.mark.parametrize("method", ["GET", "POST"])
@pytest.mark.parametrize("name", STUDY_ROUTES)
def test_another_labs_study_code_under_ones_own_lab_is_a_404_like_a_made_up_code(
    client, investigator, outsider, name, method
):
    victim = amended_study(member=investigator)
    made_up = "Z" * len(victim.code)
    assert not Study.objects.filter(code=made_up).exists()
    client.force_login(outsider.user)
    # Every parameter but the lab and the version numbers (study code, export code …) gets the guess.
    own_lab = {"lab_slug": outsider.lab.slug, "number": 1, "old": 1, "new": 2}
    responses = []
    for code in (victim.code, made_up):
        kwargs = {parameter: own_lab.get(parameter, code) for parameter in ROUTES[name]}
        url = reverse(name, kwargs=kwargs)
        responses.append(client.get(url) if method == "GET" else client.post(url, data={"reason": "Guessing."}))
    guessed, invented = responses
    assert guessed.status_code == invented.status_code == 404
    assert without_csrf_token(guessed.content) == without_csrf_token(invented.content)
    assert Study.objects.get(pk=victim.pk).state == victim.state
