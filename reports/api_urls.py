from django.urls import path

from . import api

app_name = "reports_api"
urlpatterns = [
    path("", api.ReportCreateApi.as_view(), name="create"),
    path("<uuid:public_id>/", api.ReportDetailApi.as_view(), name="detail"),
]
