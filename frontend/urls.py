from django.contrib.auth import views as auth_views
from django.urls import path

from . import api
from .views import (
    automation_pages,
    calculator,
    manager,
    manager_findings,
    people,
    planning,
    records,
    registry_components,
    registry_files,
    registry_sites,
    registry_units,
    rules_pages,
    shell,
    supervisor,
    technician,
    work_pages,
)

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
    path("board/plan/", planning.plan_now, name="plan_now"),
    path("registry/", supervisor.registry, name="registry"),
    path("registry/unit/<int:pk>/", registry_units.unit_detail, name="registry_unit"),
    path("registry/unit/<int:pk>/edit/", registry_units.unit_edit, name="registry_unit_edit"),
    path("registry/unit/<int:pk>/rules/", rules_pages.unit_rules, name="registry_rules"),
    path("registry/unit/<int:pk>/qr.<str:fmt>", registry_files.unit_qr, name="registry_unit_qr"),
    path("registry/files/", registry_files.files, name="registry_files"),
    path("registry/files/confirm/", registry_files.import_confirm, name="registry_import_confirm"),
    path("registry/files/export/<str:kind>.csv", registry_files.export, name="registry_export"),
    path("rules/", rules_pages.organisation_rules, name="rules"),
    path("registry/component/<int:pk>/edit/", registry_components.component_edit, name="registry_component_edit"),
    # registry: add, move and retire (frontend/views/registry_sites.py, registry_units.py, registry_components.py)
    path("registry/site/new/", registry_sites.site_new, name="registry_site_new"),
    path("registry/site/<int:pk>/", registry_sites.site_edit, name="registry_site"),
    path("registry/site/<int:pk>/building/new/", registry_sites.building_new, name="registry_building_new"),
    path("registry/building/<int:pk>/edit/", registry_sites.building_edit, name="registry_building_edit"),
    path("registry/unit/new/", registry_units.unit_new, name="registry_unit_new"),
    path("registry/unit/<int:pk>/move/", registry_units.unit_move, name="registry_unit_move"),
    path("registry/unit/<int:pk>/retire/", registry_units.unit_retire, name="registry_unit_retire"),
    path("registry/unit/<int:pk>/component/new/", registry_components.component_new, name="registry_component_new"),
    path("registry/component/<int:pk>/retire/", registry_components.component_retire, name="registry_component_retire"),
    path("findings/", supervisor.findings, name="findings"),
    path("corrective/", supervisor.corrective, name="corrective"),
    path("flagged/", supervisor.flagged, name="flagged"),
    # work beyond the plan: call-outs, ad-hoc work, work for a finding, a site's frost check
    path("new-work/", work_pages.work_new, name="work_new"),
    path("new-work/frost/<int:site_pk>/", work_pages.work_frost, name="work_frost"),
    # building-automation trends and faults (frontend/views/automation_pages.py)
    path("faults/", automation_pages.faults, name="faults"),
    path("faults/<int:pk>/", automation_pages.fault_detail, name="fault"),
    path("registry/unit/<int:pk>/trends/", automation_pages.unit_trends, name="unit_trends"),
    path("registry/site/<int:pk>/points/", automation_pages.site_points, name="site_points"),
    # property manager
    path("dashboard/", manager.dashboard, name="dashboard"),
    path("dashboard/site/<int:pk>/", manager.site_detail, name="dashboard_site"),
    path("dashboard/unit/<int:pk>/", manager_findings.unit_detail, name="manager_unit"),
    path("site-findings/", manager_findings.findings_list, name="manager_findings"),
    path("site-findings/<int:pk>/", manager_findings.finding_detail, name="manager_finding"),
    # PDF records (rendered and served by reports)
    path("records/", records.records, name="records"),
    path("records/request/", records.record_request, name="record_request"),
]
