"""The invented demo scenario and its mirror image, as files, for tests in both directions.

``uphill`` is the demo as shipped (tuning/demo/: a fleet proven at 150 m ridden at an invented
mountain site at 1650 m, June). ``downhill`` turns it round, the direction that hurts engines:
the same fleet proven at 1650 m and 15 °C, ridden at an invented site at 120 m on a freezing
day (the demo's forecast 40 °F colder, i.e. about -16 to -7 °C). ``downhill_no_stock`` adds
an empty shelf. Every value is INVENTED; these are inputs, not check values.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

from tuning.resources import demo_file

DEMO_FILES = ("demo-fleet.yaml", "demo-event.yaml", "demo-weather.csv")


def _copy_demo(folder: Path) -> tuple[Path, Path]:
    folder.mkdir(parents=True, exist_ok=True)
    for name in DEMO_FILES:
        (folder / name).write_bytes(demo_file(name).read_bytes())
    return folder / "demo-fleet.yaml", folder / "demo-event.yaml"


def uphill(folder: Path) -> tuple[Path, Path]:
    """The shipped demo scenario, copied into ``folder``; (fleet, event)."""
    return _copy_demo(folder)


def downhill(folder: Path, colder_degF: float = 40.0, stock: bool = True) -> tuple[Path, Path]:
    """The demo fleet proven at 1650 m, ridden at 120 m in air ``colder_degF`` colder; (fleet, event)."""
    fleet, event = _copy_demo(folder)
    text = fleet.read_text(encoding="utf-8")
    text = text.replace(
        "  elevation: 150 m\n  air_temperature: 20 degC\n", "  elevation: 1650 m\n  air_temperature: 15 degC\n", 1
    )
    if not stock:
        text = text[: text.index("\nstock:")] + "\n"
    fleet.write_text(text, encoding="utf-8")
    ev = event.read_text(encoding="utf-8").replace("  elevation: 1650 m\n", "  elevation: 120 m\n", 1)
    event.write_text(ev, encoding="utf-8")
    weather = folder / "demo-weather.csv"
    rows = list(csv.reader(io.StringIO(weather.read_text(encoding="utf-8"))))
    column = rows[0].index("air_temperature [degF]")
    for row in rows[1:]:
        row[column] = f"{float(row[column]) - colder_degF:.1f}"
    buffer = io.StringIO()
    csv.writer(buffer, lineterminator="\n").writerows(rows)
    weather.write_text(buffer.getvalue(), encoding="utf-8")
    return fleet, event
