from django.contrib.auth import views as auth_views
from django.urls import path

from . import api
from .views import calculator, manager, people, records, shell, supervisor, technician

app_name = "frontend"
urlpatterns = [
    path("login/", auth_views.LoginView.as_view(template_name="frontend/login.html"), name="login"),
    path("logout/", shell.SignOutView.as_view(), name="logout"),
    path("sw.js", shell.service_worker, name="sw"),
    path("manifest.webmanifest", shell.manifest, name="manifest"),
    path("offline/", shell.offline, name="offline"),
    path("", shell.home, name="home"),
    path("start/", shell.start, name="start"),
    path("person/", shell.person, name="person"),
    path("profile/", people.profile, name="profile"),
    # administrator
    path("people/", people.people_list, name="people"),
    path("people/<int:pk>/", people.person_edit, name="person_edit"),
    # technician
    path("today/", technician.today, name="today"),
    path("u/", technician.unit_lookup, name="unit_lookup"),
    path("u/<str:code>/", technician.unit, name="unit"),
    path("w/<uuid:public_id>/", technician.checklist, name="checklist"),
    path("w/<uuid:public_id>/result/", technician.checklist_result, name="checklist_result"),
    path("w/<uuid:public_id>/verify/", supervisor.verify, name="verify"),
    path("w/<uuid:public_id>/amend/", technician.amend, name="amend"),
    path("calc/", calculator.calculator, name="calculator"),
    path("api/calc/<slug:name>/", api.CalcView.as_view(), name="calc_api"),
    # supervisor
    path("board/", supervisor.board, name="board"),
    path("board/assign/<uuid:public_id>/", supervisor.assign, name="assign"),
    path("registry/", supervisor.registry, name="registry"),
    path("registry/unit/<int:pk>/", supervisor.unit_detail, name="registry_unit"),
    path("registry/unit/<int:pk>/edit/", supervisor.unit_edit, name="registry_unit_edit"),
    path("registry/unit/<int:pk>/rules/", supervisor.unit_rules, name="registry_rules"),
    path("registry/component/<int:pk>/edit/", supervisor.component_edit, name="registry_component_edit"),
    path("findings/", supervisor.findings, name="findings"),
    path("corrective/", supervisor.corrective, name="corrective"),
    path("flagged/", supervisor.flagged, name="flagged"),
    # property manager
    path("dashboard/", manager.dashboard, name="dashboard"),
    path("dashboard/site/<int:pk>/", manager.site_detail, name="dashboard_site"),
    # PDF records (rendered and served by reports)
    path("records/", records.records, name="records"),
    path("records/request/", records.record_request, name="record_request"),
]
