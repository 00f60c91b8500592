from django.urls import path  # noqa: F401

app_name = "inspections_api"
urlpatterns: list = []
