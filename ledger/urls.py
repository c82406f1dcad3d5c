from django.contrib import admin
from django.contrib.auth import views as auth_views
from django.urls import include, path

from ledger.api.urls import token_page_urlpatterns as api_token_urls
from ledger.labs.views import HomeView, LabCreateView, SignUpView
from ledger.records.urls import public_urlpatterns as public_record_urls

urlpatterns = [
    path("", HomeView.as_view(), name="home"),
    path("labs/new/", LabCreateView.as_view(), name="lab-create"),
    path("labs/<slug:lab_slug>/", include("ledger.labs.urls")),
    path("labs/<slug:lab_slug>/studies/", include("ledger.plans.urls")),
    path("labs/<slug:lab_slug>/studies/<str:code>/", include("ledger.results.urls")),
    path("labs/<slug:lab_slug>/ledger/", include("ledger.chain.urls")),
    path("labs/<slug:lab_slug>/lines/", include("ledger.lines.urls")),
    path("labs/<slug:lab_slug>/studies/<str:code>/records/", include("ledger.records.urls")),
    path("labs/<slug:lab_slug>/report/", include("ledger.reports.urls")),
    path("labs/<slug:lab_slug>/api-tokens/", include((api_token_urls, "api-tokens"))),
    path("api/v1/", include("ledger.api.urls")),
    path("log/", include("ledger.chain.public_urls")),
    path("records/", include((public_record_urls, "public-records"))),
    path("accounts/signup/", SignUpView.as_view(), name="signup"),
    path("accounts/login/", auth_views.LoginView.as_view(), name="login"),
    path("accounts/logout/", auth_views.LogoutView.as_view(), name="logout"),
    path("accounts/password/", auth_views.PasswordChangeView.as_view(), name="password_change"),
    path("accounts/password/done/", auth_views.PasswordChangeDoneView.as_view(), name="password_change_done"),
    path(
        "accounts/set-password/<uidb64>/<token>/",
        auth_views.PasswordResetConfirmView.as_view(post_reset_login=True, success_url="/"),
        name="password_reset_confirm",
    ),
    path("admin/", admin.site.urls),
]
