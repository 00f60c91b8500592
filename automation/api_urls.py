from django.urls import path

from . import api

app_name = "automation_api"
urlpatterns = [
    path("points/", api.PointListView.as_view(), name="point-list"),
    path("points/<int:pk>/", api.PointDetailView.as_view(), name="point-detail"),
    path("sites/<int:pk>/trends/", api.TrendUploadView.as_view(), name="site-trends"),
    path("sites/<int:pk>/brick/", api.BrickExportView.as_view(), name="site-brick"),
    path("brick/", api.BrickImportView.as_view(), name="brick-import"),
    path("trend-jobs/<uuid:public_id>/", api.TrendImportJobView.as_view(), name="trend-job"),
]
