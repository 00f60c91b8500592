from django.core.management.base import BaseCommand, CommandError

from inventory.models import Site

from ...models import Point
from ...polling import bacnet_poll


class Command(BaseCommand):
    help = (
        "Poll the BACnet devices that are due now (of one site, or all), as the beat does each minute, and say "
        "what each point brought (automation.polling.bacnet_poll). --every polls every listed device, due or not."
    )

    def add_arguments(self, parser):
        parser.add_argument("site", nargs="?", help="site code (default: every site)")
        parser.add_argument("--organisation", help="organisation slug, when several have a site of that code")
        parser.add_argument("--every", action="store_true", help="poll every listed device, due or not")

    def handle(self, *args, site, organisation, every, **options):
        site_id = None
        if site:
            sites = Site.objects.filter(code=site)
            if organisation:
                sites = sites.filter(organisation__slug=organisation)
            found = list(sites[:2])
            if not found:
                raise CommandError(
                    f"site={site!r} is not a site code" + (f" of {organisation!r}" if organisation else "")
                )
            if len(found) > 1:
                raise CommandError(f"site={site!r} is a site of several organisations; allowed: add --organisation")
            site_id = found[0].pk
        result = bacnet_poll(site_id=site_id, every=every)
        if result.off:
            raise CommandError("BACnet polling is off; allowed: set PLENUM_BACNET_INTERFACE (host/prefix:port)")
        self.stdout.write(
            f"{result.devices} devices read ({result.silent} did not answer), {result.values} values stored, "
            f"{len(result.stale)} points stale"
        )
        names = dict(Point.objects.filter(pk__in=result.stale).values_list("pk", "name"))
        for pk, reason in sorted(result.stale.items(), key=lambda item: names.get(item[0], "")):
            self.stdout.write(f"  {names.get(pk, pk)}: {reason}")
