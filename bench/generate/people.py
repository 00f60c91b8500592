"""An organisation's people (a supervisor, a property manager, technicians) and their API tokens."""

from __future__ import annotations

import random

from .common import bulk
from .names import FIRST, LAST


def people_create(*, org, slug: str, n_techs: int, rng: random.Random, password: str) -> dict[str, object]:
    from accounts.models import Membership, Role, User

    specs = [(f"{slug}-supervisor", Role.SUPERVISOR), (f"{slug}-manager", Role.PROPERTY_MANAGER)]
    specs += [(f"{slug}-tech{i:02d}", Role.TECHNICIAN) for i in range(1, n_techs + 1)]
    users = []
    for username, _role in specs:
        users.append(
            User(
                username=username,
                first_name=rng.choice(FIRST),
                last_name=rng.choice(LAST),
                email=f"{username}@example.invalid",
                password=password,
                skills=["mechanical", "electrical", "controls"],
                unit_system="si",
            )
        )
    users = bulk(User, users)
    bulk(Membership, [Membership(user=u, organisation=org, role=r) for u, (_, r) in zip(users, specs, strict=True)])
    return {u.username: u for u in users}


def tokens_create(users, rng: random.Random) -> dict[str, str]:
    from rest_framework.authtoken.models import Token

    rows = [Token(key=f"{rng.getrandbits(160):040x}", user=u) for u in users]
    bulk(Token, rows)
    return {t.user.username: t.key for t in rows}
