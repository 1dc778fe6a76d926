"""`carbfleet plan` end to end on the invented demo scenario (tuning/demo/demo-*.yaml)."""

import json
from pathlib import Path

import jsonschema
import pytest

from tuning import plan
from tuning.cli import main

ROOT = Path(__file__).resolve().parents[1]
FLEET = ROOT / "tuning" / "demo" / "demo-fleet.yaml"
EVENT = ROOT / "tuning" / "demo" / "demo-event.yaml"
SCHEMA = json.loads((Path(plan.__file__).parent / "schemas" / "recommendations.schema.json").read_text())

pytestmark = [
    pytest.mark.filterwarnings("ignore::UserWarning"),
    pytest.mark.skipif(not (FLEET.exists() and EVENT.exists()), reason="demo files not present"),
]


def test_plan_command_writes_the_three_files(tmp_path, capsys):
    assert main(["plan", str(FLEET), str(EVENT), "--out", str(tmp_path)]) == 0
    out = capsys.readouterr().out
    assert "warnings" in out and "wrote" in out
    doc = json.loads((tmp_path / "recommendations.json").read_text(encoding="utf-8"))
    jsonschema.validate(doc, SCHEMA, format_checker=jsonschema.FormatChecker())
    sessions = len(doc["sessions"])
    assert len(doc["entries"]) % sessions == 0
    csv_rows = (tmp_path / "recommendations.csv").read_text(encoding="utf-8").splitlines()
    assert len(csv_rows) == 1 + len(doc["entries"])
    pick = (tmp_path / "pick-list.csv").read_text(encoding="utf-8").splitlines()
    assert pick[0] == "family,size,needed,in_stock,short"
    assert len(pick) == 1 + len(doc["pick_list"])


def test_regression_plan_command_is_byte_identical_twice(tmp_path):
    # regression/determinism check (not validation)
    for run in ("a", "b"):
        assert main(["plan", str(FLEET), str(EVENT), "--out", str(tmp_path / run)]) == 0
    for name in ("recommendations.json", "recommendations.csv", "pick-list.csv"):
        assert (tmp_path / "a" / name).read_bytes() == (tmp_path / "b" / name).read_bytes()


def test_missing_fleet_file_is_a_user_error(tmp_path, capsys):
    code = main(["plan", str(tmp_path / "nope.yaml"), str(EVENT), "--out", str(tmp_path / "out")])
    assert code == 2
    assert "Traceback" not in capsys.readouterr().err
    assert not (tmp_path / "out").exists()
