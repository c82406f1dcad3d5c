"""Reads for labs and memberships. Every lab-scoped read starts from a membership."""

from django.http import Http404

from ledger.labs.models import Lab, Membership, Role


def access_membership(*, user, lab_slug: str) -> Membership:
    """The user's active membership of the lab, or 404: missing labs and other labs look the same."""
    if not user.is_authenticated:
        raise Http404("No such lab.")
    member = (
        Membership.objects.select_related("lab", "user").filter(user=user, lab__slug=lab_slug, is_active=True).first()
    )
    if member is None:
        raise Http404("No such lab.")
    return member


def access_member(*, member: Membership, code: str) -> Membership:
    """Another membership of the same lab, by its opaque code, or 404."""
    found = Membership.objects.select_related("user").filter(lab=member.lab, code=code).first()
    if found is None:
        raise Http404("No such member.")
    return found


def memberships_of(*, user) -> list[Membership]:
    if not user.is_authenticated:
        return []
    return list(Membership.objects.select_related("lab").filter(user=user, is_active=True).order_by("lab__name"))


def lab_members(*, lab: Lab):
    return Membership.objects.select_related("user").filter(lab=lab).order_by("-is_active", "user__username")


def investigator_candidates(*, lab: Lab):
    return (
        Membership.objects.select_related("user")
        .filter(lab=lab, is_active=True, role__in=[Role.MANAGER, Role.INVESTIGATOR])
        .order_by("user__username")
    )
