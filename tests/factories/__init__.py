"""factory-boy factories for every model. Setup goes through the same services where it matters."""

from .accounts import MembershipFactory, OrganisationFactory, UserFactory, make_person
from .inventory import AHUFactory, BuildingFactory, ComponentFactory, SiteFactory, make_full_unit

__all__ = [
    "AHUFactory",
    "BuildingFactory",
    "ComponentFactory",
    "MembershipFactory",
    "OrganisationFactory",
    "SiteFactory",
    "UserFactory",
    "make_full_unit",
    "make_person",
]
