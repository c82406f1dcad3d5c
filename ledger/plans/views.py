"""Study and plan pages. Each view validates input and calls one service."""

from django.contrib import messages
from django.http import Http404, JsonResponse
from django.shortcuts import redirect
from django.urls import reverse
from django.views.generic import FormView, TemplateView, View

from ledger.chain.selectors import entry_payload, study_entries
from ledger.core.errors import ActionRefused
from ledger.labs.mixins import LabMemberMixin, StudyMixin
from ledger.plans import services
from ledger.plans.content import plan_problems
from ledger.plans.forms import (
    CollectionStartForm,
    PlanEditor,
    PowerPreviewForm,
    SealForm,
    StudyEnrolForm,
    WithdrawForm,
)
from ledger.plans.models import StudyState
from ledger.plans.sample_size import falls_short, power_figures, power_inputs, power_sentence, sample_size_assessment
from ledger.plans.selectors import (
    access_plan_version,
    plan_diff,
    plan_versions,
    sealed_plan,
    studies_visible_to,
    study_draft,
)
from ledger.results.comparison import plan_vs_report, study_findings
from ledger.results.selectors import study_result
from ledger.stats.errors import StatsInputError


class StudyListView(LabMemberMixin, TemplateView):
    template_name = "plans/study_list.html"

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        state = self.request.GET.get("state", "")
        if state not in StudyState.values:
            state = ""
        context.update(
            studies=studies_visible_to(member=self.member, state=state, mine=self.request.GET.get("mine") == "1"),
            state_filter=state,
            states=StudyState.choices,
        )
        return context


class StudyEnrolView(LabMemberMixin, FormView):
    capability = "can_enrol_studies"
    template_name = "plans/study_enrol.html"
    form_class = StudyEnrolForm

    def get_form_kwargs(self):
        return {**super().get_form_kwargs(), "lab": self.lab}

    def form_valid(self, form):
        try:
            study = services.study_enrol(
                member=self.member,
                title=form.cleaned_data["title"],
                investigators=list(form.cleaned_data["investigators"]),
            )
        except ActionRefused as refusal:
            form.add_error(refusal.field, refusal.message)
            return self.form_invalid(form)
        messages.success(self.request, f"Study {study.code} enrolled. Draft its plan below.")
        return redirect("plans:plan-edit", lab_slug=self.lab.slug, code=study.code)


class StudyDetailView(StudyMixin, TemplateView):
    template_name = "plans/study_detail.html"

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        versions = plan_versions(study=self.study)
        latest = versions[-1] if versions else None
        result = study_result(study=self.study)
        result_doc = entry_payload(result.entry) if result else None
        plan = sealed_plan(latest) if latest else None
        context.update(
            versions=versions,
            plan=plan,
            draft=study_draft(study=self.study),
            timeline=study_entries(study=self.study),
            result=result,
            result_doc=result_doc,
            comparison=plan_vs_report(plan=plan, result=result_doc) if result_doc else None,
            findings=study_findings(study=self.study),
        )
        return context


class PlanEditView(StudyMixin, TemplateView):
    capability = "can_edit_plans"
    template_name = "plans/plan_edit.html"

    def resolve_objects(self, **kwargs):
        super().resolve_objects(**kwargs)
        self.draft = study_draft(study=self.study)
        if self.draft is None:
            raise Http404("This study has no plan being drafted or amended.")

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        context.setdefault("editor", PlanEditor(content=self.draft.content))
        context["draft"] = self.draft
        return context

    def post(self, request, *args, **kwargs):
        editor = PlanEditor(data=request.POST)
        if not editor.is_valid():
            messages.error(request, "Some fields need attention; the draft was not saved.")
            return self.render_to_response(self.get_context_data(editor=editor))
        try:
            services.plan_draft_save(member=self.member, study=self.study, content=editor.content())
        except ActionRefused as refusal:
            messages.error(request, refusal.message)
            return self.render_to_response(self.get_context_data(editor=editor))
        if "review" in request.POST:
            return redirect("plans:plan-review", lab_slug=self.lab.slug, code=self.study.code)
        messages.success(request, "Draft saved.")
        return redirect("plans:plan-edit", lab_slug=self.lab.slug, code=self.study.code)


class PlanReviewView(StudyMixin, TemplateView):
    """Shows exactly what will be sealed; POST seals it."""

    capability = "can_edit_plans"
    write_capability = "can_seal_plans"
    template_name = "plans/plan_review.html"

    def resolve_objects(self, **kwargs):
        super().resolve_objects(**kwargs)
        self.draft = study_draft(study=self.study)

    def get(self, request, *args, **kwargs):
        if self.draft is None:
            messages.info(request, "There is no draft to seal: the plan is already sealed.")
            return redirect(self.study.get_absolute_url())
        return super().get(request, *args, **kwargs)

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        computed, warnings = sample_size_assessment(self.draft.content)
        context.update(
            draft=self.draft,
            # The plan exactly as it will be sealed, with the figures computed now.
            plan={**self.draft.content, "computed": computed, "warnings": []},
            problems=plan_problems(self.draft.content),
            computed=computed,
            warnings=warnings,
        )
        context.setdefault(
            "form",
            SealForm(
                initial={"revision": self.draft.revision},
                is_amendment=self.draft.is_amendment,
                has_warnings=bool(warnings),
            ),
        )
        if self.draft.is_amendment:
            base = access_plan_version(study=self.study, number=self.draft.base_version)
            context["changes"] = plan_diff(sealed_plan(base), self.draft.content)
        return context

    def post(self, request, *args, **kwargs):
        if self.draft is None:
            messages.info(request, "This plan was already sealed; nothing more was recorded.")
            return redirect(self.study.get_absolute_url())
        _computed, warnings = sample_size_assessment(self.draft.content)
        form = SealForm(request.POST, is_amendment=self.draft.is_amendment, has_warnings=bool(warnings))
        if not form.is_valid():
            return self.render_to_response(self.get_context_data(form=form))
        try:
            version = services.plan_seal(
                member=self.member,
                study=self.study,
                revision=form.cleaned_data["revision"],
                acknowledge_warnings=form.cleaned_data.get("acknowledge_warnings", False),
                amendment_reason=form.cleaned_data.get("amendment_reason", ""),
            )
        except ActionRefused as refusal:
            if refusal.field and refusal.field in form.fields:
                form.add_error(refusal.field, refusal.message)
            else:
                form.add_error(None, refusal.message)
            return self.render_to_response(self.get_context_data(form=form))
        messages.success(request, f"Plan version {version.number} sealed as ledger entry #{version.entry.seq}.")
        return redirect(self.study.get_absolute_url())


class PlanVersionView(StudyMixin, TemplateView):
    template_name = "plans/plan_version.html"

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        version = access_plan_version(study=self.study, number=self.kwargs["number"])
        context.update(version=version, plan=sealed_plan(version))
        return context


class PlanDiffView(StudyMixin, TemplateView):
    template_name = "plans/plan_diff.html"

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        old = access_plan_version(study=self.study, number=self.kwargs["old"])
        new = access_plan_version(study=self.study, number=self.kwargs["new"])
        context.update(old=old, new=new, changes=plan_diff(sealed_plan(old), sealed_plan(new)))
        return context


class StudyActionView(StudyMixin, View):
    """A POST-only action: call one service, report the outcome, return to the study page."""

    http_method_names = ["post"]
    form_class = None
    success_message = ""

    def post(self, request, *args, **kwargs):
        form = self.form_class(request.POST) if self.form_class else None
        if form is not None and not form.is_valid():
            for field, errors in form.errors.items():
                label = form.fields[field].label if field in form.fields else ""
                for error in errors:
                    messages.error(request, f"{label}: {error}" if label else error)
            return redirect(self.study.get_absolute_url())
        try:
            self.perform(form.cleaned_data if form else {})
        except ActionRefused as refusal:
            messages.error(request, refusal.message)
            return redirect(self.study.get_absolute_url())
        messages.success(request, self.success_message)
        return redirect(self.success_url())

    def perform(self, data: dict) -> None:
        raise NotImplementedError

    def success_url(self) -> str:
        return self.study.get_absolute_url()


class AmendmentBeginView(StudyActionView):
    capability = "can_edit_plans"
    success_message = "Amendment started from the sealed plan. Edit it, then review and seal it with a reason."

    def perform(self, data):
        services.plan_amendment_begin(member=self.member, study=self.study)

    def success_url(self):
        return reverse("plans:plan-edit", kwargs={"lab_slug": self.lab.slug, "code": self.study.code})


class AmendmentDiscardView(StudyActionView):
    capability = "can_edit_plans"
    success_message = "Amendment discarded; the sealed plan is unchanged."

    def perform(self, data):
        services.plan_amendment_discard(member=self.member, study=self.study)


class CollectionStartView(StudyActionView):
    capability = "can_start_collection"
    form_class = CollectionStartForm
    success_message = "Start of data collection sealed. The plan can no longer be amended."

    def perform(self, data):
        services.collection_start(member=self.member, study=self.study, started_on=data["started_on"])


class StudyWithdrawView(StudyActionView):
    capability = "can_withdraw_studies"
    form_class = WithdrawForm
    success_message = "Study withdrawn; the reason is sealed in the ledger."

    def perform(self, data):
        services.study_withdraw(member=self.member, study=self.study, reason=data["reason"])


class StudyDiscardView(StudyActionView):
    capability = "can_edit_plans"
    success_message = "Draft study discarded."

    def perform(self, data):
        services.study_discard(member=self.member, study=self.study)

    def success_url(self):
        return reverse("plans:study-list", kwargs={"lab_slug": self.lab.slug})


class PowerPreviewView(StudyMixin, View):
    """Live power figures for the plan editor: JSON with one plain-language message."""

    capability = "can_edit_plans"
    http_method_names = ["get"]

    def get(self, request, *args, **kwargs):
        form = PowerPreviewForm(request.GET)
        if not form.is_valid():
            problems = "; ".join(
                f"{form.fields[name].label}: {' '.join(e.rstrip('.') for e in errors)}"
                for name, errors in form.errors.items()
            )
            return JsonResponse({"message": problems, "problem": True})
        data = form.cleaned_data
        inputs = power_inputs(
            {
                "power_design": data["power_design"],
                "effect_size": data["effect_size"],
                "alpha": data["ss_alpha"],
                "sides": data["ss_sides"],
                "planned_n": data["planned_n"],
                "groups": data["groups"],
                "chi_df": data["chi_df"],
            }
        )
        if inputs is None:
            return JsonResponse({"message": "", "problem": False})
        try:
            figures = power_figures(inputs)
        except StatsInputError as error:
            return JsonResponse({"message": f"Power cannot be computed yet: {error}.", "problem": True})
        return JsonResponse(
            {
                "message": power_sentence(inputs, figures, target=data["target_power"]),
                "problem": falls_short(figures, data["target_power"]),
                "figures": figures,
            }
        )
