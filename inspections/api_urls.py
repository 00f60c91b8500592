from django.urls import path

from . import views

app_name = "inspections_api"
urlpatterns = [
    path("work-orders/<uuid:public_id>/checklist/", views.ChecklistView.as_view(), name="checklist"),
    path("sync/", views.SyncView.as_view(), name="sync"),
    path("templates/", views.TemplatesView.as_view(), name="templates"),
    path("photos/", views.PhotoUploadView.as_view(), name="photo-upload"),
    path("photos/<uuid:client_uuid>/", views.PhotoFileView.as_view(), name="photo"),
    path("photos/<uuid:client_uuid>/thumbnail/", views.PhotoFileView.as_view(thumbnail=True), name="photo-thumb"),
    path("flagged/", views.FlaggedListView.as_view(), name="flagged"),
    path("findings/", views.FindingListView.as_view(), name="findings"),
    path("freeze-readiness/", views.FreezeReadinessView.as_view(), name="freeze-readiness"),
    path("<int:pk>/", views.InspectionDetailView.as_view(), name="detail"),
    path("<int:pk>/amendments/", views.AmendmentCreateView.as_view(), name="amend"),
    path("<int:pk>/resolve-flag/", views.FlagResolveView.as_view(), name="resolve-flag"),
    path("<int:pk>/verify/", views.VerifyView.as_view(), name="verify"),
]
