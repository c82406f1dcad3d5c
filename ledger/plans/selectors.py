"""Reads for studies and plans, always scoped to the asking member's lab."""

from __future__ import annotations

import json
from typing import Any

from django.db.models import Count, QuerySet
from django.http import Http404

from ledger.labs.models import Lab, Membership
from ledger.plans.models import PlanDraft, PlanVersion, Study, StudyState


def access_study(*, member: Membership, code: str) -> Study:
    """The study with this code in the member's lab, or 404 (missing and foreign look the same)."""
    study = (
        Study.objects.select_related("lab")
        .prefetch_related("investigators__user")
        .filter(lab=member.lab, code=code.upper())
        .first()
    )
    if study is None:
        raise Http404("No such study.")
    return study


def studies_visible_to(*, member: Membership, state: str = "", mine: bool = False) -> QuerySet[Study]:
    studies = Study.objects.filter(lab=member.lab).prefetch_related("investigators__user")
    if state:
        studies = studies.filter(state=state)
    if mine:
        studies = studies.filter(investigators=member)
    return studies.select_related("result_report").order_by("-created_at")


def lab_state_counts(*, lab: Lab) -> dict[str, int]:
    counts = {state: 0 for state in StudyState.values}
    for row in Study.objects.filter(lab=lab).values("state").annotate(n=Count("pk")):
        counts[row["state"]] = row["n"]
    return counts


def study_draft(*, study: Study) -> PlanDraft | None:
    return PlanDraft.objects.filter(study=study).first()


def plan_versions(*, study: Study) -> list[PlanVersion]:
    return list(PlanVersion.objects.filter(study=study).select_related("entry", "entry__author").order_by("number"))


def access_plan_version(*, study: Study, number: int) -> PlanVersion:
    version = PlanVersion.objects.filter(study=study, number=number).select_related("entry", "entry__author").first()
    if version is None:
        raise Http404("No such plan version.")
    return version


def sealed_plan(version: PlanVersion) -> dict[str, Any]:
    return json.loads(version.entry.payload)


def plan_diff(old: dict[str, Any], new: dict[str, Any]) -> list[dict[str, Any]]:
    """Field-by-field differences between two plan documents, in reading order.

    List items (hypotheses, outcomes) are matched by their stable key, so reordering is not a
    change and an edited hypothesis shows as changed rather than as removed plus added.
    """
    changes: list[dict[str, Any]] = []
    skip = {"schema", "version", "computed", "warnings", "amendment", "study"}
    for key in _ordered_keys(old, new):
        if key in skip:
            continue
        _diff_value(key, old.get(key), new.get(key), changes)
    return changes


def _ordered_keys(old: dict, new: dict) -> list[str]:
    keys = list(old)
    keys += [key for key in new if key not in old]
    return keys


def _diff_value(path: str, old: Any, new: Any, changes: list[dict[str, Any]]) -> None:
    if old == new:
        return
    if isinstance(old, dict) and isinstance(new, dict):
        for key in _ordered_keys(old, new):
            _diff_value(f"{path}.{key}", old.get(key), new.get(key), changes)
        return
    if _is_keyed_list(old) and _is_keyed_list(new):
        old_items = {item["key"]: item for item in old or []}
        new_items = {item["key"]: item for item in new or []}
        for key in list(old_items) + [k for k in new_items if k not in old_items]:
            if key not in new_items:
                changes.append({"path": f"{path}[{key}]", "change": "removed", "old": old_items[key], "new": None})
            elif key not in old_items:
                changes.append({"path": f"{path}[{key}]", "change": "added", "old": None, "new": new_items[key]})
            else:
                _diff_value(f"{path}[{key}]", old_items[key], new_items[key], changes)
        return
    changes.append({"path": path, "change": "changed", "old": old, "new": new})


def _is_keyed_list(value: Any) -> bool:
    return isinstance(value, list) and all(isinstance(item, dict) and "key" in item for item in value)
