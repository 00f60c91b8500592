from django.urls import path

from . import views

app_name = "reports"
urlpatterns = [
    path("reports/<uuid:public_id>/download/", views.report_download, name="download"),
]
