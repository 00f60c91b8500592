from scheduling.management.csv_command import CsvImportCommand
from scheduling.services import meter_readings_import_csv


class Command(CsvImportCommand):
    help = (
        "Import run-hour meter readings from a building-automation CSV "
        "(unit_label,taken_at,hours[,component_label,is_reset]); all rows or none."
    )

    def run(self, *, organisation, text):
        return meter_readings_import_csv(organisation=organisation, text=text)

    def report(self, result) -> None:
        self.stdout.write(f"imported {len(result)} reading{'' if len(result) == 1 else 's'}")
