"""Property tests: random edits to the demo files load or raise ConfigError of one-line problems.

Never another exception (no KeyError, TypeError, ... escaping the loaders). Example counts
are kept small: the suite runs on 2 cores in CI.
"""

from __future__ import annotations

import os
import shutil
import tempfile
from pathlib import Path

import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tuning.config import load_event, load_fleet
from tuning.errors import ConfigError

DEMO = Path(__file__).resolve().parent.parent / "tuning" / "demo"
FLEET_DOC = yaml.safe_load((DEMO / "demo-fleet.yaml").read_text())
EVENT_DOC = yaml.safe_load((DEMO / "demo-event.yaml").read_text())
METAR_DOC = yaml.safe_load((DEMO / "demo-event-metar.yaml").read_text())

#: Examples per test; raise it for a thorough local run (CARBFLEET_PROPERTY_EXAMPLES=500).
EXAMPLES = int(os.environ.get("CARBFLEET_PROPERTY_EXAMPLES", "30"))
SETTINGS = settings(max_examples=EXAMPLES, deadline=None, suppress_health_check=[HealthCheck.too_slow])

scalars = st.one_of(
    st.none(),
    st.booleans(),
    st.integers(-(10**6), 10**6),
    st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=12),
    st.sampled_from(
        [
            "12 kg",
            "1013 hPa",
            "-40 degF",
            "40:1",
            "2026-06-13 09:00",
            "2026-13-45 25:00",
            "e5",
            "round-main",
            "1e400",
            "5 %",
        ]
    ),
)
values = st.one_of(scalars, st.lists(scalars, max_size=3), st.dictionaries(st.text(max_size=8), scalars, max_size=2))


def paths(doc, prefix=()):
    """Every path to a node of a parsed document."""
    yield prefix
    if isinstance(doc, dict):
        for k, v in doc.items():
            yield from paths(v, (*prefix, k))
    elif isinstance(doc, list):
        for i, v in enumerate(doc):
            yield from paths(v, (*prefix, i))


def mutate(doc, path, action, value, new_key):
    import copy

    doc = copy.deepcopy(doc)
    if not path:
        return value if action == "change" else doc
    parent = doc
    for key in path[:-1]:
        parent = parent[key]
    last = path[-1]
    if action == "change":
        parent[last] = value
    elif action == "delete":
        del parent[last]
    elif action == "add" and isinstance(parent, dict):
        parent[new_key] = value
    elif action == "add" and isinstance(parent, list):
        parent.append(value)
    elif action == "swap":
        old = parent[last]
        parent[last] = [old] if not isinstance(old, list) else {"x": old}
    return doc


def edits(doc):
    all_paths = list(paths(doc))
    return st.tuples(
        st.sampled_from(all_paths),
        st.sampled_from(["change", "delete", "add", "swap"]),
        values,
        st.text(min_size=1, max_size=10),
    )


def check_outcome(loader, path, *args):
    try:
        loader(path, *args)
    except ConfigError as exc:
        assert exc.problems
        for problem in exc.problems:
            text = str(problem)
            assert "\n" not in text and text.startswith(str(problem.file))


def write_and_load(doc, name, loader, with_csv=False):
    with tempfile.TemporaryDirectory() as folder:
        target = Path(folder) / name
        if with_csv:
            shutil.copy(DEMO / "demo-weather.csv", Path(folder) / "demo-weather.csv")
        target.write_text(yaml.safe_dump(doc, allow_unicode=True), encoding="utf-8")
        check_outcome(loader, target)


@SETTINGS
@given(edits(FLEET_DOC))
def test_fleet_edits(edit):
    write_and_load(mutate(FLEET_DOC, *edit), "fleet.yaml", load_fleet)


@SETTINGS
@given(edits(EVENT_DOC))
def test_event_edits(edit):
    write_and_load(mutate(EVENT_DOC, *edit), "event.yaml", load_event, with_csv=True)


@settings(max_examples=EXAMPLES, deadline=None)
@given(edits(METAR_DOC))
def test_metar_event_edits(edit):
    write_and_load(mutate(METAR_DOC, *edit), "event.yaml", load_event)


@settings(max_examples=EXAMPLES, deadline=None)
@given(st.data())
def test_raw_text_edits(data):
    """Byte-level edits of the fleet text: YAML syntax errors must come back as problems too."""
    raw = (DEMO / "demo-fleet.yaml").read_bytes()
    at = data.draw(st.integers(0, len(raw) - 1))
    cut = data.draw(st.integers(0, 20))
    insert = data.draw(
        st.binary(max_size=4)
        | st.sampled_from([b":", b"- ", b"{", b"&a ", b"*a", b"\t", b"!!python/object:os.system "])
    )
    with tempfile.TemporaryDirectory() as folder:
        target = Path(folder) / "fleet.yaml"
        target.write_bytes(raw[:at] + insert + raw[at + cut :])
        check_outcome(load_fleet, target)


@settings(max_examples=EXAMPLES, deadline=None)
@given(st.data())
def test_weather_table_edits(data):
    lines = (DEMO / "demo-weather.csv").read_text().splitlines()
    row = data.draw(st.integers(0, len(lines) - 1))
    cells = lines[row].split(",")
    column = data.draw(st.integers(0, len(cells) - 1))
    cells[column] = data.draw(
        st.one_of(st.text(max_size=8), st.sampled_from(["", "nan", "1e999", "-500", "time", "qnh [hPa]"]))
    )
    lines[row] = ",".join(cells)
    with tempfile.TemporaryDirectory() as folder:
        shutil.copy(DEMO / "demo-event.yaml", Path(folder) / "event.yaml")
        (Path(folder) / "demo-weather.csv").write_text("\n".join(lines) + "\n")
        check_outcome(load_event, Path(folder) / "event.yaml")
