"""Lab and membership writes: every grant, change and revocation of a role is sealed, by its author."""
import json

import pytest
from django.core.exceptions import PermissionDenied

from ledger.chain.models import Entry, EntryKind
from ledger.chain.verification import verify_ledger
from ledger.core.errors import ActionRefused
from ledger.labs import services
from ledger.labs.models import Lab, Membership, Role
from tests.factories import MembershipFactory, UserFactory

pytestmark = pytest.mark.django_db


def role_entries(lab: Lab) -> list[Entry]:
    return list(Entry.objects.filter(lab=lab, kind=EntryKind.MEMBER_ROLE_CHANGED).order_by("seq"))


def assert_role_entry(entry: Entry, *, member: Membership, author, previous: str, new: str) -> None:
    payload = json.loads(entry.payload)
    assert payload == {
        "schema": "forebook.role/1",
        "member": member.code,
        "user": member.user.pk,
        "name": member.display_name,
        "from": previous,
        "to": new,
    }
    assert entry.author_id == author.pk
    assert entry.lab_id == member.lab_id
    assert entry.study_id is None


# --- creating a lab ------------------------------------------------------------------------------


def test_lab_create_makes_the_founder_its_manager_and_seals_the_grant(user):
    lab = services.lab_create(user=user, name="  Quiet Room Group ")
    founder = Membership.objects.get(lab=lab, user=user)
    assert (lab.name, lab.slug, founder.role) == ("Quiet Room Group", "quiet-room-group", Role.MANAGER)
    [entry] = role_entries(lab)
    assert_role_entry(entry, member=founder, author=user, previous="", new=Role.MANAGER)
    assert verify_ledger().ok


@pytest.mark.parametrize(
    ("name", "slug", "field"),
    [
        pytest.param("!!!", "", "name", id="no-letter-or-digit"),
        pytest.param("Second group", "test-lab-taken", "slug", id="slug-taken"),
    ],
)
def test_lab_create_refusals_name_the_field_and_write_nothing(user, name, slug, field):
    Lab.objects.create(name="Existing", slug="test-lab-taken")
    with pytest.raises(ActionRefused) as refusal:
        services.lab_create(user=user, name=name, slug=slug)
    assert refusal.value.field == field
    assert Entry.objects.count() == 0
    assert not Membership.objects.filter(user=user).exists()


# --- adding, changing and removing members ---------------------------------------------------------


def test_member_add_seals_the_new_role_with_the_manager_as_author(manager):
    newcomer = services.member_add(manager=manager, user=UserFactory(), role=Role.READER)
    [entry] = role_entries(manager.lab)
    assert_role_entry(entry, member=newcomer, author=manager.user, previous="", new=Role.READER)


def test_adding_an_active_member_again_is_refused_and_writes_nothing(manager, reader):
    with pytest.raises(ActionRefused, match="already a member") as refusal:
        services.member_add(manager=manager, user=reader.user, role=Role.INVESTIGATOR)
    assert refusal.value.field == "email"
    assert role_entries(manager.lab) == []
    reader.refresh_from_db()
    assert reader.role == Role.READER


def test_adding_a_removed_member_again_reactivates_the_same_membership(manager, reader):
    services.member_remove(manager=manager, member=reader)
    again = services.member_add(manager=manager, user=reader.user, role=Role.INVESTIGATOR)
    assert again.pk == reader.pk
    assert (again.is_active, again.role) == (True, Role.INVESTIGATOR)
    removal, readmission = role_entries(manager.lab)
    assert_role_entry(removal, member=reader, author=manager.user, previous=Role.READER, new="")
    assert_role_entry(readmission, member=again, author=manager.user, previous="", new=Role.INVESTIGATOR)


def test_member_role_change_seals_old_and_new_role(manager, investigator):
    services.member_role_change(manager=manager, member=investigator, role=Role.MANAGER)
    investigator.refresh_from_db()
    assert investigator.role == Role.MANAGER
    [entry] = role_entries(manager.lab)
    assert_role_entry(entry, member=investigator, author=manager.user, previous=Role.INVESTIGATOR, new=Role.MANAGER)


def test_changing_to_the_same_role_changes_nothing_and_seals_nothing(manager, investigator):
    services.member_role_change(manager=manager, member=investigator, role=Role.INVESTIGATOR)
    assert role_entries(manager.lab) == []


def test_member_remove_deactivates_and_seals_the_revocation(manager, investigator):
    services.member_remove(manager=manager, member=investigator)
    investigator.refresh_from_db()
    assert investigator.is_active is False
    [entry] = role_entries(manager.lab)
    assert_role_entry(entry, member=investigator, author=manager.user, previous=Role.INVESTIGATOR, new="")


def test_the_last_manager_cannot_be_demoted(manager):
    with pytest.raises(ActionRefused, match="at least one manager") as refusal:
        services.member_role_change(manager=manager, member=manager, role=Role.READER)
    assert refusal.value.field == "role"
    manager.refresh_from_db()
    assert manager.role == Role.MANAGER
    assert role_entries(manager.lab) == []


def test_the_last_manager_cannot_be_removed(manager):
    with pytest.raises(ActionRefused, match="at least one manager"):
        services.member_remove(manager=manager, member=manager)
    manager.refresh_from_db()
    assert manager.is_active is True
    assert role_entries(manager.lab) == []


def test_a_removed_manager_does_not_count_as_another_manager(lab, manager):
    MembershipFactory(lab=lab, role=Role.MANAGER, is_active=False)
    with pytest.raises(ActionRefused, match="at least one manager"):
        services.member_role_change(manager=manager, member=manager, role=Role.INVESTIGATOR)


def test_with_a_second_manager_a_manager_can_step_down(lab, manager):
    deputy = MembershipFactory(lab=lab, role=Role.MANAGER)
    services.member_role_change(manager=deputy, member=manager, role=Role.INVESTIGATOR)
    manager.refresh_from_db()
    assert manager.role == Role.INVESTIGATOR
    [entry] = role_entries(lab)
    assert_role_entry(entry, member=manager, author=deputy.user, previous=Role.MANAGER, new=Role.INVESTIGATOR)


@pytest.mark.parametrize("actor_fixture", ["investigator", "reader"])
def test_only_managers_change_membership(request, actor_fixture, other_investigator):
    actor = request.getfixturevalue(actor_fixture)
    attempts = [
        lambda: services.member_add(manager=actor, user=UserFactory(), role=Role.READER),
        lambda: services.member_role_change(manager=actor, member=other_investigator, role=Role.READER),
        lambda: services.member_remove(manager=actor, member=other_investigator),
        lambda: services.member_invite(
            manager=actor, email="someone@example.invalid", name="Some One", role=Role.READER, base_url="http://testserver"
        ),
        lambda: services.lab_settings_update(
            manager=actor, name="Renamed", sample_size_tolerance_pct=5, overdue_grace_months=6
        ),
    ]
    for attempt in attempts:
        with pytest.raises(PermissionDenied):
            attempt()
    assert Entry.objects.count() == 0


def test_a_manager_cannot_touch_a_member_of_another_lab(manager, outsider):
    with pytest.raises(Membership.DoesNotExist):
        services.member_role_change(manager=manager, member=outsider, role=Role.READER)
    with pytest.raises(Membership.DoesNotExist):
        services.member_remove(manager=manager, member=outsider)
    outsider.refresh_from_db()
    assert (outsider.role, outsider.is_active) == (Role.MANAGER, True)
    assert Entry.objects.count() == 0


# --- invitations ----------------------------------------------------------------------------------


def test_inviting_a_new_address_creates_an_account_and_mails_a_set_password_link(
    manager, mailoutbox, django_capture_on_commit_callbacks
):
    with django_capture_on_commit_callbacks(execute=True):
        member = services.member_invite(
            manager=manager, email=" New.Person@Example.invalid ", name="New Person", role=Role.INVESTIGATOR,
            base_url="http://testserver",
        )
    user = member.user
    assert (user.email, user.first_name, user.last_name) == ("new.person@example.invalid", "New", "Person")
    assert user.has_usable_password() is False
    [entry] = role_entries(manager.lab)
    assert_role_entry(entry, member=member, author=manager.user, previous="", new=Role.INVESTIGATOR)
    [mail] = mailoutbox
    assert mail.to == ["new.person@example.invalid"]
    assert "http://testserver/accounts/set-password/" in mail.body


def test_inviting_an_existing_account_reuses_it_and_mails_a_sign_in_link(
    manager, mailoutbox, django_capture_on_commit_callbacks
):
    existing = UserFactory(email="known@example.invalid")
    with django_capture_on_commit_callbacks(execute=True):
        member = services.member_invite(
            manager=manager, email="KNOWN@example.invalid", name="", role=Role.READER, base_url="http://testserver"
        )
    assert member.user == existing
    [mail] = mailoutbox
    assert "set-password" not in mail.body
    assert "Sign in at http://testserver/" in mail.body


def test_invited_usernames_never_collide(manager):
    first = services.member_invite(
        manager=manager, email="sam@one.invalid", name="", role=Role.READER, base_url="http://testserver"
    )
    second = services.member_invite(
        manager=manager, email="sam@two.invalid", name="", role=Role.READER, base_url="http://testserver"
    )
    assert (first.user.username, second.user.username) == ("sam", "sam-2")


# --- lab settings ----------------------------------------------------------------------------------


def test_lab_settings_update_changes_the_lab(manager):
    lab = services.lab_settings_update(
        manager=manager, name="  Renamed Group ", sample_size_tolerance_pct=5, overdue_grace_months=6
    )
    lab.refresh_from_db()
    assert (lab.name, lab.sample_size_tolerance_pct, lab.overdue_grace_months) == ("Renamed Group", 5, 6)
