from django.urls import path

from ledger.results import views

app_name = "results"
urlpatterns = [
    path("results/", views.ResultRecordView.as_view(), name="record"),
    path("results/check/", views.ResultCheckView.as_view(), name="check"),
    path("publication/", views.PublicationLinkView.as_view(), name="publication"),
    path("explain/", views.FindingExplainView.as_view(), name="explain"),
]
