from django.apps import AppConfig


class InspectionsConfig(AppConfig):
    name = "inspections"

    def ready(self) -> None:
        from scheduling.signals import work_order_moved

        from .services.findings import work_order_moved as findings_follow

        # scheduling may not import inspections; it announces each move and the findings service acts on it.
        work_order_moved.connect(findings_follow, dispatch_uid="inspections.findings.work_order_moved")
