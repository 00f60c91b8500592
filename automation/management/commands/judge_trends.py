import datetime as dt

from django.core.management.base import BaseCommand, CommandError

from inventory.models import Site

from ...judging import trends_judge

MAX_DAYS = 800  # the longest trend kept by default (PLENUM_TREND_RETENTION_DAYS)


class Command(BaseCommand):
    help = (
        "Judge a site's automation trends over its local days START to END: run-hours, filter loading, faults "
        "and freeze events (automation.judging.trends_judge); safe to run again over the same days."
    )

    def add_arguments(self, parser):
        parser.add_argument("site", help="site code")
        parser.add_argument("start", help="first day, YYYY-MM-DD (the site's local day)")
        parser.add_argument("end", nargs="?", help="last day, YYYY-MM-DD (default: the first day)")
        parser.add_argument("--organisation", help="organisation slug, when several have a site of that code")

    def handle(self, *args, site, start, end, organisation, **options):
        days = {}
        for name, raw in (("start", start), ("end", end or start)):
            try:
                days[name] = dt.date.fromisoformat(raw)
            except ValueError:
                raise CommandError(f"{name}={raw!r} is not a date; allowed: YYYY-MM-DD") from None
        if days["end"] < days["start"]:
            raise CommandError(f"end={days['end']} is before start={days['start']}; allowed: on or after it")
        if (days["end"] - days["start"]).days >= MAX_DAYS:
            raise CommandError(f"{start} to {end}: allowed at most {MAX_DAYS} days at once")
        sites = Site.objects.filter(code=site)
        if organisation:
            sites = sites.filter(organisation__slug=organisation)
        found = list(sites[:2])
        if not found:
            raise CommandError(f"site={site!r} is not a site code" + (f" of {organisation!r}" if organisation else ""))
        if len(found) > 1:
            raise CommandError(f"site={site!r} is a code in several organisations; give --organisation")
        result = trends_judge(site=found[0], start=days["start"], end=days["end"])
        for unit_day in result.days:
            opened = ", ".join(f.code for f in unit_day.opened)
            closed = ", ".join(f.code for f in unit_day.closed)
            hours = unit_day.run_hours.hours_run if unit_day.run_hours is not None else None
            self.stdout.write(
                f"{unit_day.day} {unit_day.ahu.tag}: "
                + (f"ran {hours:.1f} h; " if hours is not None else "")
                + (f"opened {opened}; " if opened else "")
                + (f"closed {closed}; " if closed else "")
                + "; ".join(unit_day.notes)
            )
        self.stdout.write(f"faults opened {len(result.opened)}, closed {len(result.closed)}")
