"""Lab pages: the home redirect, creating a lab, the dashboard and the member list."""

from django.contrib import messages
from django.contrib.auth import login
from django.contrib.auth.mixins import LoginRequiredMixin
from django.shortcuts import redirect
from django.views.generic import FormView, TemplateView, View

from ledger.core.errors import ActionRefused
from ledger.labs import services
from ledger.labs.forms import LabCreateForm, LabSettingsForm, MemberInviteForm, MemberRoleForm, SignUpForm
from ledger.labs.mixins import LabMemberMixin
from ledger.labs.selectors import access_member, lab_members, memberships_of
from ledger.plans.models import StudyState
from ledger.plans.selectors import lab_state_counts, studies_visible_to
from ledger.results.selectors import recent_results


class HomeView(LoginRequiredMixin, TemplateView):
    """Straight to the lab when there is one; otherwise the list, with a way to create a lab."""

    template_name = "labs/home.html"

    def get(self, request, *args, **kwargs):
        memberships = memberships_of(user=request.user)
        if len(memberships) == 1:
            return redirect("labs:dashboard", lab_slug=memberships[0].lab.slug)
        return self.render_to_response(self.get_context_data(memberships=memberships))


class LabCreateView(LoginRequiredMixin, FormView):
    template_name = "labs/lab_create.html"
    form_class = LabCreateForm

    def form_valid(self, form):
        try:
            lab = services.lab_create(user=self.request.user, **form.cleaned_data)
        except ActionRefused as refusal:
            form.add_error(refusal.field, refusal.message)
            return self.form_invalid(form)
        messages.success(self.request, f"{lab.name} created. You are its lab manager.")
        return redirect("labs:dashboard", lab_slug=lab.slug)


class SignUpView(FormView):
    template_name = "registration/signup.html"
    form_class = SignUpForm

    def form_valid(self, form):
        user = form.save()
        login(self.request, user, backend="django.contrib.auth.backends.ModelBackend")
        return redirect("home")


class LabDashboardView(LabMemberMixin, TemplateView):
    template_name = "labs/dashboard.html"

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        counts = lab_state_counts(lab=self.lab)
        context.update(
            state_counts=[(state, label, counts[state]) for state, label in StudyState.choices],
            my_studies=studies_visible_to(member=self.member, mine=True)[:12],
            recent_results=recent_results(lab=self.lab, limit=10),
        )
        return context


class MemberListView(LabMemberMixin, FormView):
    capability = "can_view_lab"
    write_capability = "can_manage_members"
    template_name = "labs/members.html"
    form_class = MemberInviteForm

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        context["members"] = lab_members(lab=self.lab)
        context["role_form"] = MemberRoleForm()
        context["can_manage"] = self.member.role == "manager"
        return context

    def form_valid(self, form):
        try:
            member = services.member_invite(
                manager=self.member, base_url=self.request.build_absolute_uri("/")[:-1], **form.cleaned_data
            )
        except ActionRefused as refusal:
            form.add_error(refusal.field, refusal.message)
            return self.form_invalid(form)
        messages.success(self.request, f"{member.display_name} added as {member.get_role_display().lower()}.")
        return redirect("labs:members", lab_slug=self.lab.slug)


class MemberRoleView(LabMemberMixin, FormView):
    capability = "can_manage_members"
    http_method_names = ["post"]
    form_class = MemberRoleForm

    def resolve_objects(self, **kwargs):
        self.target = access_member(member=self.member, code=kwargs["member_code"])

    def form_valid(self, form):
        try:
            services.member_role_change(manager=self.member, member=self.target, role=form.cleaned_data["role"])
        except ActionRefused as refusal:
            messages.error(self.request, refusal.message)
        else:
            messages.success(self.request, f"{self.target.display_name}: role updated.")
        return redirect("labs:members", lab_slug=self.lab.slug)

    def form_invalid(self, form):
        messages.error(self.request, "Choose one of the listed roles.")
        return redirect("labs:members", lab_slug=self.lab.slug)


class MemberRemoveView(LabMemberMixin, View):
    capability = "can_manage_members"
    http_method_names = ["post"]

    def resolve_objects(self, **kwargs):
        self.target = access_member(member=self.member, code=kwargs["member_code"])

    def post(self, request, *args, **kwargs):
        try:
            services.member_remove(manager=self.member, member=self.target)
        except ActionRefused as refusal:
            messages.error(request, refusal.message)
        else:
            messages.success(request, f"{self.target.display_name} no longer has access to {self.lab.name}.")
        return redirect("labs:members", lab_slug=self.lab.slug)


class LabSettingsView(LabMemberMixin, FormView):
    capability = "can_change_lab_settings"
    template_name = "labs/settings.html"
    form_class = LabSettingsForm

    def get_initial(self):
        return {field: getattr(self.lab, field) for field in LabSettingsForm.base_fields}

    def form_valid(self, form):
        services.lab_settings_update(manager=self.member, **form.cleaned_data)
        messages.success(self.request, "Lab settings saved.")
        return redirect("labs:settings", lab_slug=self.lab.slug)
