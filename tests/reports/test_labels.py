"""Label sheets: a QR label per chosen unit or component, code in text, two layouts of Plenum's own size."""

import pytest

from reports.documents.labels import LAYOUTS
from tests.factories.inventory import AHUFactory, BuildingFactory, ComponentFactory

from .conftest import pdf_pages, pdf_text, rasterise

pytestmark = pytest.mark.django_db


def test_layouts_fill_their_paper_exactly():
    """Margins, labels and gaps add up to the paper size, so the sheet centres on A4 and on US Letter."""
    a4, letter = LAYOUTS["a4-3x8"], LAYOUTS["letter-3x10"]
    assert 2 * a4.margin_left + 3 * a4.label_w + 2 * a4.gap_x == pytest.approx(210)
    assert 2 * a4.margin_top + 8 * a4.label_h + 7 * a4.gap_y == pytest.approx(297)
    assert 2 * letter.margin_left + 3 * letter.label_w + 2 * letter.gap_x == pytest.approx(8.5)
    assert 2 * letter.margin_top + 10 * letter.label_h + 9 * letter.gap_y == pytest.approx(11)


@pytest.mark.parametrize(("layout", "per_page"), [("a4-3x8", 24), ("letter-3x10", 30)])
def test_label_sheet_has_codes_and_tags_and_the_right_page_count(site, supervisor, make_report, layout, per_page):
    """Every chosen unit and component gets a label with its code and tag; the pages hold the layout's count."""
    building = BuildingFactory(site=site, name="North Wing")
    units = [AHUFactory(building=building, tag=f"AHU-{i:02d}") for i in range(per_page)]
    comp = ComponentFactory(ahu=units[0], name="Final filters")
    report = make_report(
        user=supervisor,
        kind="labels",
        parameters={"units": [u.pk for u in units], "components": [comp.pk], "layout": layout},
    )
    text = pdf_text(report)
    for unit in units:
        assert unit.label_code in text
        assert unit.tag in text
    assert comp.label_code in text and "Final filters" in text
    assert pdf_pages(report) == 2  # one full page of units, the component on the next
    rasterise(report, f"labels-{layout}", last_page=1)


def test_label_page_size_follows_layout(site, supervisor, make_report):
    """The A4 layout gives A4 pages (595 × 842 pt), the Letter layout 612 × 792 pt."""
    import io

    from pypdf import PdfReader

    from .conftest import pdf_bytes

    unit = AHUFactory(building=BuildingFactory(site=site))
    for layout, size in [("a4-3x8", (595, 842)), ("letter-3x10", (612, 792))]:
        report = make_report(user=supervisor, kind="labels", parameters={"units": [unit.pk], "layout": layout})
        box = PdfReader(io.BytesIO(pdf_bytes(report))).pages[0].mediabox
        assert (round(float(box.width)), round(float(box.height))) == size
