"""The plan's files: ``recommendations.json`` (the document), ``recommendations.csv`` (one row per
bike × session) and ``pick-list.csv`` (one row per jet size any bike fits or gives up)."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

from tuning.output import write_file_set

__all__ = ["CSV_COLUMNS", "PICK_LIST_COLUMNS", "PLAN_FILE_SIGNATURES", "plan_rows", "write_plan_files"]

PICK_LIST_COLUMNS = ("family", "size", "fitted_now", "in_stock", "needed", "to_order")


CSV_COLUMNS = (
    "bike",
    "model",
    "session",
    "start",
    "end",
    "air_temperature_C_min",
    "air_temperature_C_max",
    "station_pressure_hPa_mean",
    "relative_humidity_pct_mean",
    "density_altitude_m_min",
    "density_altitude_m_max",
    "area_factor_min",
    "area_factor_mean",
    "area_factor_max",
    "power_vs_reference_pct",
    "main_jet_family",
    "main_jet_current",
    "main_jet_ideal",
    "main_jet_recommended",
    "main_jet_stock_choice",
    "main_jet_steps",
    "main_jet_change",
    "pilot_jet_family",
    "pilot_jet_current",
    "pilot_jet_ideal",
    "pilot_jet_recommended",
    "pilot_jet_stock_choice",
    "pilot_jet_steps",
    "pilot_jet_change",
    "needle",
    "clip_current",
    "clip_recommended",
    "clip_change",
    "clip_assumed_geometry",
    "mixture_screw_kind",
    "mixture_screw_current_turns",
    "mixture_screw_recommended_turns",
    "mixture_screw_change_turns",
    "mixture_screw_change",
    "float_level_mm",
    "rejet_below_C",
    "rejet_below_jet",
    "rejet_above_C",
    "rejet_above_jet",
    "warnings",
    "main_jet_source",
    "pilot_jet_source",
    "danger",
)


def _csv_value(value):
    """One CSV cell: null as empty, booleans as ``true``/``false``, numbers as they are.

    Text that a spreadsheet would take for a formula (it begins with ``=``, ``+``, ``-``, ``@``,
    a tab or a carriage return: a bike id, model, session or family name from the user's files)
    gets a leading ``'``, which spreadsheets read as "this cell is text" (OWASP, "CSV Injection").
    Numbers are never text here, so a negative number stays a number.
    """
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str) and value.startswith(("=", "+", "-", "@", "\t", "\r")):
        return "'" + value
    return value


def _csv_text(header, rows) -> str:
    r"""The CSV file: a header, then one record per row (cells by :func:`_csv_value`).

    Python 3.11's writer quotes a cell holding a line feed but not one holding a lone carriage
    return (the line terminator is ``\n``); a reader would split that record in two. A row with a
    carriage return in any cell is therefore written with every cell quoted: still one record.
    """
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    quoted = csv.writer(buffer, lineterminator="\n", quoting=csv.QUOTE_ALL)
    writer.writerow(header)
    for row in rows:
        cells = [_csv_value(v) for v in row]
        (quoted if any(isinstance(c, str) and "\r" in c for c in cells) else writer).writerow(cells)
    return buffer.getvalue()


def plan_rows(plan: dict) -> list[list]:
    """The rows of ``recommendations.csv`` (one per bike × session), in :data:`CSV_COLUMNS` order."""
    rows = []
    notices = {b["bike"]: b["notices"] for b in plan.get("bikes", [])}
    for e in plan["entries"]:
        s, m, p, c, w = (
            e["summary"],
            e["settings"]["main_jet"],
            e["settings"]["pilot_jet"],
            e["settings"]["clip"],
            e["settings"]["mixture_screw"],
        )
        j = e["rejet_temperatures_C"]
        rows.append(
            [
                e["bike"],
                e["model"],
                e["session"],
                e["start"],
                e["end"],
                s["air_temperature_C_min"],
                s["air_temperature_C_max"],
                s["station_pressure_hPa_mean"],
                s["relative_humidity_pct_mean"],
                s["density_altitude_m_min"],
                s["density_altitude_m_max"],
                s["area_factor_min"],
                s["area_factor_mean"],
                s["area_factor_max"],
                s["power_vs_reference_pct"],
                m["family"],
                m["current"],
                m["ideal"],
                m["recommended"],
                m["stock_choice"],
                m["steps"],
                m["change"],
                p["family"],
                p["current"],
                p["ideal"],
                p["recommended"],
                p["stock_choice"],
                p["steps"],
                p["change"],
                c["needle"],
                c["current"],
                c["recommended"],
                c["change"],
                c["assumed_geometry"],
                w["kind"],
                w["current_turns"],
                w["recommended_turns"],
                w["change_turns"],
                w["change"],
                e["settings"]["float_level_mm"],
                j["below"],
                j["below_jet"],
                j["above"],
                j["above_jet"],
                ";".join(x["code"] for x in [*e["warnings"], *notices.get(e["bike"], [])]),
                m["source"]["text"],
                p["source"]["text"],
                any(x["severity"] == "danger" for x in e["warnings"]),
            ]
        )
    return rows


def write_plan_files(plan: dict, out_dir) -> list[Path]:
    """Write ``recommendations.json``, ``recommendations.csv`` and ``pick-list.csv`` as one set.

    All three are new, or (when anything fails, a full disk included) all three are as they
    were; an existing file of the same name is replaced only when carbfleet wrote it
    (:func:`tuning.output.write_file_set`). Unwritable places raise a one-line error.

    Parameters
    ----------
    plan : dict
        A document from :func:`make_plan`.
    out_dir : path-like
        Output folder (created when missing).

    Returns
    -------
    list of pathlib.Path
        The files written, in the order above.
    """
    texts = {
        "recommendations.json": json.dumps(plan, sort_keys=False, indent=1, ensure_ascii=False, allow_nan=False) + "\n",
        "recommendations.csv": _csv_text(CSV_COLUMNS, plan_rows(plan)),
        "pick-list.csv": _csv_text(PICK_LIST_COLUMNS, [[p[c] for c in PICK_LIST_COLUMNS] for p in plan["pick_list"]]),
    }
    return write_file_set(Path(out_dir), texts, PLAN_FILE_SIGNATURES)


#: How each plan file begins, so that an existing file is overwritten only when carbfleet wrote it.
PLAN_FILE_SIGNATURES = {
    "recommendations.json": '"format": "carbfleet-plan/',
    "recommendations.csv": "bike,model,session,",
    "pick-list.csv": "family,size,",
}
