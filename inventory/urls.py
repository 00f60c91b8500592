from django.urls import path

from . import views

app_name = "inventory"
urlpatterns = [
    path("l/<str:code>/", views.label, name="label"),
    path("l/<str:code>/qr.svg", views.label_qr, name="label-qr"),
]
