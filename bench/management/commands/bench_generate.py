"""``manage.py bench_generate --sites 500 --ahus 5000 --years 2 [--seed N]``: a synthetic portfolio.

Writes into the configured database. Point ``DATABASE_URL`` at a throwaway database, not a real one.
"""

import json

from django.core.management.base import BaseCommand, CommandError

from bench.generate import portfolio_generate


class Command(BaseCommand):
    help = "Write a deterministic synthetic portfolio (sites, units, components, history) for benchmarks."

    def add_arguments(self, parser):
        parser.add_argument("--sites", type=int, default=50)
        parser.add_argument("--ahus", type=int, default=500)
        parser.add_argument("--years", type=int, default=2)
        parser.add_argument("--seed", type=int, default=1)

    def handle(self, *args, sites, ahus, years, seed, **options):
        try:
            portfolio = portfolio_generate(sites=sites, ahus=ahus, years=years, seed=seed)
        except ValueError as exc:
            raise CommandError(str(exc))
        self.stdout.write(json.dumps({"organisation": portfolio.main.slug, **portfolio.counts}, indent=1))
