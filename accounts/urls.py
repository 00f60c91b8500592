"""Pages of the accounts app: password reset by e-mail (sign-in itself is the frontend's login page)."""

from django.urls import path

from . import views

app_name = "accounts"
urlpatterns = [
    path("password/reset/", views.PasswordResetView.as_view(), name="password_reset"),
    path("password/reset/sent/", views.PasswordResetDoneView.as_view(), name="password_reset_done"),
    path(
        "password/reset/<uidb64>/<token>/",
        views.PasswordResetConfirmView.as_view(),
        name="password_reset_confirm",
    ),
    path(
        "password/reset/invitation/<uidb64>/<token>/",
        views.InvitationConfirmView.as_view(),
        name="invitation_confirm",
    ),
    path("password/reset/done/", views.PasswordResetCompleteView.as_view(), name="password_reset_complete"),
]
