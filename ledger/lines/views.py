"""Research line pages and their charts. Each view fetches through the lab-scoped selectors and
calls one service or one selector."""

from django.contrib import messages
from django.http import HttpResponse
from django.shortcuts import redirect
from django.views.generic import FormView, TemplateView, View

from ledger.core.errors import ActionRefused
from ledger.labs.mixins import LabMemberMixin
from ledger.labs.permissions import member_can
from ledger.lines import services
from ledger.lines.charts import line_funnel_svg, line_pcurve_svg
from ledger.lines.diagnostics import TAU2_METHODS
from ledger.lines.forms import LineForm
from ledger.lines.selectors import LineAnalysis, access_line, lab_lines, line_analysis, tau2_method_from

EDIT_CAPABILITY = "can_edit_lines"
CHART_POLICY = "default-src 'none'; style-src 'unsafe-inline'"


class LineMixin(LabMemberMixin):
    """Adds ``self.line``, fetched only within the member's lab (404 otherwise)."""

    def resolve_objects(self, **kwargs) -> None:
        self.line = access_line(member=self.member, code=kwargs["line_code"])

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        context["line"] = self.line
        context["can_edit_lines"] = member_can(self.member, EDIT_CAPABILITY)
        return context


class LineListView(LabMemberMixin, TemplateView):
    template_name = "lines/line_list.html"

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        context.update(lines=lab_lines(lab=self.lab), can_edit_lines=member_can(self.member, EDIT_CAPABILITY))
        return context


class LineFormMixin:
    """The create and edit pages share the form; a refused save shows the service's message."""

    template_name = "lines/line_form.html"
    form_class = LineForm
    capability = EDIT_CAPABILITY

    def get_form_kwargs(self):
        return {**super().get_form_kwargs(), "lab": self.lab}

    def form_valid(self, form):
        try:
            line = self.save(form.cleaned_data)
        except ActionRefused as refusal:
            form.add_error(refusal.field if refusal.field in form.fields else None, refusal.message)
            return self.form_invalid(form)
        messages.success(self.request, self.success_message)
        return redirect(line.get_absolute_url())


class LineCreateView(LineFormMixin, LabMemberMixin, FormView):
    success_message = "Research line created. Its analyses use the sealed results of its studies."

    def save(self, data):
        return services.line_create(member=self.member, **data)


class LineEditView(LineFormMixin, LineMixin, FormView):
    success_message = "Research line saved."

    def get_initial(self):
        return {
            "name": self.line.name,
            "description": self.line.description,
            "measure": self.line.measure,
            "studies": list(self.line.studies.all()),
        }

    def save(self, data):
        return services.line_update(member=self.member, line=self.line, **data)


class LineDeleteView(LineMixin, View):
    capability = EDIT_CAPABILITY
    http_method_names = ["post"]

    def post(self, request, *args, **kwargs):
        services.line_delete(member=self.member, line=self.line)
        messages.success(
            request, f"Research line “{self.line.name}” deleted; its studies and their entries are unchanged."
        )
        return redirect("lines:list", lab_slug=self.lab.slug)


class LineDetailView(LineMixin, TemplateView):
    template_name = "lines/line_detail.html"

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        tau2_method = tau2_method_from(self.request.GET.get("tau2"))
        analysis = line_analysis(line=self.line, tau2_method=tau2_method)
        context.update(
            analysis=analysis,
            diagnostics=analysis.diagnostics,
            readings=analysis.readings(),
            tau2_method=tau2_method,
            tau2_label=TAU2_METHODS[tau2_method],
            tau2_methods=TAU2_METHODS.items(),
        )
        return context


class LineChartView(LineMixin, View):
    """One chart as its own SVG document, so the page embeds it with <img> under a strict CSP."""

    http_method_names = ["get"]

    def get(self, request, *args, **kwargs):
        response = HttpResponse(self.draw(line_analysis(line=self.line)), content_type="image/svg+xml")
        # Computed from the ledger on every request; a cached copy could hide a newly sealed result.
        response["Cache-Control"] = "private, no-cache"
        # Opened on its own, the chart is a document: it may style itself (matplotlib writes style
        # attributes) but load and run nothing.
        response["Content-Security-Policy"] = CHART_POLICY
        return response

    def draw(self, analysis: LineAnalysis) -> bytes:
        raise NotImplementedError


class LineFunnelView(LineChartView):
    def draw(self, analysis: LineAnalysis) -> bytes:
        return line_funnel_svg(diagnostics=analysis.diagnostics, results=analysis.results)


class LinePCurveView(LineChartView):
    def draw(self, analysis: LineAnalysis) -> bytes:
        return line_pcurve_svg(diagnostics=analysis.diagnostics)
