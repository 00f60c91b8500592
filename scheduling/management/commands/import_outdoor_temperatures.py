from scheduling.management.csv_command import CsvImportCommand
from scheduling.services import outdoor_temperatures_import_csv


class Command(CsvImportCommand):
    help = (
        "Import outdoor temperatures: daily site_code,date,min_c,max_c[,mean_c] or hourly "
        "site_code,timestamp,temperature_c; all rows or none."
    )

    def run(self, *, organisation, text):
        return outdoor_temperatures_import_csv(organisation=organisation, text=text)

    def report(self, result) -> None:
        for code, n in result.items():
            self.stdout.write(f"{code}: {n} day{'' if n == 1 else 's'}")
