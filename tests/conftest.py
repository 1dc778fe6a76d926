"""Fixtures shared by several test modules."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

DEMO = Path(__file__).resolve().parent.parent / "tuning" / "demo"


@pytest.fixture()
def demo(tmp_path):
    """A copy of the invented demo scenario (tuning/demo/) in a fresh folder; the folder."""
    for f in DEMO.iterdir():
        if f.is_file():
            shutil.copy(f, tmp_path / f.name)
    return tmp_path


@pytest.fixture(scope="session")
def demo_plan(tmp_path_factory):
    """The plan document of the shipped demo scenario (planned once from a copy in a fresh folder;
    read it, do not change it: every module that asks shares it)."""
    import warnings

    import scenarios

    from tuning.config import load_event, load_fleet
    from tuning.plan import make_plan

    fleet_path, event_path = scenarios.uphill(tmp_path_factory.mktemp("demo-plan"))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the air outside a formula's range: warned by the plan, not our subject
        fleet = load_fleet(fleet_path)
        return make_plan(fleet, load_event(event_path, fleet))
