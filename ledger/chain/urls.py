from django.urls import path

from ledger.chain import views

app_name = "chain"
urlpatterns = [
    path("", views.LabEntriesView.as_view(), name="entries"),
    path("<str:entry_hash>/", views.EntryDetailView.as_view(), name="entry"),
]
