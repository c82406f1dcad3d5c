"""The API tokens page of a lab: a member lists, creates and revokes their own tokens."""

from django.contrib import messages
from django.shortcuts import redirect
from django.utils.cache import add_never_cache_headers
from django.views.generic import TemplateView

from ledger.api.forms import ApiTokenCreateForm
from ledger.api.selectors import access_api_token, member_api_tokens
from ledger.api.services import api_token_create, api_token_revoke
from ledger.core.errors import ActionRefused
from ledger.labs.mixins import LabMemberMixin

# The revoke buttons post the token's prefix under this name; the create form does not have it.
REVOKE_FIELD = "revoke"


class ApiTokenListView(LabMemberMixin, TemplateView):
    template_name = "api/token_list.html"

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        context.setdefault("form", ApiTokenCreateForm())
        context["tokens"] = member_api_tokens(member=self.member)
        return context

    def post(self, request, *args, **kwargs):
        if REVOKE_FIELD in request.POST:
            return self.revoke(request.POST[REVOKE_FIELD])
        form = ApiTokenCreateForm(request.POST)
        if form.is_valid():
            try:
                token, text = api_token_create(
                    member=self.member, name=form.cleaned_data["name"], expires_on=form.cleaned_data["expires_on"]
                )
            except ActionRefused as refusal:
                form.add_error(refusal.field, refusal.message)
            else:
                # The one response that carries the token's text: shown here, never stored, never cached.
                response = self.render_to_response(
                    self.get_context_data(form=ApiTokenCreateForm(), new_token=token, new_token_text=text)
                )
                add_never_cache_headers(response)
                return response
        return self.render_to_response(self.get_context_data(form=form))

    def revoke(self, prefix: str):
        token = api_token_revoke(member=self.member, token=access_api_token(member=self.member, prefix=prefix))
        messages.success(
            self.request, f"Token “{token.name}” (fb_{token.prefix}_…) revoked: scripts using it now get 401."
        )
        return redirect("api-tokens:list", lab_slug=self.lab.slug)
