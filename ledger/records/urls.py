"""Record URLs: ``urlpatterns`` live under a study (sign-in required); ``public_urlpatterns`` need no sign-in."""

from django.urls import path

from ledger.records import views

app_name = "records"
urlpatterns = [
    path("", views.RecordExportCreateView.as_view(), name="export"),
    path("<str:export_code>/status/", views.RecordExportStatusView.as_view(), name="status"),
    path("<str:export_code>/download/", views.RecordExportDownloadView.as_view(), name="download"),
]

public_urlpatterns = [
    path("verify/", views.RecordVerifyView.as_view(), name="verify"),
    path("certificate.pem", views.RecordCertificateView.as_view(), name="certificate"),
]
