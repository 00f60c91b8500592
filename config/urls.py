"""Root URLs. Each app keeps its own ``urls.py`` (pages) and ``api_urls.py`` (REST)."""

from django.contrib import admin
from django.urls import include, path
from drf_spectacular.views import SpectacularAPIView, SpectacularRedocView, SpectacularSwaggerView

urlpatterns = [
    path("admin/", admin.site.urls),
    path("api/schema/", SpectacularAPIView.as_view(), name="api-schema"),
    path("api/docs/", SpectacularSwaggerView.as_view(url_name="api-schema"), name="api-docs"),
    path("api/redoc/", SpectacularRedocView.as_view(url_name="api-schema"), name="api-redoc"),
    path("api/accounts/", include("accounts.api_urls")),
    path("api/inventory/", include("inventory.api_urls")),
    path("api/scheduling/", include("scheduling.api_urls")),
    path("api/inspections/", include("inspections.api_urls")),
    path("api/reports/", include("reports.api_urls")),
    path("", include("inventory.urls")),
    path("", include("scheduling.urls")),
    path("", include("inspections.urls")),
    path("", include("reports.urls")),
    path("", include("accounts.urls")),
    path("", include("frontend.urls")),
]
# Stored photos and PDFs are served only through views that check who may see them, never from MEDIA_URL.

handler400 = "config.errors.bad_request"
handler404 = "config.errors.page_not_found"
handler500 = "config.errors.server_error"
