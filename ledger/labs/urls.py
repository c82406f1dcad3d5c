from django.urls import path

from ledger.labs import views

app_name = "labs"
urlpatterns = [
    path("", views.LabDashboardView.as_view(), name="dashboard"),
    path("members/", views.MemberListView.as_view(), name="members"),
    path("members/<str:member_code>/role/", views.MemberRoleView.as_view(), name="member-role"),
    path("members/<str:member_code>/remove/", views.MemberRemoveView.as_view(), name="member-remove"),
    path("settings/", views.LabSettingsView.as_view(), name="settings"),
]
