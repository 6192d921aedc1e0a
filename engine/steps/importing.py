"""Create a project from the user's files: read everything first, then store it in one save.

Nothing is stored when any file cannot be read, so a failed import leaves nothing behind.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path

from engine.calendar import CampusCalendar, with_holidays
from engine.errors import InputError
from engine.meter_labels import TEMPERATURE_SETTING
from engine.progress import Progress, step
from engine.project import Project, sqlite_file
from engine.reading import (
    BillFile,
    CalendarFile,
    MeterFile,
    ReadOptions,
    WeatherFile,
    describe,
    read_bill_file,
    read_calendar,
    read_meter_file,
    read_weather_file,
)
from engine.steps.site_calendar import store_calendar
from engine.zone_names import require_zone


@dataclass
class ImportedFiles:
    """Every file read for a new project, ready to store."""

    meters: list[MeterFile]
    bills: list[BillFile]
    weather: list[WeatherFile]
    options: ReadOptions
    calendar: CalendarFile | None = None

    def reports(self) -> list[dict]:
        calendar = [self.calendar] if self.calendar else []
        return [describe(r) for r in (*self.meters, *self.bills, *self.weather, *calendar)]


def read_project_files(
    meters: Sequence[str | Path],
    bills: Sequence[str | Path] = (),
    weather: Sequence[str | Path] = (),
    options: ReadOptions | None = None,
    calendar: str | Path | None = None,
    progress: Progress | None = None,
) -> ImportedFiles:
    """Read all files; stop with :class:`InputError` at the first one that cannot be read."""
    options = options or ReadOptions()
    if options.timezone is None:
        raise InputError(
            "a project needs the site's time zone.",
            hint="Give it with --timezone, e.g. --timezone America/Chicago.",
        )
    require_zone(options.timezone)
    jobs = [(read_meter_file, m) for m in meters]
    jobs += [(read_bill_file, b) for b in bills]
    jobs += [(read_weather_file, w) for w in weather]
    results = []
    for done, (reader, path) in enumerate(jobs):
        step(progress, done / max(len(jobs), 1), f"reading {Path(path).name}")
        results.append(reader(path, options))
    files = ImportedFiles(
        meters=[r for r in results if isinstance(r, MeterFile)],
        bills=[r for r in results if isinstance(r, BillFile)],
        weather=[r for r in results if isinstance(r, WeatherFile)],
        options=options,
        calendar=read_calendar(calendar, options) if calendar else None,
    )
    _check_unique_names(files)
    return files


def create_project(
    path: str | Path,
    files: ImportedFiles,
    *,
    timezone: str,
    overwrite: bool = False,
    progress: Progress | None = None,
) -> Project:
    """Store ``files`` in a new project file at ``path`` in one atomic save.

    The project is built and filled under another name beside ``path`` and renamed over it
    only when everything is stored: a failure or a kill leaves the old file (with
    ``overwrite``) or none, never an empty or half-filled project.
    """
    return assemble_project(
        path, lambda project: store_files(project, files, progress),
        timezone=timezone, overwrite=overwrite,
    )  # fmt: skip


def assemble_project(
    path: str | Path,
    fill: Callable[[Project], object],
    *,
    timezone: str,
    overwrite: bool = False,
) -> Project:
    """A new project at ``path``, filled by ``fill`` under another name beside it and renamed
    over ``path`` only when ``fill`` has finished; returned open. Until then any earlier file
    at ``path`` stays as it was, whatever fails or is cancelled."""
    path = Path(path)
    sqlite_file.require_free(path, overwrite=overwrite)
    building = sqlite_file.building_path(path)
    try:
        with Project.create(building, timezone=timezone) as project:
            fill(project)
        sqlite_file.place_file(building, path, overwrite=overwrite)
    finally:
        sqlite_file.remove_building(building)
    return Project.open(path)


def store_files(project: Project, files: ImportedFiles, progress: Progress | None = None) -> None:
    """Add every file's readings to ``project`` in one save (all or nothing)."""
    total = max(len(files.meters) + len(files.bills) + len(files.weather), 1)
    done = 0
    with project.transaction():
        for meter_file in files.meters:
            source = _source(project, "meters", meter_file, files.options)
            for read in meter_file.meters:
                settings = _meter_settings(meter_file, read)
                project.add_meter(read.meter, read.raw, source_id=source, settings=settings)
            done += 1
            step(progress, done / total, f"stored {meter_file.path.name}")
        for bill_file in files.bills:
            source = _source(project, "bills", bill_file, files.options)
            stored = bill_file.bills.drop(columns=["days", "source_row"])
            project.add_bills(bill_file.account, stored, source_id=source)
            done += 1
            step(progress, done / total, f"stored {bill_file.path.name}")
        for weather_file in files.weather:
            source = _source(project, "weather", weather_file, files.options)
            project.add_weather(
                weather_file.station, weather_file.temps_c, weather_file.raw, source_id=source
            )
            done += 1
            step(progress, done / total, f"stored {weather_file.path.name}")
        if files.calendar is not None:
            _source(project, "calendar", files.calendar, files.options)
            store_calendar(project, files.calendar.calendar)
        elif files.options.holidays:  # public holidays without a campus calendar file
            store_calendar(project, with_holidays(CampusCalendar(), files.options.holidays))
        _keep_temperature_unit(project, files.weather)


def _keep_temperature_unit(project: Project, weather: list[WeatherFile]) -> None:
    """Show temperatures in °F from now on when the site's weather came in °F (unless the
    project already has a choice, which a later file does not overturn)."""
    if weather and project.get_setting(TEMPERATURE_SETTING) is None:
        fahrenheit = any(w.unit_found == "°F" for w in weather)
        project.set_setting(TEMPERATURE_SETTING, "°F" if fahrenheit else "°C")


def _source(project: Project, kind: str, result, options: ReadOptions) -> int:
    return project.add_source(
        kind, result.path, settings=options.to_dict(), findings=describe(result)["findings"]
    )


def _meter_settings(meter_file: MeterFile, read) -> dict:
    """What reproduces this meter's figures: the reading settings plus what was decided."""
    decided = meter_file.options.to_dict()
    decided.update(
        column=read.column,
        sheet=meter_file.sheet,
        value_kind=read.value_kind,
        stamp_convention=read.stamp_convention,
        unit_found=read.unit.name,
        date_format=meter_file.date_note,
    )
    return decided


def _check_unique_names(files: ImportedFiles) -> None:
    seen: dict[str, Path] = {}
    for meter_file in files.meters:
        for read in meter_file.meters:
            if read.meter.name in seen:
                raise InputError(
                    f"meter name '{read.meter.name}' appears in both "
                    f"{seen[read.meter.name].name} and {meter_file.path.name}.",
                    hint="Rename the column in one of the files.",
                    file=meter_file.path,
                )
            seen[read.meter.name] = meter_file.path
