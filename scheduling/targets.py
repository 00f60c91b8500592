"""Which components of a unit a task applies to. Plain functions over loaded objects (no queries)."""

from __future__ import annotations

from collections.abc import Iterable, Mapping

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
    # The specs are read only for a target that filters on them (the engine decodes them on first read).
    return any(
        component.kind == target["kind"]
        and (not target.get("specs") or _spec_matches(component.specs or {}, target["specs"]))
        for target in targets
    )


def component_applies(*, task, ahu, component) -> bool:
    """Whether ``task`` is done on ``component`` of ``ahu``."""
    return _applies(task.targets(), ahu, component)


def task_targets(*, task, ahu, components: Iterable) -> list:
    """The components the task is done on; ``[None]`` for a unit-level task; ``[]`` when it does not apply."""
    return TaskTargets(task).components(ahu=ahu, components=components)


class TaskTargets:
    """``task_targets`` with the task's target list read once, for loops over many units.

    ``components_by_kind`` (kind -> components in the unit's order) lets a caller
    that groups a unit's components once skip the scan over the other kinds.
    """

    __slots__ = ("every", "kinds", "targets", "unit_level")

    def __init__(self, task) -> None:
        self.unit_level = not task.component_kind
        self.targets = task.targets()
        self.kinds = tuple(dict.fromkeys(t["kind"] for t in self.targets))
        # Kinds where every component applies: a target without a spec filter, and no damper rule to apply.
        self.every = frozenset(t["kind"] for t in self.targets if not t.get("specs") and t["kind"] != "damper")

    def components(self, *, ahu, components: Iterable) -> list:
        if self.unit_level:
            return [None]
        return [c for c in components if c.kind in self.kinds and _applies(self.targets, ahu, c)]

    def components_grouped(self, *, ahu, components_by_kind: Mapping[str, list], order=None) -> list:
        """Same answer as ``components`` from the unit's components grouped by kind.

        ``order`` (component -> position in the unit) keeps the unit's order when the
        task spans several kinds.
        """
        if self.unit_level:
            return [None]
        if len(self.kinds) == 1:
            candidates = components_by_kind.get(self.kinds[0], ())
        else:
            candidates = [c for k in self.kinds for c in components_by_kind.get(k, ())]
            if order is not None:
                candidates.sort(key=order)
        every = self.every
        return [c for c in candidates if c.kind in every or _applies(self.targets, ahu, c)]
