"""Result and publication pages."""

from django.contrib import messages
from django.http import JsonResponse
from django.shortcuts import redirect
from django.views.generic import TemplateView, View

from ledger.core.errors import ActionRefused
from ledger.labs.mixins import StudyMixin
from ledger.plans.models import StudyState
from ledger.plans.views import StudyActionView
from ledger.results import services
from ledger.results.checks import row_p_check
from ledger.results.comparison import current_plan
from ledger.results.forms import FindingExplanationForm, PublicationForm, ResultEditor, ResultRowForm

EXPLAIN_PREFIX = "explain:"


class ResultRecordView(StudyMixin, TemplateView):
    capability = "can_record_results"
    template_name = "results/result_record.html"

    def get(self, request, *args, **kwargs):
        if self.study.state != StudyState.COLLECTING:
            messages.info(request, self.not_open_message())
            return redirect(self.study.get_absolute_url())
        return super().get(request, *args, **kwargs)

    def not_open_message(self) -> str:
        if self.study.state == StudyState.SEALED:
            return "Record the start of data collection before recording results."
        if self.study.state == StudyState.REPORTED:
            return "Results for this study are already sealed."
        return f"Results cannot be recorded for a study that is {self.study.get_state_display().lower()}."

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        plan = current_plan(self.study)
        context.setdefault("editor", ResultEditor(plan=plan))
        context["plan"] = plan
        return context

    def post(self, request, *args, **kwargs):
        if self.study.state != StudyState.COLLECTING:
            messages.info(request, self.not_open_message())
            return redirect(self.study.get_absolute_url())
        editor = ResultEditor(plan=current_plan(self.study), data=request.POST)
        if not editor.is_valid():
            messages.error(request, "Some fields need attention; nothing was sealed.")
            return self.render_to_response(self.get_context_data(editor=editor))
        rows, report = editor.cleaned_rows(), editor.report.cleaned_data
        explanations = explanations_from(request.POST)
        if "preview" in request.POST:
            return self.render_preview(editor, rows, report, explanations)
        try:
            result = services.result_record(
                member=self.member,
                study=self.study,
                rows=rows,
                report=report,
                confirm_checks=report["confirm_checks"],
                explanations=explanations,
            )
        except ActionRefused as refusal:
            messages.error(request, refusal.message)
            return self.render_preview(editor, rows, report, explanations)
        messages.success(request, f"Results sealed as ledger entry #{result.entry.seq}.")
        return redirect(self.study.get_absolute_url())

    def render_preview(self, editor, rows, report, explanations):
        """The form again, with the p-value checks and the deviations from the plan, nothing sealed."""
        preview = services.result_preview(study=self.study, rows=rows, report=report)
        return self.render_to_response(
            self.get_context_data(
                editor=editor,
                checks=preview.checks,
                needs_confirmation=bool(preview.unconfirmed),
                findings=[(finding, explanations.get(finding.identity, "")) for finding in preview.findings],
                previewed=True,
            )
        )


def explanations_from(data) -> dict[str, str]:
    """Explanations typed on the result form: fields named "explain:<finding identity>"."""
    return {name.removeprefix(EXPLAIN_PREFIX): text for name, text in data.items() if name.startswith(EXPLAIN_PREFIX)}


class ResultCheckView(StudyMixin, View):
    """Live p-value check of one result row, for the result form: JSON with one sentence."""

    capability = "can_record_results"
    http_method_names = ["get"]

    def get(self, request, *args, **kwargs):
        # The row's inputs arrive with their formset prefix ("rows-0-statistic"); keep the field name.
        fields = {name.rsplit("-", 1)[-1]: value for name, value in request.GET.items()}
        form = ResultRowForm(data=fields, outcome_choices=[(fields.get("outcome", ""), "")])
        form.is_valid()
        cleaned = {
            name: form.cleaned_data.get(name)
            for name in ("statistic_kind", "statistic", "df1", "df2", "n_analysed", "sides", "alpha", "p_reported")
        }
        if form.errors.keys() & cleaned.keys():
            problems = "; ".join(
                f"{form.fields[n].label}: {' '.join(x.rstrip('.') for x in e)}"
                for n, e in form.errors.items()
                if n in cleaned
            )
            return JsonResponse({"message": problems, "problem": True})
        row = {
            "key": "",
            "p_reported": cleaned["p_reported"],
            "n_analysed": cleaned["n_analysed"],
            "sides": cleaned["sides"],
            "alpha": cleaned["alpha"],
            "statistic": {
                "kind": cleaned["statistic_kind"],
                "value": cleaned["statistic"],
                "df1": cleaned["df1"],
                "df2": cleaned["df2"],
                "decimals": form.cleaned_data.get("statistic_decimals"),
            }
            if cleaned["statistic_kind"]
            else None,
        }
        check = row_p_check(row)
        if check is None:
            return JsonResponse({"message": "", "problem": False})
        return JsonResponse(
            {"message": check["explanation"], "problem": check["verdict"] != "consistent", "verdict": check["verdict"]}
        )


class PublicationLinkView(StudyActionView):
    capability = "can_link_publications"
    form_class = PublicationForm
    success_message = "Publication status sealed."

    def perform(self, data):
        services.publication_link_add(member=self.member, study=self.study, status=data["status"], doi=data["doi"])


class FindingExplainView(StudyActionView):
    capability = "can_record_results"
    form_class = FindingExplanationForm
    success_message = "Explanation sealed."

    def perform(self, data):
        services.finding_explain(
            member=self.member, study=self.study, identity=data["identity"], text=data["explanation"]
        )
