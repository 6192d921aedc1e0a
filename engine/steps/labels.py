"""Read and keep meter labels and the temperature unit in a project.

What a label is and how it is checked: :mod:`engine.meter_labels`.
"""

from __future__ import annotations

from dataclasses import replace

from engine.errors import InputError
from engine.meter_labels import (
    LABELS_SETTING,
    TEMPERATURE_SETTING,
    TEMPERATURE_UNITS,
    Labels,
    MeterLabel,
    checked_display_name,
    checked_read_unit,
    checked_temperature_unit,
    checked_utility,
    default_read_unit,
)
from engine.project import Project


def meter_labels(project: Project) -> dict[str, MeterLabel]:
    """Every meter's label by raw name, in the order the meters were added."""
    stored = project.get_setting(LABELS_SETTING, {}) or {}
    labels = {}
    for name, utility, unit_found in project.meter_descriptions():
        kept = stored.get(name) or {}
        labels[name] = MeterLabel(
            name,
            utility,
            kept.get("read_unit") or default_read_unit(unit_found),
            kept.get("display_name", ""),
        )
    return labels


def meter_label(project: Project, name: str) -> MeterLabel:
    """The label of meter ``name``; an :class:`InputError` naming the meters when unknown."""
    labels = meter_labels(project)
    if name not in labels:
        raise InputError(
            f"the project has no meter '{name}'.",
            hint=f"Use one of: {', '.join(labels) or 'none yet: import meters first'}.",
            file=project.path,
        )
    return labels[name]


def relabelled(
    project: Project,
    name: str,
    *,
    display_name: str | None = None,
    utility: str | None = None,
    read_unit: str | None = None,
) -> MeterLabel:
    """Meter ``name``'s label with the given parts changed (None keeps a part; an empty
    display name goes back to the raw name), checked but not stored."""
    label = meter_label(project, name)
    if display_name is not None:
        label = replace(label, display_name=checked_display_name(display_name, label.name))
    if utility is not None:
        label = replace(label, utility=checked_utility(utility))
    if read_unit is not None:
        label = replace(label, read_unit=checked_read_unit(read_unit))
    _require_unique(label, meter_labels(project), project)
    return label


def store_label(project: Project, label: MeterLabel) -> None:
    """Keep ``label`` in the project in one save (also to put an earlier label back)."""
    _require_unique(label, meter_labels(project), project)
    stored = dict(project.get_setting(LABELS_SETTING, {}) or {})
    stored[label.name] = {"display_name": label.display_name, "read_unit": label.read_unit}
    with project.transaction():
        project.set_meter_utility(label.name, label.utility)
        project.set_setting(LABELS_SETTING, stored)


def _require_unique(label: MeterLabel, labels: Labels, project: Project) -> None:
    """No two meters may be shown under one name, nor one under another meter's raw name."""
    wanted = label.shown.casefold()
    for other in labels.values():
        if other.name == label.name:
            continue
        if wanted in (other.shown.casefold(), other.name.casefold()):
            raise InputError(
                f"meter '{other.name}' is already shown as '{other.shown}'.",
                hint=f"Choose another display name for '{label.name}'.",
                file=project.path,
            )


def temperature_unit(project: Project) -> str:
    """The unit temperatures are shown in: "°F" or "°C" (the default)."""
    stored = project.get_setting(TEMPERATURE_SETTING)
    return stored if stored in TEMPERATURE_UNITS else "°C"


def set_temperature_unit(project: Project, text: str) -> None:
    """Show the project's temperatures in °F or °C from now on (the engine keeps °C)."""
    project.set_setting(TEMPERATURE_SETTING, checked_temperature_unit(text))
