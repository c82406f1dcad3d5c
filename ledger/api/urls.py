"""The API under /api/v1/, and the API tokens page under each lab (labs/<slug>/api-tokens/)."""

from django.urls import path, re_path
from drf_spectacular.views import SpectacularJSONAPIView

from ledger.api import pages, views

app_name = "api"
urlpatterns = [
    path("schema/", SpectacularJSONAPIView.as_view(), name="schema"),
    path("docs/", views.ApiDocsView.as_view(), name="docs"),
    path("public/entries/", views.PublicEntryListView.as_view(), name="public-entries"),
    path("studies/", views.StudyListView.as_view(), name="studies"),
    path("studies/<str:code>/", views.StudyDetailView.as_view(), name="study"),
    path("studies/<str:code>/plan/", views.SealedPlanView.as_view(), name="plan"),
    path("studies/<str:code>/plan/<int:number>/", views.SealedPlanVersionView.as_view(), name="plan-version"),
    path("studies/<str:code>/results/", views.ResultRecordView.as_view(), name="results"),
    path("studies/<str:code>/results/preview/", views.ResultPreviewView.as_view(), name="results-preview"),
    path("studies/<str:code>/publications/", views.PublicationLinkView.as_view(), name="publications"),
    path("entries/", views.LabEntryListView.as_view(), name="entries"),
    # Last: any other address under /api/v1/ gets a JSON 404 (and no slash-appending redirect).
    re_path(r"^.*$", views.api_not_found, name="not-found"),
]

token_page_urlpatterns = [
    path("", pages.ApiTokenListView.as_view(), name="list"),
]
