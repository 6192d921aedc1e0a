"""The files chosen for import, how each is to be read, and what reading gave — without Qt.

The Files screen observes an :class:`ImportPlan`. Reading and storing are plain functions that
take the engine's ``progress`` so that the screen can run them on a worker thread. Nothing is
stored until :func:`build_project` or :func:`add_to_project` runs, and both store every file in
one save: all of them or none.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path

from engine.errors import InputError
from engine.progress import Progress, step
from engine.project import Project
from engine.reading import (
    BillFile,
    CalendarFile,
    MeterFile,
    ReadOptions,
    WeatherFile,
    describe,
    guess_kind,
    read_file,
)
from engine.steps.importing import ImportedFiles, assemble_project, store_files
from engine.words import counted
from engine.zone_names import require_zone

ReadResult = MeterFile | BillFile | WeatherFile | CalendarFile


@dataclass
class PlannedFile:
    """One chosen file: what it is said to be, how to read it, and what reading it gave.

    ``kind`` None lets the importer decide; ``options.timezone`` None follows the site's zone.
    ``read_as`` is the kind the file was last read (or tried) as, None when nothing could
    tell.
    """

    path: Path
    kind: str | None = None
    options: ReadOptions = field(default_factory=ReadOptions)
    result: ReadResult | None = None
    report: dict | None = None
    problem: str | None = None
    read_as: str | None = None

    @property
    def state(self) -> str:
        """ "waiting" (not read with the current settings), "read" or "problem"."""
        if self.problem is not None:
            return "problem"
        return "waiting" if self.result is None else "read"

    def forget(self) -> None:
        self.result = self.report = self.problem = self.read_as = None

    @property
    def is_calendar(self) -> bool:
        """Said to be, or read as, a campus calendar (which takes the public holidays)."""
        return "calendar" in (self.kind, self.read_as)


@dataclass(frozen=True)
class ReadJob:
    """What a worker needs to read one file: no reference back to the plan."""

    path: Path
    kind: str | None
    options: ReadOptions


@dataclass(frozen=True)
class ReadOutcome:
    job: ReadJob
    result: ReadResult | None = None
    report: dict | None = None
    problem: str | None = None
    read_as: str | None = None


class ImportPlan:
    """The files on the Files screen, in the order chosen, the site's time zone and the public
    holidays a campus calendar takes (``holidays``: "US", "US-IL" or None, as
    :class:`~engine.reading.ReadOptions` has it)."""

    def __init__(self) -> None:
        self.files: list[PlannedFile] = []
        self.site_timezone: str | None = None
        self.holidays: str | None = None
        self._listeners: list[Callable[[], None]] = []

    def subscribe(self, listener: Callable[[], None]) -> None:
        """Call ``listener()`` after every change."""
        self._listeners.append(listener)

    def find(self, path: str | Path) -> PlannedFile:
        wanted = Path(path)
        for planned in self.files:
            if planned.path == wanted:
                return planned
        raise KeyError(str(path))

    def add(self, paths: Iterable[str | Path]) -> list[Path]:
        """Add files not chosen yet; return those added."""
        known = {planned.path for planned in self.files}
        added = []
        for path in (Path(p).absolute() for p in paths):
            if path not in known:
                self.files.append(PlannedFile(path))
                known.add(path)
                added.append(path)
        if added:
            self._changed()
        return added

    def remove(self, path: str | Path) -> None:
        self.files.remove(self.find(path))
        self._changed()

    def discard(self, paths: Iterable[str | Path]) -> None:
        """Remove those of ``paths`` that are still chosen."""
        gone = {Path(p) for p in paths}
        self.files = [planned for planned in self.files if planned.path not in gone]
        self._changed()

    def set_kind(self, path: str | Path, kind: str | None) -> None:
        """Say what the file is (None: let the importer decide); it is read again."""
        planned = self.find(path)
        if planned.kind != kind:
            planned.kind = kind
            planned.forget()
            self._changed()

    def set_options(self, path: str | Path, options: ReadOptions) -> None:
        """Change how the file is read; it is read again."""
        planned = self.find(path)
        planned.options = options
        planned.forget()
        self._changed()

    def set_site_timezone(self, name: str | None) -> None:
        """The project's time zone; files that follow it are read again."""
        if name is not None:
            require_zone(name)
        if name == self.site_timezone:
            return
        self.site_timezone = name
        for planned in self.files:
            if planned.options.timezone is None:
                planned.forget()
        self._changed()

    def set_holidays(self, code: str | None) -> None:
        """The public holidays of the campus calendar; calendar files are read again."""
        if code == self.holidays:
            return
        self.holidays = code
        for planned in self.files:
            if planned.is_calendar:
                planned.forget()
        self._changed()

    def options_for(self, planned: PlannedFile) -> ReadOptions:
        """The settings a file is read with: its own, with the site's zone where it has none,
        and the plan's public holidays (stored with every file, as the command line does)."""
        zone = planned.options.timezone or self.site_timezone
        return replace(planned.options, timezone=zone, holidays=self.holidays)

    def pending(self) -> list[ReadJob]:
        """A job for every file not read with its current settings."""
        return [
            ReadJob(planned.path, planned.kind, self.options_for(planned))
            for planned in self.files
            if planned.state == "waiting"
        ]

    def record(self, outcomes: Sequence[ReadOutcome]) -> None:
        """Keep each outcome whose file is still chosen and still set up as it was read."""
        for outcome in outcomes:
            try:
                planned = self.find(outcome.job.path)
            except KeyError:
                continue
            current = ReadJob(planned.path, planned.kind, self.options_for(planned))
            if current == outcome.job and planned.state == "waiting":
                planned.result, planned.report = outcome.result, outcome.report
                planned.problem, planned.read_as = outcome.problem, outcome.read_as
        self._changed()

    def storing_problem(self, project_timezone: str | None = None) -> str | None:
        """Why the files cannot be stored yet (None when they can).

        ``project_timezone`` is the open project's zone when adding to it; a new project takes
        the plan's site zone.
        """
        if not self.files:
            return "Choose the files to import first."
        if self.site_timezone is None:
            return "Choose the site's time zone: a project keeps every reading on one site clock."
        if project_timezone is not None and project_timezone != self.site_timezone:
            return (
                f"The open project's site zone is {project_timezone}; set the site time zone "
                "to it so that the files are read on the same clock."
            )
        for planned in self.files:
            if planned.state == "problem":
                return (
                    f"'{planned.path.name}' could not be read: correct its reading settings "
                    "or remove it."
                )
        if any(planned.state == "waiting" for planned in self.files):
            return "Some files are still to be read."
        calendars = [p.path.name for p in self.files if isinstance(p.result, CalendarFile)]
        if len(calendars) > 1:
            return (
                f"{' and '.join(calendars)} are each a campus calendar; a project keeps one. "
                "Remove all but one, or say what the others are."
            )
        return None

    def bundles(self) -> list[ImportedFiles]:
        """One engine bundle per file, each with the settings it was read with."""
        bundles = []
        for planned in self.files:
            if planned.result is None:
                raise ValueError(f"{planned.path.name} has not been read")
            result = planned.result
            bundles.append(
                ImportedFiles(
                    meters=[result] if isinstance(result, MeterFile) else [],
                    bills=[result] if isinstance(result, BillFile) else [],
                    weather=[result] if isinstance(result, WeatherFile) else [],
                    options=self.options_for(planned),
                    calendar=result if isinstance(result, CalendarFile) else None,
                )
            )
        return bundles

    def _changed(self) -> None:
        for listener in self._listeners:
            listener()


def read_jobs(jobs: Sequence[ReadJob], progress: Progress | None = None) -> list[ReadOutcome]:
    """Read each file; a file that cannot be read gets its problem and the kind it was tried
    as, the others go on."""
    outcomes = []
    for done, job in enumerate(jobs):
        step(progress, done / len(jobs), f"reading {job.path.name}")
        try:
            result = read_file(job.path, job.options, job.kind)
        except InputError as error:
            problem = error.at_file(job.path).message
            outcomes.append(ReadOutcome(job, problem=problem, read_as=_tried_as(job)))
        except OSError as error:
            problem = (
                f"{job.path.name}: the file cannot be opened ({error.strerror or error}). "
                "Check that it exists and that you may read it."
            )
            outcomes.append(ReadOutcome(job, problem=problem))
        else:
            report = describe(result)
            outcomes.append(ReadOutcome(job, result, report, read_as=report["kind"]))
    step(progress, 1.0, "files read")
    return outcomes


def _tried_as(job: ReadJob) -> str | None:
    """The kind a file that failed was read as: the one it was said to be, else the one its
    contents suggested (None when not even a table could be found in it)."""
    if job.kind is not None:
        return job.kind
    try:
        return guess_kind(job.path, job.options)
    except (InputError, OSError):
        return None


def project_path(chosen: str | Path) -> Path:
    """The chosen file name with the project extension added when it lacks it."""
    path = Path(chosen)
    return (
        path if path.suffix == Project.EXTENSION else path.with_name(path.name + Project.EXTENSION)
    )


def build_project(
    path: Path,
    timezone: str,
    bundles: Sequence[ImportedFiles],
    progress: Progress | None = None,
) -> Project:
    """A new project at ``path`` holding every bundle, returned open.

    The project is built under a draft name beside ``path`` and renamed over it only when
    every file is stored, so a failure or a cancel leaves any earlier file at ``path`` as it was.
    """
    if path.suffix != Project.EXTENSION:
        raise ValueError(f"project files end in {Project.EXTENSION}")
    return assemble_project(
        path,
        lambda project: add_to_project(project, bundles, progress),
        timezone=timezone,
        overwrite=True,
    )


def add_to_project(
    project: Project, bundles: Sequence[ImportedFiles], progress: Progress | None = None
) -> Project:
    """Store every bundle in ``project`` in one save (all of them or none); return it."""
    with project.transaction():
        for done, bundle in enumerate(bundles):
            part = (
                progress.part(done / len(bundles), (done + 1) / len(bundles)) if progress else None
            )
            store_files(project, bundle, part)
    return project


def stored_summary(bundles: Sequence[ImportedFiles]) -> str:
    """What storing ``bundles`` adds, in words."""
    meters = sum(len(f.meters) for b in bundles for f in b.meters)
    bills = sum(len(b.bills) for b in bundles)
    weather = sum(len(b.weather) for b in bundles)
    periods = sum(len(b.calendar.calendar.periods) for b in bundles if b.calendar)
    parts = [f"{counted(meters, 'meter')}"]
    if bills:
        parts.append(f"{counted(bills, 'bill file')}")
    if weather:
        parts.append(f"{counted(weather, 'weather file')}")
    if any(b.calendar for b in bundles):
        parts.append(f"the campus calendar ({counted(periods, 'period')})")
    return ", ".join(parts)
