"""The one place where a view learns who is asking and what they may do.

Order of answers: anonymous -> redirect to sign-in; not a member of the lab in the URL (or no
such lab) -> 404; a member whose role lacks the capability -> 403.
"""

from django.contrib.auth.mixins import LoginRequiredMixin
from django.core.exceptions import PermissionDenied

from ledger.labs.permissions import member_can
from ledger.labs.selectors import access_membership


class LabMemberMixin(LoginRequiredMixin):
    """Resolves ``self.member`` and ``self.lab`` from the URL's lab slug.

    ``capability`` is checked for every method; ``write_capability``, when set, is checked
    additionally for POST.
    """

    capability = "can_view_lab"
    write_capability: str | None = None

    def dispatch(self, request, *args, **kwargs):
        if not request.user.is_authenticated:
            return self.handle_no_permission()
        self.member = access_membership(user=request.user, lab_slug=kwargs["lab_slug"])
        self.lab = self.member.lab
        self.resolve_objects(**kwargs)
        self.check_capability(self.capability)
        if request.method == "POST" and self.write_capability:
            self.check_capability(self.write_capability)
        return super().dispatch(request, *args, **kwargs)

    def resolve_objects(self, **kwargs) -> None:
        """Hook for subclasses: fetch lab-scoped objects named in the URL (404 when not in the lab)."""

    def capability_target(self):
        return None

    def check_capability(self, capability: str) -> None:
        target = self.capability_target()
        from ledger.labs.permissions import LAB_CAPABILITIES

        study = None if capability in LAB_CAPABILITIES else target
        if not member_can(self.member, capability, study=study):
            raise PermissionDenied(
                f"Your role in {self.lab.name} ({self.member.get_role_display()}) does not allow this. "
                "Ask a lab manager if you need it."
            )

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        context["member"] = self.member
        context["lab"] = self.lab
        return context


class StudyMixin(LabMemberMixin):
    """Adds ``self.study``, fetched only within the member's lab."""

    def resolve_objects(self, **kwargs) -> None:
        from ledger.plans.selectors import access_study

        self.study = access_study(member=self.member, code=kwargs["code"])

    def capability_target(self):
        return self.study

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        context["study"] = self.study
        context["can"] = capabilities_for(self.member, self.study)
        return context


def capabilities_for(member, study=None) -> dict[str, bool]:
    """Every capability as a flag, so templates show only the buttons that would work."""
    from ledger.labs.permissions import LAB_CAPABILITIES, STUDY_CAPABILITIES

    flags = {name: member_can(member, name) for name in LAB_CAPABILITIES}
    if study is not None:
        flags.update({name: member_can(member, name, study=study) for name in STUDY_CAPABILITIES})
    return flags
