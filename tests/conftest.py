import pytest
from django.db import connection

from ledger.labs.models import Role
from tests.factories import LabFactory, MembershipFactory, UserFactory


@pytest.fixture
def lab(db):
    return LabFactory()


@pytest.fixture
def manager(lab):
    return MembershipFactory(lab=lab, role=Role.MANAGER)


@pytest.fixture
def investigator(lab):
    return MembershipFactory(lab=lab, role=Role.INVESTIGATOR)


@pytest.fixture
def other_investigator(lab):
    """An investigator of the same lab who is not on the studies the `investigator` enrols."""
    return MembershipFactory(lab=lab, role=Role.INVESTIGATOR)


@pytest.fixture
def reader(lab):
    return MembershipFactory(lab=lab, role=Role.READER)


@pytest.fixture
def outsider(db):
    """A manager of another lab: must see nothing of `lab`."""
    return MembershipFactory(role=Role.MANAGER)


@pytest.fixture
def user(db):
    return UserFactory()


def pytest_collection_modifyitems(config, items):
    on_postgres = connection.settings_dict["ENGINE"].endswith("postgresql")
    skip = pytest.mark.skip(reason="needs PostgreSQL: set DATABASE_URL=postgres://… (make test does)")
    for item in items:
        if "postgres" in item.keywords and not on_postgres:
            item.add_marker(skip)
