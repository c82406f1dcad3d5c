"""Named capabilities of a lab membership.

Lab-wide capabilities depend on the role alone. Study capabilities also depend on whether the
member is one of the study's investigators: a lab manager may act on every study of the lab, an
investigator only on the studies they are on, a reader on none. Views ask through
``member_can``; nothing else in the code compares roles.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from ledger.labs.models import Membership, Role

if TYPE_CHECKING:
    from ledger.plans.models import Study

LAB_CAPABILITIES: dict[str, frozenset[str]] = {
    "can_view_lab": frozenset({Role.MANAGER, Role.INVESTIGATOR, Role.READER}),
    "can_manage_members": frozenset({Role.MANAGER}),
    "can_enrol_studies": frozenset({Role.MANAGER, Role.INVESTIGATOR}),
    "can_change_lab_settings": frozenset({Role.MANAGER}),
    "can_edit_lines": frozenset({Role.MANAGER, Role.INVESTIGATOR}),
}

# Study capabilities: granted to managers on every study, to investigators on their own studies.
STUDY_CAPABILITIES: frozenset[str] = frozenset(
    {
        "can_edit_plans",
        "can_seal_plans",
        "can_start_collection",
        "can_record_results",
        "can_link_publications",
        "can_withdraw_studies",
        "can_assign_investigators",
    }
)

# Only managers change who works on a study, even on studies they are not on.
MANAGER_ONLY_STUDY_CAPABILITIES: frozenset[str] = frozenset({"can_assign_investigators"})


def member_can(member: Membership, capability: str, *, study: Study | None = None) -> bool:
    if not member.is_active:
        return False
    if capability in LAB_CAPABILITIES:
        return member.role in LAB_CAPABILITIES[capability]
    if capability not in STUDY_CAPABILITIES:
        raise ValueError(f"Unknown capability {capability!r}; add it to ledger/labs/permissions.py.")
    if study is None:
        raise ValueError(f"{capability} is a study capability: pass the study.")
    if study.lab_id != member.lab_id:
        return False
    if member.role == Role.MANAGER:
        return True
    if capability in MANAGER_ONLY_STUDY_CAPABILITIES or member.role != Role.INVESTIGATOR:
        return False
    return study.is_investigator(member)
