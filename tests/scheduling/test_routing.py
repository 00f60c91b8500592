"""The suggested visiting order."""

import itertools
import random

from scheduling.routing import (
    distance_matrix,
    haversine_km,
    held_karp,
    nearest_neighbour,
    route_length,
    suggest_order,
    two_opt,
)


def random_points(rng, n):
    return [(52 + rng.uniform(-0.3, 0.3), 5 + rng.uniform(-0.5, 0.5)) for _ in range(n)]


def test_haversine_one_degree_of_latitude():
    """One degree of latitude is about 111.2 km on the mean-radius sphere (2πR/360)."""
    assert abs(haversine_km((0, 0), (1, 0)) - 111.195) < 0.01


def test_held_karp_equals_brute_force_on_random_small_cases():
    """The exact order is as short as the best of all permutations."""
    rng = random.Random(4)
    for n in range(1, 8):
        for _ in range(5):
            dist = distance_matrix(random_points(rng, n + 1))
            best = min(route_length(dist=dist, order=p) for p in itertools.permutations(range(1, n + 1)))
            assert abs(route_length(dist=dist, order=held_karp(dist)) - best) < 1e-9


def test_two_opt_never_longer_than_the_given_order():
    """2-opt returns an order no longer than the one it was given, for many random tours."""
    rng = random.Random(9)
    for _ in range(30):
        n = rng.randint(11, 25)
        dist = distance_matrix(random_points(rng, n + 1))
        given = list(range(1, n + 1))
        rng.shuffle(given)
        for start in (given, nearest_neighbour(dist)):
            improved = two_opt(dist, start)
            assert sorted(improved) == list(range(1, n + 1))
            assert route_length(dist=dist, order=improved) <= route_length(dist=dist, order=start) + 1e-9


def test_suggest_order_visits_every_stop_once():
    """Above ten stops the heuristic still visits each stop exactly once."""
    rng = random.Random(1)
    stops = random_points(rng, 14)
    assert sorted(suggest_order(start=(52, 5), stops=stops)) == list(range(14))
    assert suggest_order(start=(52, 5), stops=[]) == []


def test_drive_time_takes_the_road_detour_at_urban_speed():
    """40 km great-circle is 52 km of road (x 1.3 detour) at 40 km/h: 78 minutes (common practice figures)."""
    from scheduling.routing import drive_minutes

    assert abs(drive_minutes(40.0) - 78.0) < 1e-9
    assert drive_minutes(0.0) == 0.0
