from django.urls import path

from ledger.plans import views

app_name = "plans"
urlpatterns = [
    path("", views.StudyListView.as_view(), name="study-list"),
    path("new/", views.StudyEnrolView.as_view(), name="study-enrol"),
    path("<str:code>/", views.StudyDetailView.as_view(), name="study"),
    path("<str:code>/plan/", views.PlanEditView.as_view(), name="plan-edit"),
    path("<str:code>/plan/power/", views.PowerPreviewView.as_view(), name="power-preview"),
    path("<str:code>/plan/review/", views.PlanReviewView.as_view(), name="plan-review"),
    path("<str:code>/plan/v<int:number>/", views.PlanVersionView.as_view(), name="plan-version"),
    path("<str:code>/plan/v<int:old>-v<int:new>/", views.PlanDiffView.as_view(), name="plan-diff"),
    path("<str:code>/amend/", views.AmendmentBeginView.as_view(), name="amend-begin"),
    path("<str:code>/amend/discard/", views.AmendmentDiscardView.as_view(), name="amend-discard"),
    path("<str:code>/collection/", views.CollectionStartView.as_view(), name="collection-start"),
    path("<str:code>/withdraw/", views.StudyWithdrawView.as_view(), name="withdraw"),
    path("<str:code>/discard/", views.StudyDiscardView.as_view(), name="discard"),
]
