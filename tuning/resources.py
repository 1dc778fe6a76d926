"""Files shipped inside the package: the notebooks and the invented demo scenario.

They are package data (found with :mod:`importlib.resources`), so a wheel, an editable install
and a plain checkout all find them the same way, from any working folder.
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path

__all__ = ["notebook", "demo_file", "DEMO_FILES", "FLEET_REPORT", "SETUP_SHEETS", "NOTEBOOK_NAMES"]

#: The demo scenario's files (an invented fleet, site and weather), in ``tuning/demo/``.
DEMO_FILES = (
    "demo-fleet.yaml",
    "demo-event.yaml",
    "demo-event-metar.yaml",
    "demo-weather.csv",
    "demo-trail-event.yaml",
    "demo-trail-weather.csv",
    "demo-trail-route.gpx",
)
#: The parameterised notebooks the build runs, in ``tuning/notebooks/``: the fleet report and the
#: setup sheets (run once per shard of bikes).
FLEET_REPORT = "fleet-report.ipynb"
SETUP_SHEETS = "setup-sheets.ipynb"
NOTEBOOK_NAMES = (FLEET_REPORT, SETUP_SHEETS)


def _packaged(folder: str, name: str) -> Path:
    """Path of a file shipped in ``tuning/<folder>/`` (an installed package is a real folder)."""
    path = Path(str(resources.files("tuning").joinpath(folder, name)))
    if not path.is_file():  # pragma: no cover - a broken installation
        raise FileNotFoundError(f"carbfleet is installed without {folder}/{name}; reinstall it")
    return path


def notebook(name: str) -> Path:
    """Path of one of the build's notebooks (:data:`NOTEBOOK_NAMES`)."""
    return _packaged("notebooks", name)


def demo_file(name: str) -> Path:
    """Path of one of the demo scenario's files (see :data:`DEMO_FILES`)."""
    return _packaged("demo", name)
