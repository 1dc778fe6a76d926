"""Benchmark: plan 10,000 bikes x 48 hours and write the plan files. Prints figures only.

Run: ``.venv/bin/python benchmarks/plan_bench.py [--bikes N] [--hours H] [--sessions S] [--repeat R]``.
The fleet is generated in memory (invented models, random state fixed for repeatability).
"""

from __future__ import annotations

import argparse
import math
import sys
import tempfile
import time
import warnings
from dataclasses import replace
from datetime import UTC, datetime, timedelta
from pathlib import Path
from zoneinfo import ZoneInfo

import numpy as np

from tuning.config import model as m
from tuning.plan import make_plan, write_plan_files


def build(n_bikes: int, n_hours: int, random_state: int = 7, n_sessions: int = 1):
    rng = np.random.default_rng(random_state)
    reference = m.Conditions(300.0, 293.15, 101325.0, "qnh", 0.5, None, "E0")
    fuels = {"E0": m.Fuel("E0", 14.7, 745.0), "E10": m.Fuel("E10", 14.08, 749.4, 0.10)}
    families = {
        "main": m.JetFamily("main", "diameter", tuple(float(s) for s in np.arange(100, 222.5, 2.5))),
        "main-flow": m.JetFamily("main-flow", "flow", tuple(float(s) for s in range(200, 601, 10))),
        "pilot": m.JetFamily("pilot", "diameter", tuple(float(s) for s in np.arange(20, 60.1, 2.5))),
    }
    needles = {
        "N1": m.Needle("N1", 2.5e-3, 9e-3, math.radians(1.5), 5, 1e-3),
        "N2": m.Needle("N2", 2.5e-3, 9e-3, math.radians(1.5), 5, 1e-3, assumed=True),
    }

    def settings(main, fam, needle, kind):
        return m.Settings(main, fam, 40.0, "pilot", needle, 3, m.MixtureScrew(kind, 1.5, (1.0, 3.0)), 8e-3)

    models = {
        "A": m.Model("A", 2, 250e-6, m.Carburetor("round", 38e-3, 2.62e-3), 40.0, settings(160.0, "main", "N1", "air")),
        "B": m.Model(
            "B", 4, 450e-6, m.Carburetor("flat", 40e-3, 2.62e-3, True), None, settings(170.0, "main", "N1", "fuel")
        ),
        "C": m.Model(
            "C", 2, 125e-6, m.Carburetor("round", 36e-3, None), 32.0, settings(400.0, "main-flow", "N2", "air")
        ),
    }
    names = list(models)
    bikes = []
    for i in range(n_bikes):
        name = names[i % 3]
        st = models[name].settings
        offset = float(rng.integers(-2, 3)) * (2.5 if st.main_jet_family == "main" else 10.0)
        bikes.append(
            m.Bike(
                f"B{i:05d}",
                name,
                replace(st, main_jet=st.main_jet + offset),
                reference,
                models[name].premix_ratio,
                0.5 + 0.1 * float(rng.random()),
            )
        )
    stock = {("main", float(s)): int(rng.integers(0, 4)) for s in families["main"].sizes}
    fleet = m.Fleet("bench", reference, fuels, families, needles, models, tuple(bikes), stock)
    zone = ZoneInfo("Europe/Vienna")
    start = datetime(2026, 6, 13, 0, 0, tzinfo=zone)
    times = np.array(
        [
            np.datetime64((start + timedelta(hours=h)).astimezone(UTC).replace(tzinfo=None), "s")
            for h in range(n_hours + 2)
        ]
    )
    temperature = 283.15 + 8.0 * np.sin(np.arange(n_hours + 2) / 24 * 2 * np.pi)
    weather = m.Weather(
        times, temperature, np.full(n_hours + 2, 101500.0), "qnh", np.full(n_hours + 2, 0.6), "relative", "bench"
    )
    length = n_hours // n_sessions  # the hours split into sessions back to back
    sessions = tuple(
        m.Session(f"s{i + 1}", start + timedelta(hours=i * length), start + timedelta(hours=(i + 1) * length - 1))
        for i in range(n_sessions)
    )
    event = m.Event("bench", m.Site("Bench Hill", 1800.0, "Europe/Vienna"), sessions, weather, "E10")
    return fleet, event


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--bikes", type=int, default=10_000)
    parser.add_argument("--hours", type=int, default=48)
    parser.add_argument("--sessions", type=int, default=1, help="split the hours into this many sessions")
    parser.add_argument("--repeat", type=int, default=5)
    args = parser.parse_args(argv)
    fleet, event = build(args.bikes, args.hours, n_sessions=args.sessions)
    warnings.simplefilter("ignore")
    compute = []
    for _ in range(args.repeat):
        t0 = time.perf_counter()
        plan = make_plan(fleet, event)
        compute.append(time.perf_counter() - t0)
    with tempfile.TemporaryDirectory() as tmp:
        t1 = time.perf_counter()
        paths = write_plan_files(plan, tmp)
        write = time.perf_counter() - t1
        size = sum(Path(p).stat().st_size for p in paths)
    hours = len(plan["entries"][0]["hours"]) if plan["entries"] else 0
    print(f"bikes={args.bikes} sessions={args.sessions} hours/session={hours} entries={len(plan['entries'])}")
    print(f"make_plan: best {min(compute):.3f} s, median {sorted(compute)[len(compute) // 2]:.3f} s")
    print(f"write_plan_files: {write:.3f} s ({size / 1e6:.1f} MB, JSON indent=1)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
