"""The capability matrix of ``member_can``: every capability against every kind of member.

The table below is the specification. A capability added to ``ledger/labs/permissions.py`` without a
row here fails ``test_the_matrix_names_every_capability``, so nobody grants a power silently.
"""
import pytest

from ledger.labs.models import Role
from ledger.labs.permissions import LAB_CAPABILITIES, STUDY_CAPABILITIES, member_can
from ledger.plans.services import study_investigators_set
from tests.factories import MembershipFactory, enrolled_study

pytestmark = pytest.mark.django_db

# Who asks, as columns: a lab manager who is not on the study, an investigator on the study, an
# investigator of the same lab who is not on it, and a reader.
MEMBER_KINDS = ("manager", "investigator_on_study", "investigator_off_study", "reader")
MATRIX: dict[str, tuple[bool, bool, bool, bool]] = {
    #                            manager  inv. on  inv. off  reader
    "can_view_lab":              (True,   True,    True,     True),
    "can_manage_members":        (True,   False,   False,    False),
    "can_enrol_studies":         (True,   True,    True,     False),
    "can_change_lab_settings":   (True,   False,   False,    False),
    "can_edit_lines":            (True,   True,    True,     False),
    "can_edit_plans":            (True,   True,    False,    False),
    "can_seal_plans":            (True,   True,    False,    False),
    "can_start_collection":      (True,   True,    False,    False),
    "can_record_results":        (True,   True,    False,    False),
    "can_link_publications":     (True,   True,    False,    False),
    "can_withdraw_studies":      (True,   True,    False,    False),
    "can_assign_investigators":  (True,   False,   False,    False),
}
CASES = [
    pytest.param(capability, kind, allowed, id=f"{capability}-{kind}")
    for capability, row in MATRIX.items()
    for kind, allowed in zip(MEMBER_KINDS, row, strict=True)
]


@pytest.fixture
def study(investigator):
    return enrolled_study(member=investigator)


@pytest.fixture
def members(manager, investigator, other_investigator, reader):
    return {
        "manager": manager,
        "investigator_on_study": investigator,
        "investigator_off_study": other_investigator,
        "reader": reader,
    }


def ask(member, capability: str, study) -> bool:
    return member_can(member, capability, study=study if capability in STUDY_CAPABILITIES else None)


def test_the_matrix_names_every_capability():
    assert set(MATRIX) == set(LAB_CAPABILITIES) | set(STUDY_CAPABILITIES)


@pytest.mark.parametrize(("capability", "kind", "allowed"), CASES)
def test_capability_matrix(members, study, capability, kind, allowed):
    assert ask(members[kind], capability, study) is allowed


@pytest.mark.parametrize("capability", sorted(MATRIX))
@pytest.mark.parametrize("role", [Role.MANAGER, Role.INVESTIGATOR])
def test_a_removed_member_can_do_nothing(lab, study, capability, role):
    former = MembershipFactory(lab=lab, role=role, is_active=False)
    study.investigators.add(former)
    assert ask(former, capability, study) is False


@pytest.mark.parametrize("capability", sorted(STUDY_CAPABILITIES))
def test_a_reader_listed_on_a_study_still_gets_no_study_capability(manager, reader, study, capability):
    study_investigators_set(member=manager, study=study, investigators=[reader])
    study.refresh_from_db()
    assert study.is_investigator(reader)
    assert member_can(reader, capability, study=study) is False


@pytest.mark.parametrize("capability", sorted(STUDY_CAPABILITIES))
def test_a_manager_has_no_study_capability_on_another_labs_study(outsider, study, capability):
    # `outsider` manages a different lab; study capabilities stop at the lab's border even when a
    # service is called directly with a foreign study object.
    assert member_can(outsider, capability, study=study) is False


def test_an_unknown_capability_is_an_error_that_says_where_to_add_it(manager):
    with pytest.raises(ValueError, match="ledger/labs/permissions.py"):
        member_can(manager, "can_fly")


def test_a_study_capability_without_a_study_is_an_error(manager):
    with pytest.raises(ValueError, match="pass the study"):
        member_can(manager, "can_seal_plans")
