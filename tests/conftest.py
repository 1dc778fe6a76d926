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


# --- the history ---------------------------------------------------------------------------
# No test writes a history into the checkout: every test gets a fresh history file of its own in a
# temporary folder (CARBFLEET_HISTORY, the default where --history is not given), set by a hook
# rather than a fixture so that it also holds for hypothesis tests and subprocesses.
_HISTORY_FOLDER: list[str] = []


def pytest_configure(config):
    import tempfile

    _HISTORY_FOLDER.append(tempfile.mkdtemp(prefix="carbfleet-test-history-"))


def pytest_unconfigure(config):
    for folder in _HISTORY_FOLDER:
        shutil.rmtree(folder, ignore_errors=True)


def pytest_runtest_setup(item):
    import os
    import re

    name = re.sub(r"[^A-Za-z0-9_.-]+", "_", item.nodeid)[-150:]
    os.environ["CARBFLEET_HISTORY"] = str(Path(_HISTORY_FOLDER[0]) / f"{name}.sqlite")


class _PostgresServer:
    """A throwaway PostgreSQL server (Debian's binaries) in a temporary folder on a free port.

    Run as ``nobody`` (through ``runuser``) when the tests run as root: PostgreSQL refuses root.
    """

    def __init__(self):
        import os
        import socket
        import subprocess
        import tempfile

        self.bin = _postgres_bin()
        self.folder = Path(tempfile.mkdtemp(prefix="carbfleet-pg-"))
        self.as_user = ["runuser", "-u", "nobody", "--"] if os.geteuid() == 0 else []
        if self.as_user:
            os.chown(self.folder, *_nobody())
        with socket.socket() as s:
            s.bind(("127.0.0.1", 0))
            self.port = s.getsockname()[1]
        data, log = self.folder / "data", self.folder / "log"
        run = dict(check=True, capture_output=True, timeout=120)
        subprocess.run(
            [
                *self.as_user,
                str(self.bin / "initdb"),
                "-D",
                str(data),
                "-U",
                "carbfleet",
                "-A",
                "trust",
                "-E",
                "UTF8",
                "--no-locale",
            ],
            **run,
        )
        subprocess.run(
            [
                *self.as_user,
                str(self.bin / "pg_ctl"),
                "-D",
                str(data),
                "-l",
                str(log),
                "-w",
                "-o",
                f"-p {self.port} -k {self.folder} -c listen_addresses=127.0.0.1 -c fsync=off",
                "start",
            ],
            **run,
        )
        self.data = data
        self.count = 0

    def new_database(self) -> str:
        import psycopg

        self.count += 1
        name = f"history{self.count}"
        with psycopg.connect(f"host=127.0.0.1 port={self.port} user=carbfleet dbname=postgres", autocommit=True) as c:
            c.execute(f"CREATE DATABASE {name}")
        return f"postgresql://carbfleet@127.0.0.1:{self.port}/{name}"

    def stop(self):
        import subprocess

        subprocess.run(
            [*self.as_user, str(self.bin / "pg_ctl"), "-D", str(self.data), "-m", "fast", "-w", "stop"],
            capture_output=True,
            timeout=120,
        )
        shutil.rmtree(self.folder, ignore_errors=True)


def _postgres_bin() -> Path | None:
    import shutil as sh

    found = sh.which("initdb") and sh.which("pg_ctl")
    if found:
        return Path(sh.which("initdb")).resolve().parent
    versions = sorted(Path("/usr/lib/postgresql").glob("*/bin/initdb"))
    return versions[-1].parent if versions else None


def _nobody() -> tuple[int, int]:
    import pwd

    entry = pwd.getpwnam("nobody")
    return entry.pw_uid, entry.pw_gid


@pytest.fixture(scope="session")
def postgres_server():
    """The session's PostgreSQL server; skipped with the reason where it cannot start."""
    import importlib.util
    import subprocess

    if importlib.util.find_spec("psycopg") is None:
        pytest.skip("psycopg is not installed (pip install -e '.[test]' installs it)")
    if _postgres_bin() is None:
        pytest.skip("PostgreSQL's initdb and pg_ctl were not found (Debian's package postgresql; .ci/run installs it)")
    try:
        server = _PostgresServer()
    except (OSError, subprocess.SubprocessError, KeyError) as exc:
        detail = getattr(exc, "stderr", b"") or b""
        pytest.skip(f"a PostgreSQL server could not start here: {exc} {detail.decode(errors='replace')[-300:]}")
    yield server
    server.stop()


@pytest.fixture(params=["sqlite", "postgresql"])
def history_place(request, tmp_path):
    """Where a test's history is: a SQLite file, then a fresh database on the PostgreSQL server."""
    if request.param == "sqlite":
        return str(tmp_path / "history.sqlite")
    return request.getfixturevalue("postgres_server").new_database()
