"""`carbfleet plan` end to end on the invented demo scenario (tuning/demo/demo-*.yaml)."""

import csv
import json
from pathlib import Path

import jsonschema
import pytest

from tuning import plan
from tuning.cli import main

ROOT = Path(__file__).resolve().parents[1]
FLEET = ROOT / "tuning" / "demo" / "demo-fleet.yaml"
EVENT = ROOT / "tuning" / "demo" / "demo-event.yaml"
SCHEMA = json.loads((Path(plan.__file__).parents[1] / "schemas" / "recommendations.schema.json").read_text())

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
    assert pick[0] == "family,size,fitted_now,in_stock,needed,to_order"
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


def _renamed_demo(tmp_path, bike_ids, model, session, family, needle):
    """The demo fleet and event with user text renamed (ids, a model, a session, a family, a needle)."""
    import yaml

    fleet = yaml.safe_load(FLEET.read_text(encoding="utf-8"))
    event = yaml.safe_load(EVENT.read_text(encoding="utf-8"))
    for bike, new_id in zip(fleet["bikes"], bike_ids):
        bike["id"] = new_id
    old_model, new_model = model
    fleet["models"] = {new_model if k == old_model else k: m for k, m in fleet["models"].items()}
    for bike in fleet["bikes"]:
        bike["model"] = new_model if bike["model"] == old_model else bike["model"]
    old_family, new_family = family
    fleet["jet_families"] = {new_family if k == old_family else k: f for k, f in fleet["jet_families"].items()}
    for jet in [m["settings"][j] for m in fleet["models"].values() for j in ("main_jet", "pilot_jet")] + fleet["stock"]:
        jet["family"] = new_family if jet["family"] == old_family else jet["family"]
    old_needle, new_needle = needle
    fleet["needles"] = {new_needle if k == old_needle else k: n for k, n in fleet["needles"].items()}
    for m in fleet["models"].values():
        if m["settings"].get("needle", {}).get("name") == old_needle:
            m["settings"]["needle"]["name"] = new_needle
    event["sessions"][0]["name"] = session
    event["weather"] = str(EVENT.parent / event["weather"])
    paths = tmp_path / "fleet.yaml", tmp_path / "event.yaml"
    for path, doc in zip(paths, (fleet, event)):
        path.write_text(yaml.safe_dump(doc, sort_keys=False, allow_unicode=True), encoding="utf-8")
    return [str(p) for p in paths]


def test_csv_cells_of_user_text_are_not_formulas(tmp_path):
    # OWASP "CSV Injection": a cell beginning with = + - @ tab or CR is prefixed with ' so that a
    # spreadsheet shows it as text; numbers, negative ones included, stay numbers.
    ids = ['=HYPERLINK("x")', "@SUM(1)", "+T03", "-T04", "\tT05", "\rT07"]
    args = _renamed_demo(
        tmp_path,
        ids,
        model=("trail-450-4s", "-trail-450-4s"),
        session="=1+1",
        family=("round-main", "@round-main"),
        needle=("needle-f", "+needle-f"),
    )
    assert main(["plan", *args, "--out", str(tmp_path / "out")]) == 0
    with open(tmp_path / "out" / "recommendations.csv", encoding="utf-8", newline="") as handle:
        rows = list(csv.DictReader(handle))
    assert {r["bike"] for r in rows} >= {"'" + i for i in ids}
    assert "'-trail-450-4s" in {r["model"] for r in rows}
    assert "'=1+1" in {r["session"] for r in rows}
    assert "'@round-main" in {r["main_jet_family"] for r in rows}
    assert "'+needle-f" in {r["needle"] for r in rows}
    for row in rows:  # every cell that is not user text reads as a number, text or empty, never as a formula
        for name, cell in row.items():
            assert not cell.startswith(("=", "+", "@", "\t", "\r")), (name, cell)
            if cell.startswith("-"):
                float(cell)  # a negative number, as a spreadsheet reads it
    steps = [float(r["main_jet_steps"]) for r in rows]
    assert min(steps) < 0  # the demo site is high: leaner main jets, negative steps stay numbers
    with open(tmp_path / "out" / "pick-list.csv", encoding="utf-8", newline="") as handle:
        pick = list(csv.DictReader(handle))
    assert "'@round-main" in {p["family"] for p in pick}  # the demo's trail-250s need smaller main jets
    assert all(p["family"] in ("'@round-main", "hex-main", "pilot-a") for p in pick)


def test_control_characters_in_names_do_not_reach_the_terminal(tmp_path, capsys):
    # Names are the user's text: an escape sequence, a carriage return or a bell in one is shown
    # escaped by `carbfleet check` and `carbfleet plan` (as problem lines are), never sent raw.
    import yaml

    ids = ["\x1b[31mT01", "T0\r2", "T03\x07"]
    fleet_path, event_path = _renamed_demo(
        tmp_path,
        ids,
        model=("trail-450-4s", "trail\x1b]0;x\x07450"),
        session="Sat\rmorning",
        family=("round-main", "round\x1b[2Jmain"),
        needle=("needle-f", "needle\x07f"),
    )
    for path, key, name in ((fleet_path, "fleet", "Fleet\x1b[1m"), (event_path, "event", "Event\r\x07")):
        doc = yaml.safe_load(Path(path).read_text(encoding="utf-8"))
        doc[key] = name
        if key == "event":
            doc["site"]["name"] = "Site\x1b[2J"
        Path(path).write_text(yaml.safe_dump(doc, sort_keys=False, allow_unicode=True), encoding="utf-8")
    assert main(["check", fleet_path, event_path]) == 0
    checked = capsys.readouterr()
    assert main(["plan", fleet_path, event_path, "--out", str(tmp_path / "out")]) == 0
    planned = capsys.readouterr()
    for text in (checked.out, checked.err, planned.out, planned.err):
        assert not {"\x1b", "\r", "\x07"} & set(text)
    assert r"\x1b[31mT01" in planned.out and r"Sat\rmorning" in planned.out  # shown, escaped
    assert r"Fleet\x1b[1m" in checked.out and r"trail\x1b]0;x\x07450" in checked.out
    assert r"Event\r\x07" in planned.out.splitlines()[0]
