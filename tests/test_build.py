"""The whole build: papermill-run notebooks -> folder of HTML, PDF, print pack, plan files.

One build of a small invented fleet (tests/report_fixtures.py, invented values) is shared by the
tests of this module; a second build checks byte-for-byte reproducibility, a third one with a
broken plan checks that a failed build keeps the previous output. Awkward bike ids (``../x``,
``<b>T1</b>``) are part of the fleet. These tests check that the output SHOWS the plan.
"""

from __future__ import annotations

import html
import json
import re
import shutil
from pathlib import Path

import pypdf
import pytest
import report_fixtures
from test_report import read_cells

from tuning.errors import BuildError
from tuning.report import pipeline, tables, turns_text
from tuning.report.names import safe_file_names

BIKES = ["T001", "../x", "<b>T1</b>", "K 7"]
SESSIONS = 4


@pytest.fixture(scope="module")
def plan():
    return report_fixtures.make_plan(n_sessions=SESSIONS, bike_ids=BIKES)


@pytest.fixture(scope="module")
def built(plan, tmp_path_factory):
    out = tmp_path_factory.mktemp("build") / "out"
    result = pipeline.build_from_plan(plan, out, quiet=True, workers=2)
    return out, result


def all_files(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def test_folder_has_every_output(built, plan):
    out, result = built
    names = safe_file_names(BIKES)
    expected = {
        "index.html",
        "fleet-summary.html",
        "fleet-summary.pdf",
        "print-pack.pdf",
        "recommendations.json",
        "notebooks/fleet-report.ipynb",
        "notebooks/fleet-report.html",
        "notebooks/setup-sheets-1.ipynb",
        "notebooks/setup-sheets-2.ipynb",
    }
    expected |= {f"sheets/{names[b]}.{ext}" for b in BIKES for ext in ("html", "pdf")}
    assert expected <= set(all_files(out))
    assert result.sheets == len(BIKES) and result.warnings == plan["warnings_count"]
    assert not list(out.parent.glob(".out.building-*"))  # no temporary folder left behind


def test_file_names_stay_inside_sheets(built):
    out, _ = built
    for path in out.rglob("*"):
        assert out in path.resolve().parents
    assert not (out.parent / "x.html").exists() and not (out / "x.html").exists()
    for p in (out / "sheets").iterdir():
        assert re.fullmatch(r"[A-Za-z0-9._-]+\.(html|pdf)", p.name)


def test_every_sheet_shows_the_plan_settings_in_html_and_pdf(built, plan):
    out, _ = built
    names = safe_file_names(BIKES)
    for bike, entries in tables.entries_by_bike(plan).items():
        page = (out / "sheets" / f"{names[bike]}.html").read_text(encoding="utf-8")
        cells = read_cells(page)
        pdf = pypdf.PdfReader(out / "sheets" / f"{names[bike]}.pdf")
        assert len(pdf.pages) == 1  # one printed page per bike, with four sessions
        text = " ".join(pdf.pages[0].extract_text().split())
        assert bike in text  # the id as printed (escaped in HTML, plain on paper)
        for i, e in enumerate(entries):
            s = e["settings"]
            for key, value in (
                ("main_jet", s["main_jet"]["recommended"]),
                ("pilot_jet", s["pilot_jet"]["recommended"]),
                ("clip", s["clip"]["recommended"]),
                ("mixture_screw", turns_text(s["mixture_screw"]["recommended_turns"])),
            ):
                assert str(value) in cells[(key, e["session"])]
                assert str(value) in text
            for key in ("main_jet", "pilot_jet", "clip", "mixture_screw"):
                value = "recommended_turns" if key == "mixture_screw" else "recommended"
                if i and entries[i - 1]["settings"][key][value] == s[key][value]:
                    continue  # the words are given where the setting changes, not repeated
                assert s[key]["change"] in cells[(key, e["session"])]
                assert " ".join(s[key]["change"].split()) in text
            assert e["session"] in text


def test_print_pack_is_summary_then_one_page_per_bike(built):
    out, _ = built
    summary_pages = len(pypdf.PdfReader(out / "fleet-summary.pdf").pages)
    pack = pypdf.PdfReader(out / "print-pack.pdf")
    assert len(pack.pages) == summary_pages + len(BIKES)
    firsts = [" ".join(pack.pages[summary_pages + i].extract_text().split()[:3]) for i in range(len(BIKES))]
    for bike, first in zip(BIKES, firsts):  # bike order as in the fleet file
        assert first.startswith(bike.split()[0])


def test_no_network_resource_in_any_html(built):
    out, _ = built
    pages = list(out.rglob("*.html"))
    assert len(pages) >= len(BIKES) + 4
    for page in pages:
        text = page.read_text(encoding="utf-8")
        assert not re.search(r"""(src|href)\s*=\s*["']?\s*(https?:)?//""", text), page
        assert "<script" not in text and "@import" not in text, page
        rest = re.sub(r'xmlns(:\w+)?="http://www\.w3\.org/[^"]*"', "", text)
        assert "http://" not in rest and "https://" not in rest, page


def test_bike_ids_are_escaped_in_every_page(built):
    out, _ = built
    for page in out.rglob("*.html"):
        text = page.read_text(encoding="utf-8")
        assert "<b>T1</b>" not in text, page
    index = (out / "index.html").read_text(encoding="utf-8")
    assert html.escape("<b>T1</b>") in index


def test_index_links_every_sheet(built):
    out, _ = built
    index = (out / "index.html").read_text(encoding="utf-8")
    hrefs = re.findall(r'href="([^"]+)"', index)
    for href in hrefs:
        assert (out / href).exists(), href
    sheets = sorted(f"sheets/{p.name}" for p in (out / "sheets").iterdir())
    assert len(sheets) == 2 * len(BIKES)  # an HTML and a PDF sheet per bike
    assert set(sheets) <= set(hrefs)


def test_executed_notebooks_carry_no_run_specific_data(built):
    out, _ = built
    notebooks = list((out / "notebooks").glob("*.ipynb"))
    assert notebooks
    for path in notebooks:
        nb = json.loads(path.read_text(encoding="utf-8"))
        assert "papermill" not in nb["metadata"]
        for cell in nb["cells"]:
            assert "execution" not in cell["metadata"] and "papermill" not in cell["metadata"]
            for output in cell.get("outputs", []):
                assert output["output_type"] != "error"
        text = path.read_text(encoding="utf-8")
        assert str(out.parent) not in text  # no temporary build path


def test_two_builds_are_byte_identical(built, plan, tmp_path):
    out, _ = built
    again = tmp_path / "again"
    pipeline.build_from_plan(plan, again, quiet=True, workers=2)
    first, second = all_files(out), all_files(again)
    assert first.keys() == second.keys()
    for name in first:
        assert first[name] == second[name], name


def test_failed_build_keeps_previous_output_and_names_the_bike(built, plan, tmp_path):
    out, _ = built
    target = tmp_path / "kept"
    shutil.copytree(out, target)
    before = all_files(target)
    broken = json.loads(json.dumps(plan))
    victim = next(e for e in broken["entries"] if e["bike"] == "K 7")
    victim["mixture_curve"] = {}  # a plan the sheet cannot render (no curve), for the last bike
    with pytest.raises(BuildError, match="K 7"):
        pipeline.build_from_plan(broken, target, quiet=True, workers=2)
    assert all_files(target) == before
    assert not list(tmp_path.glob(".kept.*"))


def test_shards_are_contiguous_and_cover_every_bike():
    items = [f"b{i}" for i in range(7)]
    parts = pipeline.shards(items, 3)
    assert [b for part in parts for b in part] == items and len(parts) == 3
    assert pipeline.shards(items[:1], 4) == [["b0"]]


def test_notebook_html_shows_outputs_and_hides_code(built):
    out, _ = built
    report = (out / "notebooks" / "fleet-report.html").read_text(encoding="utf-8")
    assert "Fleet summary" in report and "<svg" in report and "Work batches" in report
    sheets = (out / "notebooks" / "setup-sheets-1.html").read_text(encoding="utf-8")
    assert "setup sheets written" in sheets
    for page in (report, sheets):
        assert "load_plan" not in page and "render_fleet_report" not in page  # no code shown


def test_output_gets_the_permissions_of_the_umask(plan, tmp_path):
    # a folder served or shared with others must be readable as the umask says (not 0700/0600)
    import os
    import stat

    from tuning import output

    old = os.umask(0o022)
    output.umask.cache_clear()
    try:
        out = tmp_path / "served"
        pipeline.build_from_plan(report_fixtures.make_plan(n_bikes=1, n_sessions=1), out, quiet=True, workers=1)
    finally:
        os.umask(old)
        output.umask.cache_clear()
    assert stat.S_IMODE(out.stat().st_mode) == 0o755
    for path in out.rglob("*"):
        assert stat.S_IMODE(path.stat().st_mode) == (0o755 if path.is_dir() else 0o644), path


def test_the_trail_demo_builds_from_the_example_copy_and_shows_its_heights(tmp_path):
    """The invented trail-ride demo (a GPX route and a range of heights; issue 13), copied by
    ``carbfleet example`` and built: every sheet shows where each session is ridden and the height
    set for. The route's lowest and highest points are read here from the GPX file with the
    standard library's XML parser (not gpxpy, which the loader uses)."""
    import xml.etree.ElementTree as ET

    from tuning.cli import main

    assert main(["example", str(tmp_path / "demo")]) == 0
    demo = tmp_path / "demo"
    ns = {"g": "http://www.topografix.com/GPX/1/1"}
    heights = [
        float(e.text) for e in ET.parse(demo / "demo-trail-route.gpx").getroot().iterfind(".//g:trkpt/g:ele", ns)
    ]
    low, high = min(heights), max(heights)
    out = tmp_path / "out-trail"
    assert (
        main(
            ["build", str(demo / "demo-fleet.yaml"), str(demo / "demo-trail-event.yaml"), "--out", str(out), "--quiet"]
        )
        == 0
    )
    doc = json.loads((out / "recommendations.json").read_text())
    loop = next(s for s in doc["sessions"] if s["heights"]["source"] == "route")
    assert (loop["heights"]["elevation_m_min"], loop["heights"]["elevation_m_max"]) == (round(low, 1), round(high, 1))
    sheets = sorted((out / "sheets").glob("*.html"))
    assert len(sheets) == len({e["bike"] for e in doc["entries"]}) > 0
    said = f"ridden {low:.0f}…{high:.0f} m; set for {low:.0f} m; at {high:.0f} m "
    for sheet in sheets:
        assert said in html.unescape(sheet.read_text()), sheet.name
        assert (out / "sheets" / (sheet.stem + ".pdf")).stat().st_size > 0
    summary = html.unescape((out / "fleet-summary.html").read_text())
    assert "Where the sessions are ridden" in summary and "Route profile: demo-trail-route.gpx" in summary
