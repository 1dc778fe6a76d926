"""Never crash on valid input; one located line for bad input (behaviour tests of the CLI).

Each test edits the invented demo files in a temporary folder and runs ``tuning.cli.main``
as a user would. What is checked is what the user sees: the exit code, the one line on
stderr (``file:line: field: problem``, the line found by searching the edited text), no
traceback, and no output folder written for bad input; for valid input, exit 0 and a plan
document without NaN or infinity.
"""

from __future__ import annotations

import json
import os
import shutil
import threading
from pathlib import Path

import pytest

from tuning.cli import main

DEMO = Path(__file__).resolve().parent.parent / "fleet_configs"
FLEET, EVENT, WEATHER, METAR = "demo-fleet.yaml", "demo-event.yaml", "demo-weather.csv", "demo-event-metar.yaml"

pytestmark = pytest.mark.filterwarnings("ignore::UserWarning")


@pytest.fixture()
def demo(tmp_path):
    for f in DEMO.iterdir():
        if f.is_file():
            shutil.copy(f, tmp_path / f.name)
    return tmp_path


def edit(path: Path, old: str, new: str, count: int = 1) -> str:
    text = path.read_text(encoding="utf-8")
    assert old in text, f"test set-up: {old!r} not in {path.name}"
    text = text.replace(old, new, count)
    path.write_text(text, encoding="utf-8")
    return text


def line_of(text: str, snippet: str) -> int:
    return text[: text.index(snippet)].count("\n") + 1


def run(capsys, *argv):
    """(exit code, stdout, stderr lines) of ``carbfleet *argv``."""
    code = main([str(a) for a in argv])
    captured = capsys.readouterr()
    return code, captured.out, captured.err.splitlines()


def user_error(capsys, *argv) -> str:
    """Run a command that must fail on bad input: exit 2, one stderr line, no traceback."""
    code, out, err = run(capsys, *argv)
    assert code == 2, (out, err)
    assert len(err) == 1, err
    assert "Traceback" not in err[0] and "Error:" not in err[0]
    return err[0].removeprefix(f"carbfleet {argv[0]}: ")  # main() names the command on a single line


def check_fails(capsys, demo, *names) -> str:
    return user_error(capsys, "check", *(demo / n for n in names))


def plan_fails(capsys, demo, fleet=FLEET, event=EVENT) -> str:
    out = demo / "out"
    line = user_error(capsys, "plan", demo / fleet, demo / event, "--out", out)
    assert not out.exists()  # nothing written
    return line


def plan_works(capsys, demo, fleet=FLEET, event=EVENT) -> dict:
    out = demo / "out"
    code, stdout, err = run(capsys, "plan", demo / fleet, demo / event, "--out", out)
    assert code == 0, err
    text = (out / "recommendations.json").read_text(encoding="utf-8")
    return json.loads(text, parse_constant=lambda c: pytest.fail(f"{c} in recommendations.json"))


# --- files: only regular ones, bounded reads, bounded nesting ---------------------------------
def _guarded(target, seconds=20.0):
    """Run ``target`` in a thread; fail (instead of hanging the suite) if it does not return."""
    result = {}
    thread = threading.Thread(target=lambda: result.setdefault("value", target()), daemon=True)
    thread.start()
    thread.join(seconds)
    if thread.is_alive():
        pytest.fail("did not return: the reader blocked")
    return result.get("value")


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="named pipes need POSIX")
def test_named_pipe_as_weather_is_refused_without_opening_it(demo, capsys):
    os.mkfifo(demo / "pipe.csv")
    text = edit(demo / EVENT, "weather: demo-weather.csv", "weather: pipe.csv")
    line = _guarded(lambda: check_fails(capsys, demo, FLEET, EVENT))
    assert line.startswith(f"{demo / EVENT}:{line_of(text, 'weather: pipe.csv')}: weather: ")
    assert "named pipe, not a regular file" in line


@pytest.mark.skipif(not os.path.exists("/dev/zero"), reason="needs /dev/zero")
@pytest.mark.parametrize("which", ["fleet", "event"])
def test_device_as_input_file_is_refused(demo, capsys, which):
    argv = ["/dev/zero", demo / EVENT] if which == "fleet" else [demo / FLEET, "/dev/zero"]
    line = _guarded(lambda: user_error(capsys, "check", *argv))
    assert line == "/dev/zero: is a device, not a regular file; save the data to a file and give its path"


def test_size_limit_counts_the_bytes_read(demo, capsys, monkeypatch):
    from tuning.config import source

    monkeypatch.setattr(source, "MAX_FILE_BYTES", 1000)
    line = check_fails(capsys, demo, FLEET)
    assert line == f"{demo / FLEET}: file is larger than 1,000 bytes (the limit); is it the right file?"


@pytest.mark.parametrize("depth", [41, 5000])
def test_deep_nesting_is_one_line(demo, capsys, depth):
    (demo / "deep.yaml").write_text("fleet: " + "[" * depth + "]" * depth + "\n")
    line = check_fails(capsys, demo, "deep.yaml")
    assert line == f"{demo / 'deep.yaml'}:1: lists and mappings nested more than 40 deep (a fleet or event file needs about 5); is it the right file?"


# --- 5. a missing weather table is said at the event file's line that names it ----------------
def test_missing_weather_file_is_located_in_the_event_file(demo, capsys):
    text = edit(demo / EVENT, "weather: demo-weather.csv", "weather: forecast.csv")
    line = plan_fails(capsys, demo)
    where = f"{demo / EVENT}:{line_of(text, 'weather: forecast.csv')}"
    assert line == f"{where}: weather: file not found (looked for {(demo / 'forecast.csv').resolve()})"


# --- 1. relative humidity 0 % is valid: the dew point is undefined (null), never -inf ----------
def test_dry_fleet_reference_plans(demo, capsys):
    edit(demo / FLEET, "relative_humidity: 50 %", "relative_humidity: 0 %")
    assert run(capsys, "check", demo / FLEET, demo / EVENT)[0] == 0
    doc = plan_works(capsys, demo)
    assert doc["reference"]["dew_point_C"] is None and doc["reference"]["relative_humidity_pct"] == 0.0


def test_dry_bike_reference_plans(demo, capsys):
    edit(demo / FLEET, "qnh: 1016 hPa, dew_point: 6 degC}", "qnh: 1016 hPa, relative_humidity: 0}")
    doc = plan_works(capsys, demo)
    own = [e["reference"] for e in doc["entries"] if e["bike"] == "E03"]
    assert own and all(r["dew_point_C"] is None for r in own)


def test_dry_weather_row_plans(demo, capsys):
    text = (demo / WEATHER).read_text()
    row = next(line for line in text.splitlines() if line.startswith("2026-06-13 10:00,"))
    edit(demo / WEATHER, row, row.rsplit(",", 1)[0] + ",0")
    doc = plan_works(capsys, demo)
    dry = [w for w in doc["weather"] if w["time"].startswith("2026-06-13T10:00")]
    assert dry and dry[0]["dew_point_C"] is None and dry[0]["relative_humidity_pct"] == 0.0
