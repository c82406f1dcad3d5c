import datetime as dt
import json
from dataclasses import dataclass
from pathlib import Path

import pytest
from django.db import transaction
from django.test import override_settings

from ledger.chain.models import Entry, EntryKind
from ledger.chain.services import entry_append
from ledger.labs.models import Role
from ledger.plans import services as plan_services
from ledger.plans.models import Study
from ledger.records.services import record_build
from ledger.results import services as result_services
from tests.factories import REPORT_AS_PLANNED, MembershipFactory, complete_plan, result_row, sealed_study
from tests.records.support import identity_overrides, identity_settings, instance_identity  # noqa: F401


@pytest.fixture(autouse=True)
def records_identity(identity_settings):  # noqa: F811
    """Every test here runs as an instance with the session's identity, in temporary directories."""
    return identity_settings


def study_with_history(member) -> Study:
    """A study with an amendment, results, a publication status and an explanation, interleaved with
    another lab's entries so that its leaves sit at uneven places in the tree."""
    MembershipFactory(role=Role.MANAGER)  # another lab's founding entry comes first
    embargo = (dt.date.today() + dt.timedelta(days=400)).isoformat()
    plan = complete_plan(title="Humming and line-length estimates")
    plan["dates"]["embargo_until"] = embargo
    study = sealed_study(member=member, content=plan, title=plan["title"])
    draft = plan_services.plan_amendment_begin(member=member, study=study)
    amended = dict(draft.content)
    amended["sample_size"] = {**amended["sample_size"], "planned_n": 140}
    amended["research_question"] = "Does a low hum bias estimates of line length in adults?"
    draft = plan_services.plan_draft_save(member=member, study=study, content=amended)
    plan_services.plan_seal(
        member=member,
        study=study,
        revision=draft.revision,
        acknowledge_warnings=True,
        amendment_reason="Pilot attrition was higher than expected.",
    )
    MembershipFactory(role=Role.MANAGER)
    plan_services.collection_start(member=member, study=study, started_on=dt.date.today())
    result_services.result_record(member=member, study=study, rows=[result_row()], report=REPORT_AS_PLANNED)
    result_services.publication_link_add(member=member, study=study, status="not_submitted")
    entry_append(
        kind=EntryKind.FINDING_EXPLAINED,
        payload={
            "schema": "forebook.test-explanation/1",
            "study": study.code,
            "finding": "planned_n_changed:study",
            "explanation": "Attrition in the pilot; the amendment raised N before collection began.",
        },
        study=study,
        author=member.user,
    )
    return Study.objects.get(pk=study.pk)


@dataclass(frozen=True)
class ExportedRecord:
    pdf: bytes
    document: dict
    study_code: str
    entry_hashes: list[str]
    checkpoint_root: str
    checkpoint_note: str
    path: Path


@pytest.fixture(scope="module")
def exported_record(django_db_setup, django_db_blocker, instance_identity, tmp_path_factory) -> ExportedRecord:  # noqa: F811
    """One record of `study_with_history`, exported once per module; the database is rolled back after."""
    directory = tmp_path_factory.mktemp("exported")
    with (
        django_db_blocker.unblock(),
        override_settings(**identity_overrides(identity_dir=instance_identity, records_dir=directory / "records")),
    ):
        with transaction.atomic():
            manager = MembershipFactory(role=Role.MANAGER)
            study = study_with_history(manager)
            built = record_build(study=study)
            entry_hashes = list(Entry.objects.filter(study=study).order_by("seq").values_list("entry_hash", flat=True))
            transaction.set_rollback(True)
    path = directory / f"{study.code}.pdf"
    path.write_bytes(built.pdf)
    return ExportedRecord(
        pdf=built.pdf,
        document=json.loads(json.dumps(built.document)),
        study_code=study.code,
        entry_hashes=entry_hashes,
        checkpoint_root=built.document["checkpoint"]["root_hash"],
        checkpoint_note=built.document["checkpoint"]["note"],
        path=path,
    )
