from django.urls import path

from . import views

app_name = "scheduling"
urlpatterns = [
    path("calendar/<str:token>.ics", views.calendar_feed, name="calendar"),
]
