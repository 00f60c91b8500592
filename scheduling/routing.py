"""A suggested visiting order for a technician's day. Pure Python, no Django.

The route is open: it starts at ``start`` and ends at the last stop (no return
leg), measured in great-circle kilometres. Up to ``EXACT_LIMIT`` stops the
order is exact (Held–Karp dynamic programming, Held & Karp 1962, O(n²·2ⁿ));
above that, nearest neighbour improved by 2-opt (Croes 1958), never longer
than the nearest-neighbour order it starts from.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

EARTH_RADIUS_KM = 6371.0088  # mean Earth radius (IUGG)
EXACT_LIMIT = 10

Point = tuple[float, float]  # (latitude, longitude) in degrees


def haversine_km(a: Point, b: Point) -> float:
    """Great-circle distance by the haversine formula on a sphere of the mean Earth radius."""
    lat1, lon1, lat2, lon2 = map(math.radians, (a[0], a[1], b[0], b[1]))
    h = math.sin((lat2 - lat1) / 2) ** 2 + math.cos(lat1) * math.cos(lat2) * math.sin((lon2 - lon1) / 2) ** 2
    return 2 * EARTH_RADIUS_KM * math.asin(min(1.0, math.sqrt(h)))


def distance_matrix(points: Sequence[Point]) -> list[list[float]]:
    return [[haversine_km(p, q) for q in points] for p in points]


def route_length(*, dist: Sequence[Sequence[float]], order: Sequence[int]) -> float:
    """Length of the open path start(0) → order[0] → order[1] …; ``order`` indexes stops as 1..n in ``dist``."""
    total, prev = 0.0, 0
    for i in order:
        total += dist[prev][i]
        prev = i
    return total


def held_karp(dist: Sequence[Sequence[float]]) -> list[int]:
    """Exact shortest open path from node 0 through every other node (Held–Karp DP). Returns nodes 1..n in order."""
    n = len(dist) - 1
    if n <= 0:
        return []
    full = (1 << n) - 1
    # best[mask][j]: shortest path from 0 visiting the set ``mask`` of stops, ending at stop j (0-based).
    inf = math.inf
    best = [[inf] * n for _ in range(1 << n)]
    parent = [[-1] * n for _ in range(1 << n)]
    for j in range(n):
        best[1 << j][j] = dist[0][j + 1]
    for mask in range(1, 1 << n):
        row = best[mask]
        for j in range(n):
            here = row[j]
            if here == inf or not (mask >> j) & 1:
                continue
            for k in range(n):
                if (mask >> k) & 1:
                    continue
                nxt = mask | (1 << k)
                cand = here + dist[j + 1][k + 1]
                if cand < best[nxt][k]:
                    best[nxt][k] = cand
                    parent[nxt][k] = j
    end = min(range(n), key=lambda j: best[full][j])
    order, mask = [], full
    while end != -1:
        order.append(end + 1)
        prev = parent[mask][end]
        mask ^= 1 << end
        end = prev
    return order[::-1]


def nearest_neighbour(dist: Sequence[Sequence[float]]) -> list[int]:
    n = len(dist) - 1
    left = set(range(1, n + 1))
    order, here = [], 0
    while left:
        nxt = min(left, key=lambda k: (dist[here][k], k))
        order.append(nxt)
        left.remove(nxt)
        here = nxt
    return order


def two_opt(dist: Sequence[Sequence[float]], order: Sequence[int]) -> list[int]:
    """Reverse segments while that shortens the open path; the result is never longer than ``order``."""
    path = [0, *order]
    improved = True
    while improved:
        improved = False
        for i in range(1, len(path) - 1):
            for k in range(i + 1, len(path)):
                a, b = path[i - 1], path[i]
                c = path[k]
                d = path[k + 1] if k + 1 < len(path) else None
                before = dist[a][b] + (dist[c][d] if d is not None else 0.0)
                after = dist[a][c] + (dist[b][d] if d is not None else 0.0)
                if after < before - 1e-12:
                    path[i : k + 1] = reversed(path[i : k + 1])
                    improved = True
    return path[1:]


def suggest_order(*, start: Point, stops: Sequence[Point]) -> list[int]:
    """Indexes into ``stops`` in the suggested visiting order from ``start``."""
    if not stops:
        return []
    dist = distance_matrix([start, *stops])
    order = held_karp(dist) if len(stops) <= EXACT_LIMIT else two_opt(dist, nearest_neighbour(dist))
    return [i - 1 for i in order]


ROAD_DETOUR = 1.3  # road distance / great-circle distance in towns (common practice; 1.2 to 1.4, from memory)
DRIVE_SPEED_KMH = 40.0  # average speed of a service van on urban rounds, parking included (common practice)


def drive_minutes(km: float) -> float:
    """Minutes of driving for ``km`` great-circle kilometres: the road detour at the average urban speed."""
    return km * ROAD_DETOUR / DRIVE_SPEED_KMH * 60.0
