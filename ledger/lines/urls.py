from django.urls import path

from ledger.lines import views

app_name = "lines"
urlpatterns = [
    path("", views.LineListView.as_view(), name="list"),
    path("new/", views.LineCreateView.as_view(), name="create"),
    path("<str:line_code>/", views.LineDetailView.as_view(), name="line"),
    path("<str:line_code>/edit/", views.LineEditView.as_view(), name="edit"),
    path("<str:line_code>/delete/", views.LineDeleteView.as_view(), name="delete"),
    path("<str:line_code>/funnel.svg", views.LineFunnelView.as_view(), name="funnel"),
    path("<str:line_code>/p-curve.svg", views.LinePCurveView.as_view(), name="pcurve"),
]
