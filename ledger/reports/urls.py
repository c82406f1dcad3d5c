"""Report URLs, under labs/<lab_slug>/report/ (sign-in required; every lab member may read the report)."""

from django.urls import path

from ledger.reports import views

app_name = "reports"
urlpatterns = [
    path("", views.LabReportView.as_view(), name="lab"),
    path("charts/<str:chart>.svg", views.LabReportChartView.as_view(), name="chart"),
    path("files/", views.ReportExportCreateView.as_view(), name="export"),
    path("files/<str:export_code>/status/", views.ReportExportStatusView.as_view(), name="status"),
    path("files/<str:export_code>/download/", views.ReportExportDownloadView.as_view(), name="download"),
]
