from django.urls import path  # noqa: F401

app_name = "inventory_api"
urlpatterns: list = []
