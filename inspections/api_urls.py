from django.urls import path

from . import api

app_name = "inspections_api"
urlpatterns = [
    path("work-orders/<uuid:public_id>/checklist/", api.ChecklistView.as_view(), name="checklist"),
    path("sync/", api.SyncView.as_view(), name="sync"),
    path("templates/", api.TemplatesView.as_view(), name="templates"),
    path("photos/", api.PhotoUploadView.as_view(), name="photo-upload"),
    path("photos/<uuid:client_uuid>/", api.PhotoFileView.as_view(), name="photo"),
    path("photos/<uuid:client_uuid>/thumbnail/", api.PhotoFileView.as_view(thumbnail=True), name="photo-thumb"),
    path("flagged/", api.FlaggedListView.as_view(), name="flagged"),
    path("findings/", api.FindingListView.as_view(), name="findings"),
    path("freeze-readiness/", api.FreezeReadinessView.as_view(), name="freeze-readiness"),
    path("<int:pk>/", api.InspectionDetailView.as_view(), name="detail"),
    path("<int:pk>/amendments/", api.AmendmentCreateView.as_view(), name="amend"),
    path("<int:pk>/resolve-flag/", api.FlagResolveView.as_view(), name="resolve-flag"),
    path("<int:pk>/verify/", api.VerifyView.as_view(), name="verify"),
]
