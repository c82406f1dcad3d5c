"""Writes for research lines: ordinary edits of a grouping, never ledger entries."""

from __future__ import annotations

from collections.abc import Iterable

from django.db import transaction

from ledger.core.errors import ActionRefused
from ledger.labs.models import Membership
from ledger.labs.services import require
from ledger.lines.models import EffectMeasure, ResearchLine
from ledger.plans.models import Study


@transaction.atomic
def line_create(
    *, member: Membership, name: str, description: str = "", measure: str, studies: Iterable[Study] = ()
) -> ResearchLine:
    require(member, "can_edit_lines")
    fields = _checked(member=member, line=None, name=name, measure=measure, studies=studies)
    line = ResearchLine.objects.create(
        lab=member.lab,
        name=fields["name"],
        description=description.strip(),
        measure=fields["measure"],
        created_by=member.user,
    )
    line.studies.set(fields["studies"])
    return line


@transaction.atomic
def line_update(
    *,
    member: Membership,
    line: ResearchLine,
    name: str,
    description: str = "",
    measure: str,
    studies: Iterable[Study],
) -> ResearchLine:
    """Rename the line, change its measure or its studies; the analyses follow on the next read."""
    require(member, "can_edit_lines")
    line = ResearchLine.objects.select_for_update().get(pk=line.pk, lab=member.lab)
    fields = _checked(member=member, line=line, name=name, measure=measure, studies=studies)
    line.name, line.description, line.measure = fields["name"], description.strip(), fields["measure"]
    line.save(update_fields=["name", "description", "measure", "updated_at"])
    line.studies.set(fields["studies"])
    return line


@transaction.atomic
def line_delete(*, member: Membership, line: ResearchLine) -> None:
    """Remove the grouping; the studies and everything sealed about them stay."""
    require(member, "can_edit_lines")
    ResearchLine.objects.filter(pk=line.pk, lab=member.lab).delete()


def _checked(
    *, member: Membership, line: ResearchLine | None, name: str, measure: str, studies: Iterable[Study]
) -> dict:
    name = name.strip()
    if not name:
        raise ActionRefused("Give the line a name, such as the effect its studies test.", field="name")
    if measure not in EffectMeasure.values:
        choices = ", ".join(f"{value} ({label})" for value, label in EffectMeasure.choices)
        raise ActionRefused(f"Choose the effect measure: one of {choices}.", field="measure")
    same_name = ResearchLine.objects.filter(lab=member.lab, name__iexact=name)
    if line is not None:
        same_name = same_name.exclude(pk=line.pk)
    if same_name.exists():
        raise ActionRefused(f"This lab already has a line called “{name}”; choose another name.", field="name")
    studies = list(studies)
    # Counted, not named: a study of another lab is not this member's to learn about.
    foreign = sum(1 for study in studies if study.lab_id != member.lab_id)
    if foreign:
        raise ActionRefused(
            f"Only studies of {member.lab.name} can join its lines; {foreign} of the chosen studies belong to "
            "another lab. Choose from this lab's studies.",
            field="studies",
        )
    return {"name": name, "measure": measure, "studies": studies}
