from django.apps import AppConfig


class AutomationConfig(AppConfig):
    name = "automation"
    verbose_name = "Building automation"

    def ready(self) -> None:
        from inspections.freeze import freeze_event_source_register
        from inspections.selectors import filter_point_source_register
        from scheduling.signals import work_order_moved

        from . import judging_tasks  # noqa: F401 (registers the judging tasks with Celery)
        from .fault_keeping import freeze_blockers
        from .fault_keeping import work_order_moved as faults_follow
        from .fault_selectors import filter_series_points

        work_order_moved.connect(faults_follow, dispatch_uid="automation.judging.work_order_moved")
        freeze_event_source_register(freeze_blockers)
        filter_point_source_register(filter_series_points)
