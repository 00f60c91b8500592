from django.apps import AppConfig


class AccountsConfig(AppConfig):
    name = "accounts"
    verbose_name = "Accounts and roles"

    def ready(self) -> None:
        from django.db.backends.signals import connection_created
        from django.db.models.signals import post_migrate, post_save

        from .changes import migrations_applied, watch_install
        from .models import User
        from .services import password_saved

        # Not domain logic: every connection gets the write watcher behind the change stamp, and a migrate
        # moves the stamp once at its end.
        connection_created.connect(watch_install, dispatch_uid="accounts.changes.watch_install")
        post_migrate.connect(migrations_applied, sender=self, dispatch_uid="accounts.changes.migrations_applied")
        # A saved password change revokes the person's API token and feeds, whichever page or command saved it.
        post_save.connect(password_saved, sender=User, dispatch_uid="accounts.services.password_saved")
