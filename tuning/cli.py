"""The ``carbfleet`` command: parses arguments, calls one function per verb, sets the exit code.

Exit codes: 0 success, 1 build failure, 2 user error (bad file, value or name).
"""

from __future__ import annotations

import argparse
import contextlib
import os
import signal
import sys

from tuning import __version__
from tuning.display import N_
from tuning.errors import CarbfleetError, UserError

EXIT_OK, EXIT_BUILD, EXIT_USER = 0, 1, 2


# --- display units and language ----------------------------------------------------------
def add_display_options(p, event_file: bool = True) -> None:
    """``--units`` and ``--language``: what people read; the JSON and CSV files stay SI."""
    from tuning.display import LANGUAGES, UNIT_SYSTEMS

    wins = "; wins over units in the event file" if event_file else ""
    p.add_argument(
        "--units",
        choices=UNIT_SYSTEMS,
        default=None,
        help="units of what is shown: metric (degC, m, hPa; the default) or us (degF, ft, inHg)"
        f"{wins}. JSON and CSV files stay SI, with the unit in each column name",
    )
    wins = "; wins over language in the event file" if event_file else ""
    p.add_argument(
        "--language",
        choices=LANGUAGES,
        default=None,
        help=f"language of what is shown: en (the default) or de (German, decimal comma){wins}",
    )


def _plain(display, value) -> str:
    """A number as the plan document holds it (``172.5``, ``0.9323``), with the language's decimal
    separator; text (a jet number as stamped) unchanged."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return str(value)
    text = f"{value:g}".replace("-", "−")
    return text.replace(".", ",") if display.language == "de" else text


# --- air -------------------------------------------------------------------------------
def add_air_parser(sub) -> None:
    p = sub.add_parser(
        "air",
        help="air state for one condition",
        description="Air state at a site: station pressure, humidity, moist and dry-air density, "
        "pressure and density altitude, SAE J1349 power correction, carburetor icing risk. "
        "Values may carry a unit in quotes ('4400 ft', '75 degF', '29.92 inHg', '40 %'); bare numbers "
        "are m, degC, hPa and %, whatever --units says (--units chooses how the table shows them). "
        "Give exactly one pressure and one humidity.",
    )
    p.add_argument("--elevation", metavar="VALUE", help="site elevation above mean sea level (bare number: m)")
    p.add_argument("--temperature", metavar="VALUE", help="air temperature (bare number: degC)")
    p.add_argument("--qnh", metavar="VALUE", help="altimeter setting QNH (bare number: hPa)")
    p.add_argument("--station-pressure", metavar="VALUE", help="pressure at the site itself (bare number: hPa)")
    p.add_argument(
        "--sea-level-pressure",
        metavar="VALUE",
        help="pressure reduced to mean sea level, as forecasts give it (bare number: hPa)",
    )
    p.add_argument("--relative-humidity", metavar="VALUE", help="relative humidity over water (bare number: %%)")
    p.add_argument("--dew-point", metavar="VALUE", help="dew point (bare number: degC)")
    p.add_argument(
        "--json",
        action="store_true",
        help="print one JSON object instead of a table (SI, the unit in each key, whatever --units says)",
    )
    add_display_options(p, event_file=False)
    p.set_defaults(func=cmd_air)


def _air_option(args, dest, quantity=None):
    """Read one ``carbfleet air`` option in SI; ``None`` if absent; UserError if bad.

    ``quantity`` names its accepted range in ``tuning.config.quantities.AIR_COMMAND_RANGES``
    (whose unit is also a bare number's).
    """
    from tuning.config.quantities import AIR_COMMAND_RANGES
    from tuning.config.units import UnitProblem, parse_quantity, unit_label
    from tuning.errors import UserError

    text = getattr(args, dest)
    if text is None:
        return None
    accepted = AIR_COMMAND_RANGES[quantity or dest]
    default_unit = accepted.unit
    option = "--" + dest.replace("_", "-")
    try:
        value = parse_quantity(text.strip(), default_unit)
        shown = parse_quantity(text.strip(), default_unit, default_unit)
    except UnitProblem as problem:
        example = {"elevation": "1340 m", "temperature": "24 degC", "relative_humidity": "40 %", "dew_point": "10 degC"}
        told = any(words in str(problem) for words in ("give it in", "write it as", "such as"))
        hint = "" if told else f"; give a number and a unit, e.g. '{example.get(dest, '1016 hPa')}'"
        raise UserError(f"{option}: {problem}{hint}") from None
    if not accepted.low <= shown <= accepted.high:
        raise UserError(
            f"{option}: expected {accepted.low:g} to {accepted.high:g} {unit_label(default_unit)}, got {text!r}; "
            "check the value and its unit"
        )
    bare = text.strip().lstrip("+-").replace(".", "", 1).isdigit()  # a number without unit
    if dest == "relative_humidity" and 0.0 < shown < 1.0 and bare:
        print(
            f"carbfleet air: note: {option} {text.strip()} was read as {shown:g} %; "
            f"for a fraction of {shown:g} write {shown * 100:g}",
            file=sys.stderr,
        )
    return value


def cmd_air(args) -> int:
    import json
    import warnings

    from tuning import air
    from tuning.config.quantities import HUMIDITY_KEYS, PRESSURE_KEYS
    from tuning.constants import ISA_SEA_LEVEL_DENSITY_PRINTED, ZERO_CELSIUS
    from tuning.errors import UserError
    from tuning.plan.notices import ICING_RISK_NAMES

    # the options are the files' keys written as options (QNH named first, the usual case here)
    pressure_options = {
        kind: "--" + key.replace("_", "-")
        for key, kind in sorted(PRESSURE_KEYS.items(), key=lambda item: item[0] != "qnh")
    }
    humidity_options = {key: "--" + key.replace("_", "-") for key in HUMIDITY_KEYS}

    def exactly_one(options, what):
        given = [kind for kind, dest in options.items() if getattr(args, dest[2:].replace("-", "_")) is not None]
        if len(given) != 1:
            got = " and ".join(options[k] for k in given) if given else "none"
            raise UserError(f"give exactly one {what}: {' or '.join(options.values())} (got {got})")
        return given[0]

    pressure_kind = exactly_one(pressure_options, "pressure")
    humidity_kind = exactly_one(humidity_options, "humidity")
    elevation = _air_option(args, "elevation")
    if elevation is None and pressure_kind != "station":
        raise UserError(f"--elevation is needed with {pressure_options[pressure_kind]} (e.g. --elevation '1340 m')")
    temperature = _air_option(args, "temperature", "air_temperature")
    if temperature is None:
        raise UserError("--temperature is needed (e.g. --temperature '24 degC')")
    dest = pressure_options[pressure_kind][2:].replace("-", "_")
    pressure = _air_option(args, dest, "pressure")
    humidity = {
        "relative_humidity": _air_option(args, "relative_humidity"),
        "dew_point": _air_option(args, "dew_point"),
    }
    if humidity_kind == "dew_point" and humidity["dew_point"] > temperature + air.DEW_POINT_ROUNDING_TOLERANCE:
        raise UserError(
            f"--dew-point: {args.dew_point!r} is above --temperature {args.temperature!r}; "
            "a dew point cannot exceed the air temperature, check both values"
        )
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            station = air.station_pressure(pressure, pressure_kind, elevation or 0.0, temperature)
            state = air.air_state(temperature, station, **{humidity_kind: humidity[humidity_kind]})
        except ValueError as exc:
            raise UserError(f"{exc}; check --temperature, --dew-point and the pressure") from None
    dew_point = float(state.dew_point)
    result = {
        "pressure_kind": pressure_kind,
        "elevation_m": None if elevation is None else round(elevation, 1),
        "air_temperature_C": round(temperature - ZERO_CELSIUS, 2),
        "station_pressure_hPa": round(float(state.station_pressure) / 100.0, 2),
        "vapour_pressure_hPa": round(float(state.vapour_pressure) / 100.0, 3),
        "dew_point_C": round(dew_point - ZERO_CELSIUS, 2) if dew_point > 0 else None,
        "relative_humidity_pct": round(float(state.relative_humidity) * 100.0, 2),
        "moist_air_density_kg_m3": round(float(state.moist_air_density), 5),
        "dry_air_density_kg_m3": round(float(state.dry_air_density), 5),
        "density_ratio_isa": round(float(state.moist_air_density) / ISA_SEA_LEVEL_DENSITY_PRINTED, 5),
        "pressure_altitude_m": round(float(state.pressure_altitude), 1),
        "density_altitude_m": round(float(state.density_altitude), 1),
        "sae_j1349_cf": round(float(state.sae_j1349_cf), 4),
        "icing_risk_band": int(state.icing_risk),
        "icing_risk": ICING_RISK_NAMES[int(state.icing_risk)],
        "warnings": [str(w.message) for w in caught if issubclass(w.category, air.OutOfRangeWarning)],
    }
    if args.json:
        print(json.dumps(result, indent=2))
        return EXIT_OK
    from tuning.config import display_for

    print(_air_table(result, display_for(None, args.units, args.language)))
    return EXIT_OK


# Words the table shows that come from elsewhere, marked here for the message catalogue: the
# pressure kinds (the icing-risk names are marked where they live, tuning.plan.notices).
_AIR_WORDS = (N_("qnh"), N_("station"), N_("sea level"))


def _air_table(result: dict, display=None) -> str:
    """Plain-text table of the ``carbfleet air`` result in ``display``'s units and language
    (formatting only; ``result`` is SI as ``--json`` prints it)."""
    from tuning.display import METRIC_EN

    d = display or METRIC_EN
    _ = d._
    us = d.units == "us"

    number = d.number  # a small negative value shows as 0, not −0

    rows = [
        (_("pressure given as"), _(result["pressure_kind"].replace("_", " ")), ""),
        (
            _("station pressure"),
            number(d.pressure_value(result["station_pressure_hPa"]), 2 if us else 1),
            d.pressure_unit,
        ),
        (_("air temperature"), number(d.temperature_value(result["air_temperature_C"]), 1), d.temperature_unit),
        (_("dew point"), _("n/a"), "")
        if result["dew_point_C"] is None
        else (_("dew point"), number(d.temperature_value(result["dew_point_C"]), 1), d.temperature_unit),
        (_("relative humidity"), number(result["relative_humidity_pct"], 0), "%"),
        (
            _("vapour pressure"),
            number(d.pressure_value(result["vapour_pressure_hPa"]), 3 if us else 2),
            d.pressure_unit,
        ),
        (_("moist-air density"), number(result["moist_air_density_kg_m3"], 4), "kg/m³"),
        (_("dry-air density (oxygen-carrying part)"), number(result["dry_air_density_kg_m3"], 4), "kg/m³"),
        (_("density against ISA sea level (1.225)"), number(result["density_ratio_isa"] * 100, 1), "%"),
        (_("pressure altitude"), number(d.elevation_value(result["pressure_altitude_m"]), 0), d.elevation_unit),
        (_("density altitude"), number(d.elevation_value(result["density_altitude_m"]), 0), d.elevation_unit),
        (_("SAE J1349 correction factor"), number(result["sae_j1349_cf"], 3), ""),
        (_("carburetor icing risk"), _(result["icing_risk"]), ""),
    ]
    if result["elevation_m"] is not None:
        rows.insert(1, (_("site elevation"), number(d.elevation_value(result["elevation_m"]), 0), d.elevation_unit))
    width = max(len(label) for label, _value, _unit in rows)
    lines = [f"{label:<{width}}  {value:>8} {unit}".rstrip() for label, value, unit in rows]
    lines += [_("note: {message}").format(message=message) for message in result["warnings"]]
    lines.append(_("Estimates only: confirm jetting by a plug reading before hard riding."))
    return "\n".join(lines)


# --- check / schema ------------------------------------------------------------------------
def add_check_parsers(sub) -> None:
    p = sub.add_parser(
        "check",
        help="validate a fleet file and optionally an event file",
        description="Check a fleet file (and an event file with its weather) and print a short summary. "
        "Exit 0 when valid; 2 with every problem as file:line: field: problem. "
        "Bare numbers take each field's default unit (see `carbfleet schema`).",
    )
    p.add_argument("fleet", metavar="FLEET", help="fleet YAML file")
    p.add_argument("event", metavar="EVENT", nargs="?", help="event YAML file (its weather CSV path is relative to it)")
    p.set_defaults(func=cmd_check)
    p = sub.add_parser(
        "schema",
        help="print the JSON Schema of the fleet and event files",
        description="Print the JSON Schema (draft 2020-12) for editors and other tools: both files as one "
        'object {"fleet": ..., "event": ...}, or only the one named.',
    )
    p.add_argument("which", nargs="?", choices=("fleet", "event"), help="print only this schema")
    p.set_defaults(func=cmd_schema)


def cmd_check(args) -> int:
    from tuning.config import load_event, load_fleet, summarize
    from tuning.errors import ConfigError

    problems, fleet, event = [], None, None
    try:
        fleet = load_fleet(args.fleet)
    except ConfigError as exc:
        problems += exc.problems
    if args.event is not None:
        try:
            event = load_event(args.event, fleet)
        except ConfigError as exc:
            problems += exc.problems
    if problems:
        raise ConfigError(problems)
    print(summarize(fleet, event))
    return EXIT_OK


def cmd_schema(args) -> int:
    import json

    from tuning.config import event_schema, fleet_schema

    if args.which == "fleet":
        schema = fleet_schema()
    elif args.which == "event":
        schema = event_schema()
    else:
        schema = {"fleet": fleet_schema(), "event": event_schema()}
    print(json.dumps(schema, indent=2, ensure_ascii=False))
    return EXIT_OK


# --- plan ------------------------------------------------------------------------------
def add_plan_parser(sub) -> None:
    p = sub.add_parser(
        "plan",
        help="compute the jetting of every bike for every session",
        description="Plan main jet, pilot jet, needle clip and mixture screw for every bike and session "
        "of an event, across the session's hourly weather. Writes recommendations.json, "
        "recommendations.csv (units in the column names: degC, hPa, m, mm, turns) and pick-list.csv; these "
        "stay SI whatever --units says, which chooses the units of the lines printed. "
        "Estimates only: confirm by a plug reading before hard riding.",
    )
    p.add_argument("fleet", metavar="FLEET", help="fleet file (YAML)")
    p.add_argument("event", metavar="EVENT", help="event file (YAML) naming its weather table")
    p.add_argument(
        "--out",
        metavar="DIR",
        required=True,
        help="output folder (created when missing); only the three plan files are written in it, "
        "all new or all old, and an existing file of those names only when carbfleet wrote it",
    )
    add_policy_option(p)
    add_display_options(p)
    add_history_options(p)
    p.set_defaults(func=cmd_plan)


def add_policy_option(p) -> None:
    from tuning.config.model import CHANGE_POLICIES

    p.add_argument(
        "--policy",
        choices=CHANGE_POLICIES,
        default=None,
        help="event: one setting per bike for the event unless a change pays for its work (default); "
        "session: the best setting for each session (race teams). Wins over change_policy in the files.",
    )


def cmd_plan(args) -> int:
    import warnings
    from pathlib import Path

    from tuning.config import display_for, load_event, load_fleet
    from tuning.config.spec import one_line
    from tuning.output import check_file_set
    from tuning.plan import PLAN_FILE_SIGNATURES, make_plan, write_plan_files
    from tuning.report import tables

    def say(text: str, file=None) -> None:
        """Print one line; control characters from the user's names are shown escaped."""
        print(one_line(text), file=file or sys.stdout)

    if not args.out.strip():
        raise UserError("--out: the path is empty (an unset shell variable?); name a folder, e.g. --out plan")
    check_file_set(Path(args.out), PLAN_FILE_SIGNATURES)  # before the work: fail fast
    fleet = load_fleet(args.fleet)
    event = load_event(args.event, fleet)
    display = display_for(event, args.units, args.language)
    _ = display._
    history = _PlanHistory(_history_place(args, args.fleet))  # before the work: fail fast
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            calibration = history.calibration(fleet, use=not args.no_calibration)
            plan = history.adjust(
                fleet, event, make_plan(fleet, event, policy_name=args.policy, calibration=calibration)
            )
        paths = write_plan_files(plan, args.out)  # SI, whatever the display
        history.record()
        history_lines = history.lines(display)
    finally:
        history.close()
    for note in dict.fromkeys(str(w.message) for w in caught):  # one line each, no source echo
        say("carbfleet plan: " + _("note: {note}").format(note=note), file=sys.stderr)
    entries = plan["entries"]
    changed = sum(
        1
        for e in entries
        if any(e["settings"][k]["steps"] for k in ("main_jet", "pilot_jet", "clip"))
        or e["settings"]["mixture_screw"]["change_turns"]
    )
    to_order = sum(p["to_order"] or 0 for p in plan["pick_list"])
    stock = tables.to_order_text(to_order, display) if tables.stock_kept(plan) else display._(tables.NO_STOCK_LIST)
    bikes, sessions = len({e["bike"] for e in entries}), len(plan["sessions"])
    say(
        _(
            "{fleet} at {event} ({site}, {elevation}): {bikes} bikes x {sessions} sessions, {changed} with changes, "
            "{warnings} warnings, {stock}"
        ).format(
            fleet=plan["fleet"],
            event=plan["event"],
            site=plan["site"]["name"],
            elevation=display.elevation(plan["site"]["elevation_m"]),
            bikes=bikes,
            sessions=sessions,
            changed=changed,
            warnings=plan["warnings_count"],
            stock=stock,
        )
    )
    row = _("main {main}  pilot {pilot}  clip {clip}  factor {factor}")
    for e in entries[:40]:
        m, pj, c = e["settings"]["main_jet"], e["settings"]["pilot_jet"], e["settings"]["clip"]
        clip = (
            display.number(None) if c["current"] is None else f"{c['current']}->{c['recommended']}"
        )  # no needle on record
        moves = row.format(
            main=f"{_plain(display, m['current'])}->{_plain(display, m['recommended'])}",
            pilot=f"{_plain(display, pj['current'])}->{_plain(display, pj['recommended'])}",
            clip=clip,
            factor=_plain(display, e["summary"]["area_factor_mean"]),
        )
        say(
            f"  {one_line(e['bike']):<10} {one_line(e['session']):<14} {moves}"
            + (f"  [{', '.join(sorted({w['code'] for w in e['warnings']}))}]" if e["warnings"] else "")
        )
    if len(entries) > 40:
        say(_("  ... and {count} more rows in recommendations.csv").format(count=len(entries) - 40))
    for path in paths:
        say(_("wrote {path}").format(path=path))
    for line in history_lines:
        say(line)
    return EXIT_OK


# --- build -----------------------------------------------------------------------------
def add_build_parser(sub) -> None:
    p = sub.add_parser(
        "build",
        help="build setup sheets and the fleet report",
        description="Plan every bike for every session and build the output folder: index.html, "
        "sheets/<bike>.html and .pdf (one printed page per bike), fleet-summary.html and .pdf, "
        "print-pack.pdf, recommendations.json/.csv, pick-list.csv, the executed notebooks and "
        "carbfleet-manifest.json (the list of what was written). The folder is built beside DIR and "
        "moved into place at the end: a failed or interrupted build leaves the previous output as it "
        "was (exit 1). DIR must be new, empty or an earlier build's output holding nothing else; the "
        "current folder, the home folder and the folders of the input files are refused (exit 2).",
    )
    p.add_argument("fleet", metavar="FLEET", help="fleet file (YAML)")
    p.add_argument("event", metavar="EVENT", help="event file (YAML)")
    p.add_argument(
        "--out",
        metavar="DIR",
        required=True,
        help="output folder: new, empty, or an earlier build's (replaced when the build succeeds)",
    )
    p.add_argument("--paper", choices=("a4", "letter"), default="a4", help="paper size of the PDFs (default a4)")
    p.add_argument("--quiet", action="store_true", help="no progress bar and no summary line")
    p.add_argument(
        "--workers",
        type=int,
        default=2,
        metavar="N",
        help="notebook kernels rendering sheets in parallel, 1 to 8 (default 2)",
    )
    add_policy_option(p)
    add_display_options(p)
    add_history_options(p)
    p.set_defaults(func=cmd_build)


def cmd_build(args) -> int:
    import warnings

    from tuning.config.spec import one_line
    from tuning.display import Display
    from tuning.report import build

    history = _PlanHistory(_history_place(args, args.fleet))  # before the work: fail fast
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            # units/language None: the event file's setting, else metric/en (tuning.config.display_for)
            result = build(
                args.fleet,
                args.event,
                args.out,
                paper=args.paper,
                quiet=args.quiet,
                workers=args.workers,
                policy=args.policy,
                units=args.units,
                language=args.language,
                adjust=history.adjust,
                calibrate=lambda fleet: history.calibration(fleet, use=not args.no_calibration),
            )
        history.record()  # the output is in place: the plan it shows is the one recorded
        history_lines = history.lines(Display(result.units, result.language)) if history.plan is not None else []
    finally:
        history.close()
    for note in dict.fromkeys(
        str(w.message) for w in caught if not issubclass(w.category, (DeprecationWarning, ResourceWarning))
    ):
        print(one_line(f"carbfleet build: note: {note}"), file=sys.stderr)  # one line each, no source echo
    if not args.quiet:
        print(one_line(result.summary_line()))
        for line in history_lines:
            print(one_line(line))
    return EXIT_OK


# --- example ---------------------------------------------------------------------------
def add_example_parser(sub) -> None:
    p = sub.add_parser(
        "example",
        help="copy the demo scenario's files into a folder, to try carbfleet or start from",
        description="Write the invented demo scenario (a fleet file, an event file with its weather "
        "table, an event with METAR reports) and the JSON Schemas of the two file kinds into DIR. "
        "Existing files are never overwritten: the command stops, writing nothing, if any is there.",
    )
    p.add_argument("dir", metavar="DIR", help="folder to write the files into (created when missing)")
    p.set_defaults(func=cmd_example)


def cmd_example(args) -> int:
    import json
    from pathlib import Path

    from tuning import resources
    from tuning.config import event_schema, fleet_schema
    from tuning.output import os_problem

    folder = Path(args.dir)
    files = {name: resources.demo_file(name).read_text(encoding="utf-8") for name in resources.DEMO_FILES}
    for name, schema in (("fleet.schema.json", fleet_schema()), ("event.schema.json", event_schema())):
        files[name] = json.dumps(schema, indent=2, ensure_ascii=False) + "\n"
    there = [name for name in files if (folder / name).exists() or (folder / name).is_symlink()]
    if there:
        raise UserError(
            f"{folder / there[0]} exists; carbfleet example never overwrites a file: name a new or empty folder"
        )
    try:
        folder.mkdir(parents=True, exist_ok=True)
        for name, text in files.items():
            with open(folder / name, "x", encoding="utf-8", newline="") as handle:
                handle.write(text)
    except OSError as exc:
        raise os_problem("DIR", folder, exc) from None
    print(f"wrote the demo scenario into {folder}:")
    for name in files:
        print(f"  {name}")
    print(f"try: carbfleet build {folder / 'demo-fleet.yaml'} {folder / 'demo-event.yaml'} --out {folder / 'out'}")
    return EXIT_OK


# --- history ---------------------------------------------------------------------------
HISTORY_ENV = "CARBFLEET_HISTORY"  #: where --history is not given (a shared PostgreSQL URL, say)
HISTORY_FILE = "history.sqlite"  #: the default history's name, beside the fleet file


def add_history_options(p, can_skip: bool = True) -> None:
    """``--history`` (and ``--no-history`` for the verbs that would only record a plan)."""
    p.add_argument(
        "--history",
        metavar="PATH_OR_URL",
        default=None,
        help=f"the history: a SQLite file (its folder must exist) or a postgresql:// URL shared by "
        f"several branches; default: ${HISTORY_ENV} if set, else {HISTORY_FILE} beside the fleet file",
    )
    if can_skip:
        p.add_argument(
            "--no-history",
            action="store_true",
            help="neither read nor write the history: plan on the proven settings, record nothing",
        )
        p.add_argument(
            "--no-calibration",
            action="store_true",
            help="plan on the metering law alone, not on what the history's recorded readings say "
            "(the sheets say so); the plan is still recorded",
        )


def _history_place(args, fleet_path) -> str | None:
    """Where this command's history is (None: --no-history)."""
    from pathlib import Path

    if getattr(args, "no_history", False):
        return None
    if args.history is not None:
        if not args.history.strip():
            raise UserError("--history: the path is empty (an unset shell variable?); name a file or a URL")
        return args.history
    if os.environ.get(HISTORY_ENV, "").strip():
        return os.environ[HISTORY_ENV].strip()
    return str(Path(fleet_path).parent / HISTORY_FILE) if fleet_path else HISTORY_FILE


class _PlanHistory:
    """What ``plan`` and ``build`` do with the history: before planning, the settings bikes still
    wear; after, the changes since the last plan of the same event; once the output is written,
    the plan recorded."""

    def __init__(self, place: str | None):
        from tuning.history import open_history

        self.history = open_history(place) if place else None
        self.before, self.fitted, self.plan, self.event = None, {}, None, None

    def calibration(self, fleet, use: bool = True):
        """What the history's recorded outcomes say of the fleet's bikes (None: nothing recorded, or
        no history: the law); with ``use`` False the law, the sheets saying the calibration was not used."""
        from tuning.calibration import NOT_USED

        if not use:
            return NOT_USED
        if self.history is None:
            return None
        from tuning.history import calibration_of

        return calibration_of(self.history, fleet)

    def adjust(self, fleet, event, plan: dict) -> dict:
        """The plan started from the settings bikes still wear (the law stays on the proven ones)."""
        self.event = event
        if self.history is None:
            self.plan = plan
            return plan
        from tuning.history import fitted_state
        from tuning.plan.fitted import start_from_fitted

        self.before = self.history.last_plan(event, fleet.name)
        self.fitted = fitted_state(self.history, fleet)
        self.plan = start_from_fitted(plan, fleet, self.fitted)
        return self.plan

    def record(self) -> None:
        if self.history is not None and self.plan is not None:
            self.history.record_plan(self.event, self.plan)

    def lines(self, display) -> list[str]:
        """The terminal's lines: bikes starting from fitted settings, bikes changed since the last plan."""
        if self.history is None:
            return []
        _ = display._
        lines = []
        if self.fitted:
            bikes = ", ".join(f"{b} ({f.event})" for b, f in self.fitted.items())
            lines.append(
                display.n_(
                    "{count} bike starts from the settings it still wears, not its proven ones "
                    "(the event it wore them at in brackets): {bikes}",
                    "{count} bikes start from the settings they still wear, not their proven ones "
                    "(the event they wore them at in brackets): {bikes}",
                    len(self.fitted),
                ).format(count=len(self.fitted), bikes=bikes)
            )
        if self.before is not None:
            lines.append(_changes_line(self.before[0], self.before[1], self.plan, display))
        return lines

    def close(self) -> None:
        if self.history is not None:
            self.history.close()


_SHORT = {"main_jet": N_("main"), "pilot_jet": N_("pilot"), "clip": N_("clip"), "mixture_screw": N_("screw")}


def _changes_line(made_at: str, before: dict, after: dict, display) -> str:
    """``3 bikes changed since the plan of 18:00: K03 main 120→118, ...`` (the morning-of re-run)."""
    from datetime import datetime
    from zoneinfo import ZoneInfo

    from tuning.history import plan_changes

    zone = ZoneInfo(after["site"]["time_zone"])
    made = datetime.fromisoformat(made_at).astimezone(zone)
    when = made.strftime("%H:%M") if made.date() == datetime.now(zone).date() else made.strftime("%Y-%m-%d %H:%M")
    changed = plan_changes(before, after)
    if not changed:
        return display._("no bike changed since the plan of {when}").format(when=when)
    parts = []
    for bike, moves in changed.items():
        pairs: dict[str, list[str]] = {}
        for key, _session, old, new in moves:
            pair = f"{_plain(display, old)}→{_plain(display, new)}"
            if pair not in pairs.setdefault(key, []):
                pairs[key].append(pair)
        parts.append(" ".join([bike] + [f"{display._(_SHORT[k])} {'/'.join(v)}" for k, v in pairs.items()]))
    return display.n_(
        "{count} bike changed since the plan of {when}: {changes}",
        "{count} bikes changed since the plan of {when}: {changes}",
        len(changed),
    ).format(count=len(changed), when=when, changes=", ".join(parts))


def add_record_parser(sub) -> None:
    from tuning.history.outcomes import AFR_RANGE, COLUMNS

    p = sub.add_parser(
        "record",
        help="record what was fitted and seen at an event (an outcomes CSV) in the history",
        description="Record an outcomes file in the history: one row per bike and session (or 'after' for "
        "after the event) with the columns bike and session and any of " + ", ".join(COLUMNS[2:]) + ". "
        f"throttle is a fraction 0..1 or a percent 0..100; wideband_afr an air-fuel ratio {AFR_RANGE[0]:g}..{AFR_RANGE[1]:g}; "
        "plug lean, ok or rich; main_jet, pilot_jet, clip and mixture_screw_turns what was fitted where it "
        "differs from the plan; returned_to_proven yes or no. Every row is checked first: any bad row is "
        "reported as file:line: column: problem (exit 2) and nothing of the file is recorded. Recording the "
        "same file again changes nothing.",
    )
    p.add_argument("fleet", metavar="FLEET", help="fleet file (YAML)")
    p.add_argument("event", metavar="EVENT", help="event file (YAML) the outcomes are from")
    p.add_argument("outcomes", metavar="OUTCOMES", help="outcomes file (CSV, UTF-8, a header line)")
    add_history_options(p, can_skip=False)
    p.set_defaults(func=cmd_record)


def cmd_record(args) -> int:
    from tuning.config import display_for, load_event, load_fleet
    from tuning.config.spec import one_line
    from tuning.history import open_history, read_outcomes

    fleet = load_fleet(args.fleet)
    event = load_event(args.event, fleet)
    sha, rows = read_outcomes(args.outcomes, fleet, event)  # every row checked before anything is written
    place = _history_place(args, args.fleet)
    with open_history(place) as history:
        done = history.record_outcomes(fleet, event, args.outcomes, sha, rows)
    d = display_for(event, None, None)
    if done.again:
        text = d._("{file} was recorded before: nothing changed in {history}")
    else:
        text = d.n_(
            "recorded {rows} row of {file} in {history}", "recorded {rows} rows of {file} in {history}", done.rows
        )
    print(one_line(text.format(rows=done.rows, file=args.outcomes, history=_shown_place(place))))
    return EXIT_OK


def _shown_place(place: str) -> str:
    from tuning.history.store import _shown

    return _shown(place)


def add_history_parser(sub) -> None:
    p = sub.add_parser(
        "history",
        help="show what each bike ran, where, in what air, and what was seen",
        description="Show the history: per bike, every event with a plan or outcomes: site and days, "
        "density altitude and temperature of the plan, the settings planned and fitted, plug readings, "
        "wideband readings (count, leanest and richest) and remarks. Reads only; creates nothing.",
    )
    p.add_argument("bike", metavar="BIKE", nargs="?", help="only this bike")
    p.add_argument(
        "--fleet",
        metavar="FLEET",
        default=None,
        help=f"only this fleet's bikes; its folder holds the default history ({HISTORY_FILE})",
    )
    add_history_options(p, can_skip=False)
    add_display_options(p, event_file=False)
    p.set_defaults(func=cmd_history)


def cmd_history(args) -> int:
    from pathlib import Path

    from rich.console import Console

    from tuning.config import display_for, load_fleet
    from tuning.history import is_url, open_history
    from tuning.report.history_table import history_table

    fleet = load_fleet(args.fleet) if args.fleet else None
    place = _history_place(args, args.fleet or "")
    if not is_url(place) and not Path(place).is_file():
        raise UserError(f"--history: no history at {place}; plan, build or record first, or name it with --history")
    display = display_for(None, args.units, args.language)
    with open_history(place) as history:
        table = history_table(history, fleet.name if fleet else None, args.bike, display)
    if table is None:
        print(display._("nothing recorded for {what}").format(what=args.bike or _shown_place(place)))
        return EXIT_OK
    Console(highlight=False, soft_wrap=False).print(table)
    return EXIT_OK


# --- main ------------------------------------------------------------------------------
def make_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="carbfleet",
        description="Re-jet a fleet of carbureted off-road motorcycles for an event's "
        "elevation and weather. Estimates only: confirm by a plug reading before hard riding.",
    )
    parser.add_argument("--debug", action="store_true", help="show tracebacks")
    parser.add_argument("--version", action="version", version=f"carbfleet {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    add_air_parser(sub)
    add_check_parsers(sub)
    add_plan_parser(sub)
    add_build_parser(sub)
    add_example_parser(sub)
    add_record_parser(sub)
    add_history_parser(sub)
    return parser


def _interrupt(signum, _frame):
    """SIGTERM and SIGHUP stop carbfleet as Ctrl-C does: kernels stopped, temporary files removed."""
    raise KeyboardInterrupt(signal.Signals(signum).name)


@contextlib.contextmanager
def _stop_signals_interrupt():
    """Within the block, SIGTERM and SIGHUP raise KeyboardInterrupt (main thread only)."""
    previous = {}
    try:
        for number in (signal.SIGTERM, signal.SIGHUP):
            with contextlib.suppress(ValueError, OSError):  # not the main thread, or no such signal
                previous[number] = signal.signal(number, _interrupt)
        yield
    finally:
        for number, handler in previous.items():
            signal.signal(number, handler)


def _quiet_stdout() -> None:
    """After a closed pipe (``carbfleet check ... | head``), send the rest of stdout nowhere."""
    with contextlib.suppress(OSError, ValueError, AttributeError):
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())


def main(argv: list[str] | None = None) -> int:
    parser = make_parser()
    args = parser.parse_args(argv)
    try:
        with _stop_signals_interrupt():
            status = int(args.func(args) or EXIT_OK)
            sys.stdout.flush()
            return status
    except CarbfleetError as exc:
        if args.debug:
            raise
        print(f"carbfleet {args.command}: {exc}" if "\n" not in str(exc) else str(exc), file=sys.stderr)
        return exc.exit_code
    except BrokenPipeError:
        _quiet_stdout()  # the reader stopped reading: not an error worth a traceback
        return EXIT_BUILD
    except KeyboardInterrupt as exc:
        why = f" ({exc.args[0]})" if exc.args else ""
        print(f"carbfleet {args.command}: interrupted{why}; nothing was changed", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
