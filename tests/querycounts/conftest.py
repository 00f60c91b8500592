"""Two portfolios in one database, one with about 2 of every listed row and one with about 20.

The same person-shaped accounts exist in both (``q2-main-supervisor`` and
``q20-main-supervisor``, ...), so each list can be asked for by the same role
at both sizes, and the query counts compared.
"""

import datetime as dt
from dataclasses import dataclass

import pytest

from bench.generate import Portfolio, portfolio_generate
from bench.scenarios import today_work_assign

TODAY = dt.date(2025, 3, 3)


@dataclass
class Pair:
    small: Portfolio
    large: Portfolio


def _build(prefix: str, n: int) -> Portfolio:
    from accounts.models import Organisation
    from scheduling.engine import work_orders_generate

    p = portfolio_generate(sites=n, ahus=n, years=1, seed=n, today=TODAY, prefix=prefix)
    work_orders_generate(organisation=Organisation.objects.get(pk=p.main.organisation_id), today=TODAY)
    today_work_assign(portfolio=p, per_technician=max(1, n // 2))
    return p


@pytest.fixture
def pair(db) -> Pair:
    return Pair(small=_build("q2", 2), large=_build("q20", 20))
