from django.apps import AppConfig


class AccountsConfig(AppConfig):
    name = "accounts"
    verbose_name = "Accounts and roles"

    def ready(self) -> None:
        from django.db.models.signals import post_migrate, post_save

        from .changes import migrations_applied
        from .models import User
        from .services import password_saved

        # A migrate may change any organisation's data: its end moves every organisation's answer version.
        post_migrate.connect(migrations_applied, sender=self, dispatch_uid="accounts.changes.migrations_applied")
        # A saved password change revokes the person's API token and feeds, whichever page or command saved it.
        post_save.connect(password_saved, sender=User, dispatch_uid="accounts.services.password_saved")
