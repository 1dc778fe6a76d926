"""The ``carbfleet`` command as a process: version, example files, signals, closed pipes.

Behaviour checks of what a user sees (exit code, one line, files kept) on the invented demo
scenario (tuning/demo/) and the invented report fixture plan.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
import report_fixtures

from tuning import __version__
from tuning.cli import main
from tuning.report import pipeline
from tuning.resources import DEMO_FILES, demo_file

FLEET, EVENT = demo_file("demo-fleet.yaml"), demo_file("demo-event.yaml")
CARBFLEET = [sys.executable, "-m", "tuning.cli"]


def test_version_flag(capsys):
    with pytest.raises(SystemExit) as stop:
        main(["--version"])
    assert stop.value.code == 0 and capsys.readouterr().out.strip() == f"carbfleet {__version__}"


def test_version_is_recorded_in_the_plan(tmp_path):
    assert main(["plan", str(FLEET), str(EVENT), "--out", str(tmp_path)]) == 0
    assert json.loads((tmp_path / "recommendations.json").read_text())["carbfleet_version"] == __version__


def test_example_writes_the_demo_and_its_schemas_and_never_overwrites(tmp_path, capsys):
    target = tmp_path / "mine"
    assert main(["example", str(target)]) == 0
    assert sorted(p.name for p in target.iterdir()) == sorted([*DEMO_FILES, "fleet.schema.json", "event.schema.json"])
    assert main(["check", str(target / "demo-fleet.yaml"), str(target / "demo-event.yaml")]) == 0
    (target / "demo-fleet.yaml").write_text("fleet: edited by the user\n")
    capsys.readouterr()
    assert main(["example", str(target)]) == 2
    assert "never overwrites" in capsys.readouterr().err
    assert (target / "demo-fleet.yaml").read_text() == "fleet: edited by the user\n"


def test_closed_pipe_prints_no_traceback(tmp_path):
    # `carbfleet check ... | head -0`: the reader is gone before carbfleet writes
    process = subprocess.Popen(
        [*CARBFLEET, "check", str(FLEET), str(EVENT)], stdout=subprocess.PIPE, stderr=subprocess.PIPE
    )
    process.stdout.close()
    err = process.stderr.read().decode()
    process.wait(timeout=120)
    assert "Traceback" not in err and "BrokenPipeError" not in err
    assert process.returncode in (0, 1)


def _write_plan(tmp_path: Path) -> Path:
    path = tmp_path / "plan.json"
    path.write_text(json.dumps(report_fixtures.make_plan(n_bikes=8, n_sessions=4)))
    return path


_BUILD_FROM_PLAN = """
import json, sys
from tuning.cli import main, _stop_signals_interrupt
from tuning.report import pipeline
from tuning.errors import CarbfleetError
plan = json.load(open(sys.argv[1]))
try:
    with _stop_signals_interrupt():
        pipeline.build_from_plan(plan, sys.argv[2], quiet=True, workers=2)
except KeyboardInterrupt:
    sys.exit(130)
"""


@pytest.mark.parametrize("signum", [signal.SIGTERM, signal.SIGHUP], ids=["SIGTERM", "SIGHUP"])
def test_stop_signal_mid_build_cleans_up_and_keeps_the_old_output(signum, tmp_path):
    plan = _write_plan(tmp_path)
    sockets = tmp_path / "tmp"
    sockets.mkdir()
    out = tmp_path / "out"
    runtime = tmp_path / "jupyter-runtime"  # where kernel connection files go by default
    env = {**os.environ, "TMPDIR": str(sockets), "JUPYTER_RUNTIME_DIR": str(runtime)}
    first = subprocess.run([sys.executable, "-c", _BUILD_FROM_PLAN, str(plan), str(out)], env=env, timeout=300)
    assert first.returncode == 0
    before = {p: p.read_bytes() for p in out.rglob("*") if p.is_file()}
    process = subprocess.Popen([sys.executable, "-c", _BUILD_FROM_PLAN, str(plan), str(out)], env=env)
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline:  # wait until the kernels are running and writing sheets
        building = list(tmp_path.glob(".out.building-*"))
        if building and list((building[0] / "sheets").glob("*.pdf")):
            break
        time.sleep(0.05)
    else:
        pytest.fail("the build never started writing sheets")
    process.send_signal(signum)
    assert process.wait(timeout=60) == 130
    time.sleep(0.5)  # let killed kernels go
    assert not list(tmp_path.glob(".out.*")), "temporary build folder left behind"
    assert not list(sockets.iterdir()), "kernel sockets or connection files (with keys) left behind"
    assert not runtime.exists() or not list(runtime.glob("kernel-*.json"))
    assert {p: p.read_bytes() for p in out.rglob("*") if p.is_file()} == before


def test_long_tmpdir_and_long_out_path_still_build(tmp_path, monkeypatch):
    import tempfile

    long_tmp = tmp_path / ("t" * 100)
    long_tmp.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(long_tmp))  # TMPDIR longer than a socket path may be
    out = tmp_path / ("o" * 120) / ("p" * 120) / "out"
    result = pipeline.build_from_plan(report_fixtures.make_plan(n_bikes=1, n_sessions=1), out, quiet=True, workers=1)
    assert result.sheets == 1 and (out / "print-pack.pdf").exists()
    assert not list(long_tmp.iterdir())


def test_workers_have_an_upper_bound(tmp_path, capsys):
    code = main(["build", str(FLEET), str(EVENT), "--out", str(tmp_path / "o"), "--workers", "9"])
    err = capsys.readouterr().err
    assert code == 2 and "from 1 to 8" in err and not (tmp_path / "o").exists()


def test_build_never_falls_back_to_other_files(tmp_path, monkeypatch, capsys):
    # a relative path that does not exist from the working folder is an error, even where a
    # file of that name ships with carbfleet
    monkeypatch.chdir(tmp_path)
    code = main(["build", "demo-fleet.yaml", "demo-event.yaml", "--out", "out"])
    err = capsys.readouterr().err
    assert code == 2 and "demo-fleet.yaml" in err and "not found" in err
    assert not (tmp_path / "out").exists()
