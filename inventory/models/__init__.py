"""Sites, buildings, air handling units and their component trees.

One module per group: ``codes`` (label codes, shared validators), ``sites`` (sites and buildings), ``units``
(AHUs), ``components``, ``imports`` (background CSV imports); the package answers with their names.
"""

from __future__ import annotations

from .codes import (
    LABEL_ALPHABET,
    default_normals_max,
    default_normals_min,
    new_component_code,
    new_label_code,
    new_unit_code,
    validate_monthly_normals,
    validate_time_zone,
)
from .components import Component, ComponentKind
from .imports import ImportJob
from .sites import Building, Site
from .units import AHU, AIR_DISTRIBUTION_CHOICES, VentilationZones

__all__ = [
    "AHU",
    "AIR_DISTRIBUTION_CHOICES",
    "LABEL_ALPHABET",
    "Building",
    "Component",
    "ComponentKind",
    "ImportJob",
    "Site",
    "VentilationZones",
    "default_normals_max",
    "default_normals_min",
    "new_component_code",
    "new_label_code",
    "new_unit_code",
    "validate_monthly_normals",
    "validate_time_zone",
]
