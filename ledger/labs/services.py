"""Writes for labs and memberships."""

from django.contrib.auth import get_user_model
from django.contrib.auth.tokens import default_token_generator
from django.core.exceptions import PermissionDenied
from django.core.mail import send_mail
from django.db import transaction
from django.urls import reverse
from django.utils.encoding import force_bytes
from django.utils.http import urlsafe_base64_encode
from django.utils.text import slugify

from ledger.chain.models import EntryKind
from ledger.chain.services import entry_append
from ledger.core.errors import ActionRefused
from ledger.labs.models import Lab, Membership, Role
from ledger.labs.permissions import member_can

User = get_user_model()


def require(member: Membership, capability: str, *, study=None) -> None:
    if not member_can(member, capability, study=study):
        raise PermissionDenied(f"Your role in this lab ({member.get_role_display()}) does not allow this.")


@transaction.atomic
def lab_create(*, user, name: str, slug: str = "") -> Lab:
    slug = slugify(slug or name)[:50]
    if not slug:
        raise ActionRefused("Give the lab a name with at least one letter or digit.", field="name")
    if Lab.objects.filter(slug=slug).exists():
        raise ActionRefused(f"The address “{slug}” is taken; choose another short name.", field="slug")
    lab = Lab.objects.create(name=name.strip(), slug=slug)
    founder = Membership.objects.create(lab=lab, user=user, role=Role.MANAGER)
    _record_role_change(actor=founder, member=founder, previous_role="", new_role=Role.MANAGER)
    return lab


@transaction.atomic
def member_add(*, manager: Membership, user, role: str) -> Membership:
    require(manager, "can_manage_members")
    existing = Membership.objects.filter(lab=manager.lab, user=user).first()
    if existing and existing.is_active:
        raise ActionRefused(f"{existing.display_name} is already a member of this lab.", field="email")
    if existing:
        member = existing
        member.is_active = True
        member.role = role
        member.save(update_fields=["is_active", "role"])
    else:
        member = Membership.objects.create(lab=manager.lab, user=user, role=role)
    _record_role_change(actor=manager, member=member, previous_role="", new_role=role)
    return member


@transaction.atomic
def member_role_change(*, manager: Membership, member: Membership, role: str) -> Membership:
    require(manager, "can_manage_members")
    member = Membership.objects.select_for_update().get(pk=member.pk, lab=manager.lab)
    if member.role == role:
        return member
    if member.role == Role.MANAGER and _is_last_manager(member):
        raise ActionRefused("A lab needs at least one manager: make someone else manager first.", field="role")
    previous_role = member.role
    member.role = role
    member.save(update_fields=["role"])
    _record_role_change(actor=manager, member=member, previous_role=previous_role, new_role=role)
    return member


@transaction.atomic
def member_remove(*, manager: Membership, member: Membership) -> Membership:
    require(manager, "can_manage_members")
    member = Membership.objects.select_for_update().get(pk=member.pk, lab=manager.lab)
    if member.role == Role.MANAGER and _is_last_manager(member):
        raise ActionRefused("A lab needs at least one manager: make someone else manager first.")
    member.is_active = False
    member.save(update_fields=["is_active"])
    _record_role_change(actor=manager, member=member, previous_role=member.role, new_role="")
    return member


def _is_last_manager(member: Membership) -> bool:
    return (
        not Membership.objects.filter(lab=member.lab, role=Role.MANAGER, is_active=True).exclude(pk=member.pk).exists()
    )


def _record_role_change(*, actor: Membership, member: Membership, previous_role: str, new_role: str) -> None:
    # Who may seal is itself sealed: an auditor can replay every grant and revocation.
    entry_append(
        kind=EntryKind.MEMBER_ROLE_CHANGED,
        lab=actor.lab,
        author=actor.user,
        payload={
            "schema": "forebook.role/1",
            "member": member.code,
            "user": member.user.pk,
            "name": member.display_name,
            "from": previous_role,
            "to": new_role,
        },
    )


@transaction.atomic
def member_invite(*, manager: Membership, email: str, name: str, role: str, base_url: str) -> Membership:
    """Add a member by e-mail address, creating an account (and sending a set-password link) if needed."""
    require(manager, "can_manage_members")
    email = email.strip().lower()
    user = User.objects.filter(email__iexact=email).first()
    created = user is None
    if created:
        first, _, last = name.strip().partition(" ")
        user = User.objects.create_user(username=_free_username(email), email=email, first_name=first, last_name=last)
        user.set_unusable_password()
        user.save(update_fields=["password"])
    member = member_add(manager=manager, user=user, role=role)
    link = (
        base_url
        + reverse(
            "password_reset_confirm",
            kwargs={
                "uidb64": urlsafe_base64_encode(force_bytes(user.pk)),
                "token": default_token_generator.make_token(user),
            },
        )
        if created
        else base_url + reverse("home")
    )
    lab_name = manager.lab.name
    message = (
        f"{manager.display_name} added you to {lab_name} on Forebook as {member.get_role_display().lower()}.\n\n"
        + (f"Choose your password here (the link works once): {link}\n" if created else f"Sign in at {link}\n")
    )
    transaction.on_commit(lambda: send_mail(f"You were added to {lab_name}", message, None, [email]))
    return member


def _free_username(email: str) -> str:
    base = slugify(email.split("@")[0])[:140] or "member"
    candidate, number = base, 1
    while User.objects.filter(username=candidate).exists():
        number += 1
        candidate = f"{base}-{number}"
    return candidate


@transaction.atomic
def lab_settings_update(
    *, manager: Membership, name: str, sample_size_tolerance_pct: int, overdue_grace_months: int
) -> Lab:
    require(manager, "can_change_lab_settings")
    lab = Lab.objects.select_for_update().get(pk=manager.lab_id)
    lab.name = name.strip()
    lab.sample_size_tolerance_pct = sample_size_tolerance_pct
    lab.overdue_grace_months = overdue_grace_months
    lab.save(update_fields=["name", "sample_size_tolerance_pct", "overdue_grace_months"])
    return lab
