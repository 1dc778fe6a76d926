"""REGRESSION CHECKS, not validation: byte snapshots of the plan files on the invented scenarios.

They show what a change to the planning does to its outputs. When a change is meant, rewrite
them with ``CARBFLEET_UPDATE_SNAPSHOTS=1 .venv/bin/python -m pytest tests/test_plan_snapshots.py``
and read the diff before committing. The version field is left out (it changes by release).
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import pytest
import scenarios

from tuning.cli import main

SNAPSHOTS = Path(__file__).resolve().parent / "snapshots"


@pytest.mark.parametrize("scenario", ["uphill", "downhill"])
def test_plan_files_match_the_snapshot(scenario, tmp_path, capsys):
    fleet, event = getattr(scenarios, scenario)(tmp_path / "in")
    assert main(["plan", str(fleet), str(event), "--out", str(tmp_path / "out")]) == 0
    capsys.readouterr()
    for name in ("recommendations.json", "recommendations.csv", "pick-list.csv"):
        text = (tmp_path / "out" / name).read_text(encoding="utf-8")
        if name.endswith(".json"):
            doc = json.loads(text)
            doc.pop("carbfleet_version")
            text = json.dumps(doc, indent=1, ensure_ascii=False) + "\n"
        stored = SNAPSHOTS / f"{scenario}-{name}"
        if os.environ.get("CARBFLEET_UPDATE_SNAPSHOTS"):
            stored.write_text(text, encoding="utf-8")
        assert stored.read_text(encoding="utf-8") == text, f"{stored.name} changed (a regression check)"
