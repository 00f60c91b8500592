"""The board's suggested technician, picked with a bound, is the pick of working out every candidate's day.

``least_loaded_for`` skips the routes that cannot change the answer (a day with a visit added takes at least
its tasks' hours and the drive of its route without the visit); these cases compare it with ``least_loaded``
over every qualified technician's whole day (``day_load``), on random days of up to 12 sites (past
``routing.EXACT_LIMIT`` too), equal loads, equal names, sites already on the day and days over capacity.
Pure Python: no database.
"""

import datetime as dt
import random
from dataclasses import dataclass, field

from scheduling.selectors import WorkNeed, capacity_on, day_load, least_loaded, least_loaded_for

DAY = dt.date(2026, 3, 10)


@dataclass(eq=False)
class Tech:
    pk: int
    name: str
    daily_capacity_hours: float
    skills: list[str] = field(default_factory=list)

    def __str__(self) -> str:
        return self.name


def _site(rng: random.Random, sites: list) -> tuple[int, tuple[float, float]]:
    if sites and rng.random() < 0.3:
        return rng.choice(sites)  # a site some day already has
    site = (len(sites) + 1, (52 + rng.uniform(-0.2, 0.2), 5 + rng.uniform(-0.3, 0.3)))
    sites.append(site)
    return site


def _case(rng: random.Random):
    """Technicians with random days; in one case of two, days of the same visits and minutes each, so the drive
    alone decides (where a wrong bound would skip the right technician)."""
    sites: list = []
    alike = rng.random() < 0.5
    visits_each = rng.choice([1, 3, 6, 9, 11])
    techs = [
        Tech(
            pk=i + 1,
            name=rng.choice(["Ann Bell", "Ann Bell", "Cas Dorn", f"Tech {i}"]),  # equal names happen
            daily_capacity_hours=rng.choice([0, 4.0, 7.5, 8.0]) if not alike else 16.0,
            skills=rng.sample(["mechanical", "electrical", "controls"], rng.randint(0, 3))
            if not alike
            else ["mechanical"],
        )
        for i in range(rng.randint(1, 8) if not alike else rng.randint(3, 8))
    ]
    visits = {}
    for tech in techs:
        day = []
        for _ in range(rng.choice([0, 0, 1, 3, 6, 9, 11]) if not alike else visits_each):
            site_id, where = _site(rng, sites)
            day.append((rng.choice([30, 45, 60, 60, 90]) if not alike else 60, site_id, where))
        visits[(tech.pk, DAY)] = day
    site_id, where = _site(rng, sites)
    need = WorkNeed(
        minutes=rng.choice([30, 60, 120]),
        site_id=site_id,
        where=where,
        skills=frozenset(rng.sample(["mechanical", "electrical"], rng.randint(0, 2)) if not alike else ["mechanical"]),
    )
    return techs, visits, need


def _every_route(techs, visits, need):
    return least_loaded(
        [
            (u, day_load(day=DAY, capacity=capacity_on(u, DAY), visits=[*visits.get((u.pk, DAY), []), need.visit]))
            for u in techs
            if need.skills <= set(u.skills or [])
        ]
    )


def test_the_bounded_pick_is_the_pick_of_every_route():
    rng = random.Random(17)
    picked = 0
    for _ in range(400):
        techs, visits, need = _case(rng)
        expected = _every_route(techs, visits, need)
        got = least_loaded_for(techs=techs, day=DAY, visits=visits, need=need, km_of={})
        if expected is None:
            assert got is None
            continue
        picked += 1
        assert got is not None
        assert got[0] is expected[0], (got, expected)
        assert got[1] == expected[1]
    assert picked > 200, "most cases have someone with the skills"
