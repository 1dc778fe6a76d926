"""Output folders and files: nothing the user wrote is replaced, plan files as one set, umask.

These are behaviour checks of what a user sees (exit code, one line, files kept), on invented
folders and files. The demo scenario (tuning/demo/, invented) is the input where one is needed.
"""

from __future__ import annotations

import errno
import json
import os
import stat
from pathlib import Path

import pytest

from tuning import output
from tuning.cli import main
from tuning.errors import BuildError, UserError
from tuning.resources import demo_file

FLEET, EVENT = demo_file("demo-fleet.yaml"), demo_file("demo-event.yaml")


def tree(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


@pytest.fixture()
def inputs(tmp_path):
    """A copy of the demo scenario in a folder of its own, with a file of the user's beside it."""
    folder = tmp_path / "work"
    folder.mkdir()
    for name in ("demo-fleet.yaml", "demo-event.yaml", "demo-weather.csv"):
        (folder / name).write_bytes(demo_file(name).read_bytes())
    (folder / "notes.txt").write_text("my own notes\n")
    return folder


# --- the places a build must never replace -------------------------------------------------
@pytest.mark.parametrize("out", ["", "  "], ids=["empty", "blank"])
def test_empty_out_is_refused(out, inputs, capsys):
    before = tree(inputs)
    code = main(["build", str(inputs / "demo-fleet.yaml"), str(inputs / "demo-event.yaml"), "--out", out])
    err = capsys.readouterr().err
    assert code == 2 and "--out: the path is empty" in err and len(err.strip().splitlines()) == 1
    assert tree(inputs) == before


@pytest.mark.parametrize("where", [".", "..", "work", "work/..", "~", "/"])
def test_dangerous_out_folders_are_refused_and_kept(where, inputs, monkeypatch, capsys):
    monkeypatch.chdir(inputs.parent)
    monkeypatch.setenv("HOME", str(inputs.parent / "home"))
    (inputs.parent / "home").mkdir()
    (inputs.parent / "home" / "letter.txt").write_text("keep me")
    before, home_before = tree(inputs.parent), (inputs.parent / "home" / "letter.txt").read_text()
    if where == "~":
        monkeypatch.chdir(inputs)  # the home folder is not the current folder's parent here
        before = tree(inputs.parent)
    code = main(
        [
            "build",
            "work/demo-fleet.yaml" if where != "~" else "demo-fleet.yaml",
            "work/demo-event.yaml" if where != "~" else "demo-event.yaml",
            "--out",
            where,
        ]
    )
    err = capsys.readouterr().err.strip()
    assert code == 2, err
    assert len(err.splitlines()) == 1 and err.startswith("carbfleet build: --out:")
    assert tree(inputs.parent) == before and (inputs.parent / "home" / "letter.txt").read_text() == home_before


def test_folder_of_an_input_file_is_refused(inputs, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    before = tree(inputs)
    code = main(["build", str(inputs / "demo-fleet.yaml"), str(inputs / "demo-event.yaml"), "--out", str(inputs)])
    err = capsys.readouterr().err
    assert code == 2 and "holds the input file" in err
    assert tree(inputs) == before


def test_folder_holding_only_the_weather_table_is_refused(inputs, tmp_path, monkeypatch, capsys):
    # the event names its weather table in another folder: that folder is an input's folder too
    (tmp_path / "forecast").mkdir()
    (inputs / "demo-weather.csv").rename(tmp_path / "forecast" / "demo-weather.csv")
    event = inputs / "demo-event.yaml"
    event.write_text(event.read_text().replace("weather: demo-weather.csv", "weather: ../forecast/demo-weather.csv"))
    monkeypatch.chdir(tmp_path)
    code = main(["build", str(inputs / "demo-fleet.yaml"), str(event), "--out", str(tmp_path / "forecast")])
    assert code == 2 and "holds the input file" in capsys.readouterr().err
    assert (tmp_path / "forecast" / "demo-weather.csv").exists()


def test_non_empty_folder_without_manifest_is_refused(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "photo.jpg").write_bytes(b"\xff\xd8")
    with pytest.raises(UserError, match="did not write .*photo.jpg"):
        output.check_replaceable(out)
    assert (out / "photo.jpg").read_bytes() == b"\xff\xd8"


def test_a_file_added_to_an_earlier_output_is_refused(tmp_path):
    out = tmp_path / "out"
    (out / "sheets").mkdir(parents=True)
    (out / "sheets" / "T1.pdf").write_bytes(b"%PDF")
    output.write_manifest(out, "Invented event")
    output.check_replaceable(out)  # only what a build wrote: may be replaced
    (out / "sheets" / "my-scan.png").write_bytes(b"png")
    with pytest.raises(UserError, match="sheets/my-scan.png"):
        output.check_replaceable(out)


def test_forged_or_broken_manifest_protects_like_none(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "keep.txt").write_text("mine")
    for text in ("{not json", json.dumps({"format": "other/1", "files": ["keep.txt"]}), "[]"):
        (out / output.MANIFEST).write_text(text)
        with pytest.raises(UserError):
            output.check_replaceable(out)


def test_out_that_is_a_file_or_a_link_is_refused(tmp_path):
    (tmp_path / "f").write_text("x")
    with pytest.raises(UserError, match="is a file"):
        output.check_replaceable(tmp_path / "f")
    (tmp_path / "elsewhere").mkdir()
    (tmp_path / "link").symlink_to(tmp_path / "elsewhere")
    with pytest.raises(UserError, match="is a link"):
        output.check_replaceable(tmp_path / "link")


def test_empty_and_missing_folders_may_be_used(tmp_path):
    (tmp_path / "empty").mkdir()
    output.check_replaceable(tmp_path / "empty")
    output.check_replaceable(tmp_path / "missing")


def test_manifest_lists_every_file_and_the_version(tmp_path):
    from tuning import __version__

    (tmp_path / "a" / "b").mkdir(parents=True)
    (tmp_path / "a" / "b" / "c.txt").write_text("1")
    (tmp_path / "d.csv").write_text("2")
    doc = json.loads(output.write_manifest(tmp_path, "E").read_text())
    assert doc == {
        "format": output.MANIFEST_FORMAT,
        "carbfleet_version": __version__,
        "event": "E",
        "files": ["a/b/c.txt", "d.csv"],
    }


# --- carbfleet plan --out: one set, only its own files ---------------------------------------
def plan_files(folder: Path) -> dict[str, bytes]:
    return {n: (folder / n).read_bytes() for n in ("recommendations.json", "recommendations.csv", "pick-list.csv")}


def test_plan_files_replace_only_carbfleet_files(tmp_path, capsys):
    out = tmp_path / "plan"
    assert main(["plan", str(FLEET), str(EVENT), "--out", str(out)]) == 0
    assert main(["plan", str(FLEET), str(EVENT), "--out", str(out)]) == 0  # its own files: replaced
    (out / "pick-list.csv").write_text("my,own,list\n")
    before = plan_files(out)
    capsys.readouterr()
    assert main(["plan", str(FLEET), str(EVENT), "--out", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "pick-list.csv exists and was not written by carbfleet" in err
    assert plan_files(out) == before  # nothing written, not even the other two


def test_plan_files_all_old_when_the_disk_fills(tmp_path, monkeypatch, capsys):
    out = tmp_path / "plan"
    assert main(["plan", str(FLEET), str(EVENT), "--out", str(out)]) == 0
    before = plan_files(out)
    real_fsync, calls = os.fsync, []

    def full_disk(fd):
        calls.append(fd)
        if len(calls) == 3:  # the last of the three files does not fit
            raise OSError(errno.ENOSPC, "No space left on device")
        real_fsync(fd)

    monkeypatch.setattr(os, "fsync", full_disk)
    capsys.readouterr()
    code = main(["plan", str(FLEET), str(EVENT.parent / "demo-event-metar.yaml"), "--out", str(out)])
    err = capsys.readouterr().err.strip()
    assert code == 1 and "no space left" in err and len(err.splitlines()) == 1
    assert plan_files(out) == before
    assert sorted(p.name for p in out.iterdir()) == sorted(before)  # no temporary file left


@pytest.mark.parametrize("kind", ["file", "under-file", "sysfs"])
def test_plan_out_that_cannot_be_a_folder_is_one_line(kind, tmp_path, capsys):
    (tmp_path / "f").write_text("x")
    out = {"file": tmp_path / "f", "under-file": tmp_path / "f" / "plan", "sysfs": Path("/sys/carbfleet-test")}[kind]
    code = main(["plan", str(FLEET), str(EVENT), "--out", str(out)])
    err = capsys.readouterr().err.strip()
    assert code == 2 and len(err.splitlines()) == 1 and "--out" in err and "Traceback" not in err
    assert (tmp_path / "f").read_text() == "x"


def test_plan_out_read_only_is_one_line(tmp_path, monkeypatch, capsys):
    # running as root ignores permission bits, so the read-only file system is simulated
    import tempfile

    def read_only(*args, **kwargs):
        raise OSError(errno.EROFS, "Read-only file system", str(tmp_path / "plan"))

    monkeypatch.setattr(tempfile, "mkstemp", read_only)
    code = main(["plan", str(FLEET), str(EVENT), "--out", str(tmp_path / "plan")])
    err = capsys.readouterr().err.strip()
    assert code == 2 and "read-only" in err and len(err.splitlines()) == 1


def test_plan_files_get_the_umask_permissions(tmp_path):
    old = os.umask(0o022)
    try:
        output.umask.cache_clear()
        assert main(["plan", str(FLEET), str(EVENT), "--out", str(tmp_path / "plan")]) == 0
    finally:
        os.umask(old)
        output.umask.cache_clear()
    for path in (tmp_path / "plan").iterdir():
        assert stat.S_IMODE(path.stat().st_mode) == 0o644, path


def test_os_problem_sorts_user_errors_from_build_failures(tmp_path):
    assert isinstance(output.os_problem("--out", tmp_path, OSError(errno.EACCES, "x")), UserError)
    assert isinstance(output.os_problem("--out", tmp_path, OSError(errno.ENOSPC, "x")), BuildError)
    assert isinstance(output.os_problem("--out", tmp_path, OSError(errno.EIO, "x")), BuildError)
