from django.urls import path

from . import api

app_name = "inventory_api"
urlpatterns = [
    path("sites/", api.SiteListView.as_view(), name="site-list"),
    path("sites/<int:pk>/", api.SiteDetailView.as_view(), name="site-detail"),
    path("buildings/", api.BuildingListView.as_view(), name="building-list"),
    path("buildings/<int:pk>/", api.BuildingDetailView.as_view(), name="building-detail"),
    path("ahus/", api.AHUListView.as_view(), name="ahu-list"),
    path("ahus/<int:pk>/", api.AHUDetailView.as_view(), name="ahu-detail"),
    path("ahus/<int:pk>/tree/", api.AHUTreeView.as_view(), name="ahu-tree"),
    path("components/", api.ComponentListView.as_view(), name="component-list"),
    path("components/<int:pk>/", api.ComponentDetailView.as_view(), name="component-detail"),
    path("component-kinds/", api.ComponentKindsView.as_view(), name="component-kinds"),
    path("import/<str:kind>/", api.ImportView.as_view(), name="import"),
    path("export/<str:kind>/", api.ExportView.as_view(), name="export"),
    path("import-jobs/<uuid:public_id>/", api.ImportJobView.as_view(), name="import-job"),
]
