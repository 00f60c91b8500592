"""The project's URLs plus two views that fail, to see the 500 answers (``ROOT_URLCONF`` in tests only)."""

from django.urls import path
from rest_framework.permissions import AllowAny
from rest_framework.views import APIView

from config.urls import handler400, handler404, handler500, urlpatterns  # noqa: F401


def _page_boom(request):
    raise RuntimeError("a bug in a page")


class _ApiBoom(APIView):
    permission_classes = [AllowAny]

    def get(self, request):
        raise RuntimeError("a bug in an API view")


urlpatterns = [path("boom/", _page_boom), path("api/boom/", _ApiBoom.as_view()), *urlpatterns]
