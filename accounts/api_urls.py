from django.urls import path

from .api import MeView, TokenView

app_name = "accounts_api"
urlpatterns = [
    path("me/", MeView.as_view(), name="me"),
    path("token/", TokenView.as_view(), name="token"),
]
