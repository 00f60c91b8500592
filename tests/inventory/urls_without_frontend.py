"""A URL set without the frontend's unit page, to test the label page's own fallback."""

from django.contrib.auth import views as auth_views
from django.urls import include, path

frontend = ([path("login/", auth_views.LoginView.as_view(), name="login")], "frontend")
urlpatterns = [path("", include("inventory.urls")), path("", include(frontend))]
