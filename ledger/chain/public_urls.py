"""The public log, mounted at /log/ with no sign-in (see ledger.chain.public_views)."""

from django.urls import path

from ledger.chain import public_views as views

app_name = "log"
urlpatterns = [
    path("", views.LogIndexView.as_view(), name="index"),
    path("checkpoint", views.CheckpointNoteView.as_view(), name="checkpoint-note"),
    path("checkpoint.json", views.LatestCheckpointView.as_view(), name="checkpoint-latest"),
    path("checkpoints/<int:size>.json", views.CheckpointBySizeView.as_view(), name="checkpoint-size"),
    path("inclusion.json", views.InclusionProofView.as_view(), name="inclusion"),
    path("consistency.json", views.ConsistencyProofView.as_view(), name="consistency"),
    path("key.json", views.LogKeyView.as_view(), name="key"),
]
