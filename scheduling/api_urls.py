from django.urls import path

from accounts.answers import answer_fast_path

from . import api
from .api_requests import BOARD, TODAY, board_params, today_params

app_name = "scheduling_api"
urlpatterns = [
    path("work-orders/", api.WorkOrderList.as_view(), name="work-orders"),
    path("work-orders/<uuid:public_id>/", api.WorkOrderDetail.as_view(), name="work-order"),
    path("work-orders/<uuid:public_id>/assign/", api.WorkOrderAssign.as_view(), name="work-order-assign"),
    path("work-orders/<uuid:public_id>/schedule/", api.WorkOrderSchedule.as_view(), name="work-order-schedule"),
    path("work-orders/<uuid:public_id>/transition/", api.WorkOrderTransition.as_view(), name="work-order-transition"),
    path("work-orders/<uuid:public_id>/approve/", api.WorkOrderApprove.as_view(), name="work-order-approve"),
    path("work-orders/<uuid:public_id>/reject/", api.WorkOrderReject.as_view(), name="work-order-reject"),
    path(
        "today/",
        answer_fast_path(api.TodayVisits.as_view(), polled=TODAY, key_of=today_params),
        name="today",
    ),
    path("board/", answer_fast_path(api.Board.as_view(), polled=BOARD, key_of=board_params), name="board"),
    path("tasks/", api.TaskList.as_view(), name="tasks"),
    path("tasks/<slug:code>/", api.TaskOverride.as_view(), name="task"),
    path("meter-readings/", api.MeterReadings.as_view(), name="meter-readings"),
    path("outdoor-temperatures/", api.OutdoorTemperatures.as_view(), name="outdoor-temperatures"),
    path("calendar-feed/", api.CalendarFeedIssue.as_view(), name="calendar-feed"),
]
