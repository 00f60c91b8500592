"""Organisations, people and their roles; which sites a person may see.

A site always belongs to one organisation (the tenant that maintains it). A
property manager works inside that tenant's data but sees only the sites
granted to them. The visibility rule itself lives in one selector:
``inventory.selectors.sites_visible_to``.
"""

from django.contrib.auth.models import AbstractUser
from django.db import models

from engineering import units


class Organisation(models.Model):
    class Kind(models.TextChoices):
        CONTRACTOR = "contractor", "Service contractor"
        OWNER = "owner", "Building owner"

    name = models.CharField(max_length=200)
    slug = models.SlugField(max_length=60, unique=True)
    kind = models.CharField(max_length=20, choices=Kind.choices, default=Kind.CONTRACTOR)
    created_at = models.DateTimeField(auto_now_add=True)
    answers_version = models.BigIntegerField(
        default=0,
        editable=False,
        help_text="Moves when what every answer of its people shows changes (the registry, people, task rules, "
        "generation), so every kept API answer of theirs knows it is stale (accounts.changes).",
    )
    work_version = models.BigIntegerField(
        default=0,
        editable=False,
        help_text="Moves when any of its work changes (work orders and their tasks, inspections, findings): "
        "its kept boards are stale (accounts.changes).",
    )

    class Meta:
        ordering = ["name"]

    def __str__(self) -> str:
        return self.name


class Role(models.TextChoices):
    TECHNICIAN = "technician", "Technician"
    SUPERVISOR = "supervisor", "Supervisor"
    PROPERTY_MANAGER = "property_manager", "Property manager"
    ADMIN = "admin", "Administrator"


class User(AbstractUser):
    class UnitSystem(models.TextChoices):
        # The values are engineering.units.UnitSystem's, the one list of display systems; the words are a person's.
        SI = units.UnitSystem.SI.value, "SI (Pa, °C, m³/s, kW)"
        US = units.UnitSystem.US.value, "US customary (in. w.c., °F, cfm, Btu/h)"

    unit_system = models.CharField(max_length=2, choices=UnitSystem.choices, default=UnitSystem.SI)
    phone = models.CharField(max_length=40, blank=True)
    daily_capacity_hours = models.DecimalField(
        max_digits=4, decimal_places=1, default=7.5, help_text="Hours of field work a day, for load balancing."
    )
    skills = models.JSONField(default=list, blank=True, help_text="Skill codes, e.g. ['mechanical', 'electrical'].")
    work_version = models.BigIntegerField(
        default=0,
        editable=False,
        help_text="Moves when a work order assigned to the person (before or after the change) changes: their "
        "kept today answer is stale (accounts.changes).",
    )

    class Meta:
        ordering = ["username"]

    def __str__(self) -> str:
        return self.get_full_name() or self.username

    def set_password(self, raw_password) -> None:
        """As Django's; the next save also revokes the person's API token and calendar feeds (post_save)."""
        super().set_password(raw_password)
        self._password_replaced = True

    def set_unusable_password(self) -> None:
        super().set_unusable_password()
        self._password_replaced = True


class Membership(models.Model):
    user = models.ForeignKey(User, on_delete=models.CASCADE, related_name="memberships")
    organisation = models.ForeignKey(Organisation, on_delete=models.CASCADE, related_name="memberships")
    role = models.CharField(max_length=20, choices=Role.choices)
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        constraints = [models.UniqueConstraint(fields=["user", "organisation"], name="membership_unique_user_org")]

    def __str__(self) -> str:
        return f"{self.user} — {self.get_role_display()} at {self.organisation}"


class SiteGrant(models.Model):
    """A property manager's (or anyone's) explicit right to see one site."""

    user = models.ForeignKey(User, on_delete=models.CASCADE, related_name="site_grants")
    site = models.ForeignKey("inventory.Site", on_delete=models.CASCADE, related_name="grants")
    granted_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        constraints = [models.UniqueConstraint(fields=["user", "site"], name="sitegrant_unique_user_site")]

    def __str__(self) -> str:
        return f"{self.user} may see {self.site}"


class AuditEvent(models.Model):
    """One change to a record: who, when, what. Written by the action functions, never edited."""

    actor = models.ForeignKey(User, on_delete=models.SET_NULL, null=True, blank=True, related_name="audit_events")
    organisation = models.ForeignKey(
        Organisation, on_delete=models.CASCADE, null=True, blank=True, related_name="audit_events"
    )
    at = models.DateTimeField(auto_now_add=True, db_index=True)
    object_type = models.CharField(max_length=60, help_text="app_label.model")
    object_id = models.CharField(max_length=64)
    action = models.CharField(max_length=60)
    changes = models.JSONField(default=dict, blank=True)

    class Meta:
        ordering = ["-at", "-id"]
        indexes = [models.Index(fields=["object_type", "object_id"])]

    def __str__(self) -> str:
        return f"{self.at:%Y-%m-%d %H:%M} {self.actor} {self.action} {self.object_type}#{self.object_id}"
