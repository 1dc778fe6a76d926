"""Reports: tables, charts, HTML/PDF rendering and the papermill build. No physics here.

The report formats the plan document returned by ``tuning.plan.make_plan`` (format
``carbfleet-plan/3``) and computes nothing physical of its own. The warning codes, their
severities and meanings have one home, :mod:`tuning.plan.notices`; the report shows them.

Public API
----------
CAUTIONS
    The cautions printed on every sheet, in the fleet summary and quoted by the README.
load_plan(fleet_path, event_path, plan_path="") -> dict
render_setup_sheets(plan, out_dir, bikes=(), paper="a4", units="metric", language="en") -> SheetBatch
render_fleet_report(plan, out_dir, paper="a4", notebooks=(), units="metric", language="en") -> FleetReport
build(fleet_path, event_path, out_dir, paper="a4", quiet=False, workers=2, policy=None,
      units=None, language=None) -> BuildResult  (None: the event file's units/language, else metric/en)
build_from_plan(plan, out_dir, paper="a4", quiet=False, workers=2, ..., units="metric", language="en") -> BuildResult
"""

from __future__ import annotations

from tuning.display import N_

CAUTIONS = N_(
    "Estimates only: confirm by a plug reading or a wideband oxygen sensor before hard riding. "
    "Between two sizes, choose the richer: a lean engine can seize or hole a piston. "
    "Work on a cold engine, away from sparks and flames, with fuel caught and good ventilation. "
    "Follow the manufacturer's service manual, the event's rules and local fire and workshop codes, "
    "and leave safety-critical work to a qualified mechanic. "
    "Return to the baseline settings before riding at low altitude again."
)

from tuning.report.render import (  # noqa: E402
    FleetReport,
    SheetBatch,
    load_plan,
    render_fleet_report,
    render_setup_sheets,
)
from tuning.report.tables import turns as turns_text  # noqa: E402


def build(*args, **kwargs):
    """Build the whole output folder; see :func:`tuning.report.pipeline.build`."""
    from tuning.report.pipeline import build as _build

    return _build(*args, **kwargs)


def build_from_plan(*args, **kwargs):
    """Build the output folder from a plan document; see :func:`tuning.report.pipeline.build_from_plan`."""
    from tuning.report.pipeline import build_from_plan as _build_from_plan

    return _build_from_plan(*args, **kwargs)


__all__ = [
    "CAUTIONS",
    "FleetReport",
    "SheetBatch",
    "load_plan",
    "render_fleet_report",
    "render_setup_sheets",
    "build",
    "build_from_plan",
    "turns_text",
]
