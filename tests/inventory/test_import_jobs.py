"""Background registry imports: started over the API, polled by the people who manage the organisation only."""

import io
import uuid

import pytest

from accounts.models import Role
from inventory import import_jobs
from inventory.models import ImportJob, Site

SITES = "code,name,latitude,longitude,time_zone\nnorth,North Yard,53.1,9.9,Europe/Berlin\n"


def _file(text: str) -> io.BytesIO:
    data = io.BytesIO(text.encode())
    data.name = "sites.csv"
    return data


def _start(api_client, user, text=SITES, **fields):
    api_client.force_authenticate(user)
    return api_client.post("/api/inventory/import/sites/", {"file": _file(text), **fields}, format="multipart")


def test_a_small_file_imports_at_once_and_background_true_makes_it_a_job(
    world, api_client, django_capture_on_commit_callbacks
):
    """Under 10,000 rows the answer is the import itself (200); asked for, a job (202) that ends done."""
    boss = world.people[Role.SUPERVISOR]
    assert _start(api_client, boss).status_code == 200
    with django_capture_on_commit_callbacks(execute=True):
        started = _start(api_client, boss, SITES.replace("north", "south"), background="true")
    assert started.status_code == 202
    assert started.json()["status"] == "queued"
    job = api_client.get(started.json()["url"]).json()
    assert (job["status"], job["rows_done"], job["rows_total"], job["created"]) == ("done", 1, 1, 1)
    assert Site.objects.filter(code="south", organisation=world.org_a).exists()


def test_a_dry_run_job_checks_and_saves_nothing(world, api_client, django_capture_on_commit_callbacks):
    """A background dry run reports what it would import and leaves the registry as it was."""
    with django_capture_on_commit_callbacks(execute=True):
        started = _start(api_client, world.people[Role.ADMIN], background="true", dry_run="true")
    job = api_client.get(started.json()["url"]).json()
    assert (job["status"], job["created"], job["dry_run"]) == ("done", 1, True)
    assert not Site.objects.filter(code="north").exists()


@pytest.mark.parametrize(
    "role,status", [(Role.SUPERVISOR, 200), (Role.ADMIN, 200), (Role.PROPERTY_MANAGER, 404), (Role.TECHNICIAN, 404)]
)
def test_only_the_organisations_supervisors_and_admins_see_a_job(world, api_client, role, status):
    """A job is the organisation's registry work: others of the organisation, like strangers, get 404."""
    job = import_jobs.import_job_create(
        organisation=world.org_a, kind="sites", text=SITES, by=world.people[Role.SUPERVISOR]
    )
    api_client.force_authenticate(world.people[role])
    assert api_client.get(f"/api/inventory/import-jobs/{job.public_id}/").status_code == status


def test_an_unknown_or_foreign_job_is_not_found(world, api_client):
    """Another organisation's job and a made-up id answer the same 404."""
    theirs = import_jobs.import_job_create(organisation=world.org_b, kind="sites", text=SITES, by=None)
    api_client.force_authenticate(world.people[Role.SUPERVISOR])
    for public_id in (theirs.public_id, uuid.uuid4()):
        response = api_client.get(f"/api/inventory/import-jobs/{public_id}/")
        assert response.status_code == 404
        assert "North" not in response.content.decode()


def test_running_a_finished_job_again_changes_nothing(world):
    """A redelivered task finds the job finished and leaves it (and the registry) as they are."""
    job = import_jobs.import_job_create(organisation=world.org_a, kind="sites", text=SITES, by=None)
    assert import_jobs.import_job_run(job_id=job.pk).status == ImportJob.Status.DONE
    again = import_jobs.import_job_run(job_id=job.pk)
    assert (again.status, again.created) == (ImportJob.Status.DONE, 1)
    assert Site.objects.filter(code="north").count() == 1


def test_a_refused_job_lists_every_bad_row_and_imports_nothing(world):
    """The job's report is the synchronous import's: line, column, value and what is allowed, for each row."""
    text = SITES + "south,South Yard,95,9.9,UTC\neast,East,1,east,UTC\n"
    job = import_jobs.import_job_create(organisation=world.org_a, kind="sites", text=text, by=None)
    job = import_jobs.import_job_run(job_id=job.pk)
    assert job.status == ImportJob.Status.REFUSED
    assert [(e["line"], e["column"], e["value"]) for e in job.errors] == [
        (3, "latitude", "95"),
        (4, "longitude", "east"),
    ]
    assert (job.rows_done, job.rows_total, job.source) == (3, 3, "")
    assert not Site.objects.filter(code="north").exists()


def test_a_file_with_a_nul_is_refused_before_any_job_is_stored(world, api_client):
    """A NUL cannot be stored as text (PostgreSQL refuses it): the upload is refused at once, naming each cell."""
    text = SITES + "south,South\x00Yard,53.1,9.9,UTC\n"
    response = _start(api_client, world.people[Role.SUPERVISOR], text, background="true")
    assert response.status_code == 400
    assert [(e["line"], e["column"], e["value"]) for e in response.json()["errors"]] == [(3, "name", "South\\x00Yard")]
    assert not ImportJob.objects.exists()


def test_a_job_that_breaks_while_writing_stores_nothing_and_says_so(world, monkeypatch):
    """An unexpected error after some rows were written rolls all of them back; the job says failed, in words."""
    from inventory.csv_io.plan import ImportPlan

    def broken(self, model):
        raise RuntimeError("disk gone")

    monkeypatch.setattr(ImportPlan, "_update", broken)
    job = import_jobs.import_job_create(organisation=world.org_a, kind="sites", text=SITES, by=None)
    job = import_jobs.import_job_run(job_id=job.pk)
    assert job.status == ImportJob.Status.FAILED
    assert "nothing was imported" in job.detail and "disk" not in job.detail
    assert not Site.objects.filter(code="north").exists()


def test_progress_is_saved_as_rows_are_checked(world, monkeypatch):
    """The job's rows done move in steps while the file is checked and end at the total."""
    from inventory.csv_io import importing

    monkeypatch.setattr(importing, "PROGRESS_EVERY", 2)
    seen = []
    real_update = import_jobs.ImportJob.objects.filter

    def spy(*args, **kwargs):
        qs = real_update(*args, **kwargs)
        original = qs.update

        def update(**fields):
            if "rows_done" in fields:
                seen.append(fields["rows_done"])
            return original(**fields)

        qs.update = update
        return qs

    text = "code,name,latitude,longitude\n" + "".join(f"s{n},Site {n},52,5\n" for n in range(5))
    job = import_jobs.import_job_create(organisation=world.org_a, kind="sites", text=text, by=None)
    monkeypatch.setattr(import_jobs.ImportJob.objects, "filter", spy)
    job = import_jobs.import_job_run(job_id=job.pk)
    assert seen == [0, 2, 4, 5, 5]
    assert (job.status, job.rows_done, job.rows_total, job.created) == (ImportJob.Status.DONE, 5, 5, 5)


@pytest.mark.parametrize(("rows", "background"), [(2, False), (3, True), (4, True)])
def test_a_file_of_background_rows_or_more_goes_to_a_job_by_itself(monkeypatch, rows, background):
    """Without ``background`` the file's record count decides: from ``BACKGROUND_ROWS`` records on, a job."""
    monkeypatch.setattr(import_jobs, "BACKGROUND_ROWS", 3)
    text = "code,name\n" + "".join(f's{i},"Site\n{i}"\n' for i in range(rows))  # records, not lines
    assert import_jobs.import_runs_in_background(text=text) is background


def test_counting_records_stops_where_asked():
    """``data_rows`` counts records below the header; with ``at_most`` it reads no further than that."""
    from inventory.csv_io import data_rows

    text = "code,name\n" + "".join(f"s{i},Site {i}\n" for i in range(50))
    assert data_rows(text) == 50
    assert data_rows(text, at_most=10) == 10
    assert data_rows(text, at_most=80) == 50
