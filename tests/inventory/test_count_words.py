"""Messages count with the noun in its number (``engineering.formatting.count_text``), never "(s)"."""

import pytest
from django.core.exceptions import ValidationError
from django.core.management import call_command

from inventory.csv_io.file_format import ImportFailed, RowError
from tests.factories.inventory import SiteFactory

pytestmark = pytest.mark.django_db


def test_one_problem_of_a_registry_file_is_one_problem():
    error = RowError(line=2, column="latitude", value="95", reason="latitude 95 is not between -90 and 90")
    assert str(ImportFailed([error])) == "1 problem found; nothing was imported"


def test_a_site_whose_maximum_is_below_its_minimum_in_one_month_names_that_month():
    site = SiteFactory()
    site.normals_max_c = list(site.normals_max_c)
    site.normals_max_c[2] = site.normals_min_c[2] - 1.0
    with pytest.raises(ValidationError) as caught:
        site.full_clean()
    [said] = caught.value.message_dict["normals_max_c"]
    assert said == "monthly maximum is below the minimum in 1 month (month 3)"


def test_check_data_counts_its_problems_in_words(capsys):
    call_command("check_data")
    assert "0 problems found, 0 repaired" in capsys.readouterr().out
