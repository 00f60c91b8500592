from django.contrib.auth import views as auth_views
from django.urls import path

from .views import shell

app_name = "frontend"
urlpatterns = [
    path("login/", auth_views.LoginView.as_view(template_name="frontend/login.html"), name="login"),
    path("logout/", auth_views.LogoutView.as_view(), name="logout"),
    path("sw.js", shell.service_worker, name="sw"),
    path("manifest.webmanifest", shell.manifest, name="manifest"),
    path("offline/", shell.offline, name="offline"),
    path("", shell.home, name="home"),
]
