"""Which components of a unit a task applies to. Plain functions over loaded objects (no queries)."""

from __future__ import annotations

from collections.abc import Iterable

# Recirculation dampers make no sense on a 100 % outdoor-air unit, whatever the registry says.
RECIRCULATION_DAMPER_ROLES = frozenset({"return", "mixing"})


def _spec_matches(specs: dict, wanted: dict) -> bool:
    for key, allowed in (wanted or {}).items():
        value = specs.get(key)
        if isinstance(allowed, list):
            if value not in allowed:
                return False
        elif value != allowed:
            return False
    return True


def _applies(targets: list[dict], ahu, component) -> bool:
    if (
        ahu.full_outdoor_air
        and component.kind == "damper"
        and (component.specs or {}).get("role") in RECIRCULATION_DAMPER_ROLES
    ):
        return False
    return any(
        component.kind == target["kind"] and _spec_matches(component.specs or {}, target.get("specs") or {})
        for target in targets
    )


def component_applies(*, task, ahu, component) -> bool:
    """Whether ``task`` is done on ``component`` of ``ahu``."""
    return _applies(task.targets(), ahu, component)


def task_targets(*, task, ahu, components: Iterable) -> list:
    """The components the task is done on; ``[None]`` for a unit-level task; ``[]`` when it does not apply."""
    if not task.component_kind:
        return [None]
    targets = task.targets()
    kinds = {t["kind"] for t in targets}
    return [c for c in components if c.kind in kinds and _applies(targets, ahu, c)]
