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
def page(monkeypatch):
    """A fresh page in Debian's Chromium, for browser tests (marked `browser`, with live_server)."""
    from tests.support.browser import chromium_page

    # Playwright's sync API runs an event loop in the test's thread; the test's own ORM calls stay
    # synchronous and safe, which Django can only be told through this variable.
    monkeypatch.setenv("DJANGO_ALLOW_ASYNC_UNSAFE", "true")
    with chromium_page() as page:
        yield page


@pytest.fixture
def user(db):
    return UserFactory()


def pytest_collection_modifyitems(config, items):
    on_postgres = connection.settings_dict["ENGINE"].endswith("postgresql")
    skip = pytest.mark.skip(reason="needs PostgreSQL: set DATABASE_URL=postgres://… (make test does)")
    for item in items:
        if "postgres" in item.keywords and not on_postgres:
            item.add_marker(skip)
