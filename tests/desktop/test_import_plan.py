"""The Qt-free import plan: settings per file, stale reads ignored, all-or-nothing storing."""

from __future__ import annotations

import numpy as np
import pytest
from desktop_support import SAMPLE, SITE_ZONE, write_hourly_meter

from desktop.import_plan import ImportPlan, build_project, project_path, read_jobs
from engine.errors import InputError
from engine.progress import Cancelled, Progress
from engine.project import Project
from engine.reading import ReadOptions


@pytest.fixture
def meter_file(tmp_path):
    path = tmp_path / "hall.csv"
    write_hourly_meter(path, "Hall (kWh)", np.full(48, 2.5), "2025-03-03")
    return path


def test_each_file_follows_the_site_zone_unless_it_has_its_own(meter_file):
    plan = ImportPlan()
    plan.add([meter_file, meter_file])  # the second is the same file
    assert len(plan.files) == 1
    plan.set_site_timezone(SITE_ZONE)
    (planned,) = plan.files
    assert plan.options_for(planned).timezone == SITE_ZONE
    plan.set_options(meter_file, ReadOptions(timezone="UTC"))
    assert plan.options_for(planned).timezone == "UTC"
    with pytest.raises(InputError, match="Mars/Olympus"):
        plan.set_site_timezone("Mars/Olympus")


def test_a_read_made_with_old_settings_is_not_kept(meter_file):
    plan = ImportPlan()
    plan.set_site_timezone(SITE_ZONE)
    plan.add([meter_file])
    outcomes = read_jobs(plan.pending())
    plan.set_kind(meter_file, "weather")  # changed while the read was running
    plan.record(outcomes)
    assert plan.files[0].state == "waiting"
    plan.record(read_jobs(plan.pending()))
    assert plan.files[0].state == "problem"  # no temperature column in a meter file
    assert "hall.csv" in plan.files[0].problem


def test_a_cancelled_build_leaves_the_earlier_project_as_it_was(meter_file, tmp_path):
    target = project_path(tmp_path / "campus")
    assert target.name == f"campus{Project.EXTENSION}"
    with Project.create(target, timezone="Europe/Berlin") as earlier:
        earlier.set_setting("marker", "earlier project")
    plan = ImportPlan()
    plan.set_site_timezone(SITE_ZONE)
    plan.add([meter_file])
    plan.record(read_jobs(plan.pending()))
    progress = Progress()
    progress.cancel()
    with pytest.raises(Cancelled):
        build_project(target, SITE_ZONE, plan.bundles(), progress)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["campus.loadledger", "hall.csv"]
    with Project.open(target) as project:
        assert project.get_setting("marker") == "earlier project"
        assert project.meter_names() == []
    with build_project(target, SITE_ZONE, plan.bundles()) as project:
        assert project.meter_names() == ["Hall"] and project.timezone == SITE_ZONE
        assert project.load_meter("Hall").values.sum() == pytest.approx(48 * 2.5)


def test_choosing_the_holidays_reads_only_the_calendars_again(meter_file, tmp_path):
    calendar = SAMPLE / "campus-calendar.csv"
    plan = ImportPlan()
    plan.set_site_timezone(SITE_ZONE)
    plan.add([meter_file, calendar])
    plan.record(read_jobs(plan.pending()))
    assert [f.read_as for f in plan.files] == ["meters", "calendar"]
    assert plan.files[1].report["public_holidays"] == []
    plan.set_holidays("GB-SCT")
    assert [f.state for f in plan.files] == ["read", "waiting"]
    plan.record(read_jobs(plan.pending()))
    report = plan.files[1].report
    assert (report["country"], report["subdivision"]) == ("GB", "SCT")
    # From memory: Scotland keeps St Andrew's Day (30 November, or the Monday after).
    assert any("Andrew" in day["name"] for day in report["public_holidays"])
    assert plan.storing_problem() is None
    (bundle,) = [b for b in plan.bundles() if b.calendar is not None]
    assert bundle.options.holidays == "GB-SCT"
    # A project keeps one campus calendar: a second one is named before anything is stored.
    second = tmp_path / "calendar-copy.csv"
    second.write_bytes(calendar.read_bytes())
    plan.add([second])
    plan.record(read_jobs(plan.pending()))
    problem = plan.storing_problem()
    assert "campus-calendar.csv and calendar-copy.csv" in problem
