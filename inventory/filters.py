"""Query-string filters for the registry lists (django-filter)."""

import django_filters
from django.db.models import Q

from .models import AHU, Building, Component, ComponentKind, Site


class SiteFilter(django_filters.FilterSet):
    organisation = django_filters.CharFilter(field_name="organisation__slug")
    search = django_filters.CharFilter(method="filter_search", label="Code or name contains")

    class Meta:
        model = Site
        fields = ["organisation", "code"]

    def filter_search(self, queryset, name, value):
        return queryset.filter(Q(code__icontains=value) | Q(name__icontains=value))


class BuildingFilter(django_filters.FilterSet):
    site_code = django_filters.CharFilter(field_name="site__code")
    search = django_filters.CharFilter(method="filter_search", label="Code or name contains")

    class Meta:
        model = Building
        fields = ["site", "code"]

    def filter_search(self, queryset, name, value):
        return queryset.filter(Q(code__icontains=value) | Q(name__icontains=value))


class AHUFilter(django_filters.FilterSet):
    site = django_filters.NumberFilter(field_name="building__site_id")
    site_code = django_filters.CharFilter(field_name="building__site__code")
    status = django_filters.ChoiceFilter(choices=AHU.Status.choices)
    heat_recovery = django_filters.ChoiceFilter(choices=AHU.HeatRecovery.choices)
    search = django_filters.CharFilter(method="filter_search", label="Tag, label code or area served contains")

    class Meta:
        model = AHU
        fields = ["site", "building", "status", "heat_recovery", "full_outdoor_air", "tag", "label_code"]

    def filter_search(self, queryset, name, value):
        return queryset.filter(Q(tag__icontains=value) | Q(label_code__iexact=value) | Q(area_served__icontains=value))


class ComponentFilter(django_filters.FilterSet):
    site = django_filters.NumberFilter(field_name="ahu__building__site_id")
    building = django_filters.NumberFilter(field_name="ahu__building_id")
    kind = django_filters.ChoiceFilter(choices=ComponentKind.choices)
    search = django_filters.CharFilter(method="filter_search", label="Name, label code or unit tag contains")

    class Meta:
        model = Component
        fields = ["ahu", "site", "building", "kind", "parent", "label_code"]

    def filter_search(self, queryset, name, value):
        return queryset.filter(Q(name__icontains=value) | Q(label_code__iexact=value) | Q(ahu__tag__icontains=value))
