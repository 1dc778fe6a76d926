"""The ``carbfleet`` command: parses arguments, calls one function per verb, sets the exit code.

Exit codes: 0 success, 1 build failure, 2 user error (bad file, value or name).
"""

from __future__ import annotations

import argparse
import sys

from tuning.errors import CarbfleetError

EXIT_OK, EXIT_BUILD, EXIT_USER = 0, 1, 2


# --- air -------------------------------------------------------------------------------
def add_air_parser(sub) -> None:
    p = sub.add_parser("air", help="air state for one condition")
    p.set_defaults(func=cmd_air)


def cmd_air(args) -> int:
    raise NotImplementedError("carbfleet air")


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
        "recommendations.csv (units in the column names: degC, hPa, m, mm, turns) and pick-list.csv. "
        "Estimates only: confirm by a plug reading before hard riding.",
    )
    p.add_argument("fleet", metavar="FLEET", help="fleet file (YAML)")
    p.add_argument("event", metavar="EVENT", help="event file (YAML) naming its weather table")
    p.add_argument("--out", metavar="DIR", required=True, help="output folder (created when missing)")
    p.set_defaults(func=cmd_plan)


def cmd_plan(args) -> int:
    from tuning.config import load_event, load_fleet
    from tuning.plan import make_plan, write_plan_files

    fleet = load_fleet(args.fleet)
    event = load_event(args.event, fleet)
    plan = make_plan(fleet, event)
    paths = write_plan_files(plan, args.out)
    entries = plan["entries"]
    changed = sum(
        1 for e in entries if any(e["settings"][k]["steps"] for k in ("main_jet", "pilot_jet", "clip"))
        or e["settings"]["mixture_screw"]["change_turns"]
    )
    short = sum(p["short"] or 0 for p in plan["pick_list"])
    print(f"{plan['fleet']} at {plan['event']} ({plan['site']['name']}, {plan['site']['elevation_m']:g} m): "
          f"{len({e['bike'] for e in entries})} bikes x {len(plan['sessions'])} sessions, "
          f"{changed} with changes, {plan['warnings_count']} warnings, {short} jets short")
    for e in entries:
        m, pj = e["settings"]["main_jet"], e["settings"]["pilot_jet"]
        print(f"  {e['bike']:<10} {e['session']:<14} main {m['current']}->{m['recommended']}  "
              f"pilot {pj['current']}->{pj['recommended']}  clip {e['settings']['clip']['current']}->"
              f"{e['settings']['clip']['recommended']}  factor {e['summary']['area_factor_mean']}"
              + (f"  [{', '.join(sorted({w['code'] for w in e['warnings']}))}]" if e["warnings"] else ""))
    for path in paths:
        print(f"wrote {path}")
    return EXIT_OK


# --- build -----------------------------------------------------------------------------
def add_build_parser(sub) -> None:
    p = sub.add_parser("build", help="build setup sheets and the fleet report")
    p.set_defaults(func=cmd_build)


def cmd_build(args) -> int:
    raise NotImplementedError("carbfleet build")


# --- main ------------------------------------------------------------------------------
def make_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="carbfleet",
        description="Re-jet a fleet of carbureted off-road motorcycles for an event's "
        "elevation and weather. Estimates only: confirm by a plug reading before hard riding.",
    )
    parser.add_argument("--debug", action="store_true", help="show tracebacks")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    add_air_parser(sub)
    add_check_parsers(sub)
    add_plan_parser(sub)
    add_build_parser(sub)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = make_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.func(args) or EXIT_OK)
    except CarbfleetError as exc:
        if args.debug:
            raise
        print(f"carbfleet {args.command}: {exc}" if "\n" not in str(exc) else str(exc), file=sys.stderr)
        return exc.exit_code
    except KeyboardInterrupt:
        print(f"carbfleet {args.command}: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
