from django.apps import AppConfig


class AccountsConfig(AppConfig):
    name = "accounts"
    verbose_name = "Accounts and roles"

    def ready(self) -> None:
        from django.db.backends.signals import connection_created

        from .changes import watch_install

        # Not domain logic: every connection gets the write watcher behind the change stamp.
        connection_created.connect(watch_install, dispatch_uid="accounts.changes.watch_install")
