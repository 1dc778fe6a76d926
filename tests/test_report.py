"""tuning.report without the notebook build: file names, formatting, sheet and summary rendering.

The plan documents come from tests/report_fixtures.py (invented values); these tests check that
the report SHOWS what the plan holds, never physics.
"""

from __future__ import annotations

import html
import re
from html.parser import HTMLParser
from pathlib import Path

import pypdf
import pytest
import report_fixtures

from tuning.errors import UserError
from tuning.plan.notices import BIKE_CODES, CODES
from tuning.report import CAUTIONS, render, tables
from tuning.report.names import safe_file_names, safe_stem

# Windows reserved device names and characters: Microsoft, "Naming Files, Paths, and Namespaces"
# (learn.microsoft.com, Win32 file I/O documentation).
WINDOWS_RESERVED_CHARS = set('<>:"/\\|?*')
WINDOWS_RESERVED_NAMES = {"CON", "PRN", "AUX", "NUL", "COM1", "COM9", "LPT1", "LPT9"}


class CellReader(HTMLParser):
    """Collect the text of every ``<td data-circuit=... data-session=...>`` of a sheet."""

    def __init__(self):
        super().__init__()
        self.cells: dict[tuple[str, str], str] = {}
        self._key = None
        self._depth = 0

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "td" and "data-circuit" in a:
            self._key, self._depth = (a["data-circuit"], a["data-session"]), 0
            self.cells[self._key] = ""
        elif self._key and tag == "td":
            self._depth += 1

    def handle_endtag(self, tag):
        if tag == "td" and self._key:
            if self._depth == 0:
                self._key = None
            else:
                self._depth -= 1

    def handle_data(self, data):
        if self._key:
            self.cells[self._key] += data


def read_cells(page: str) -> dict[tuple[str, str], str]:
    reader = CellReader()
    reader.feed(page)
    return reader.cells


@pytest.mark.parametrize(
    "bike_id",
    [
        "../x",
        "..",
        "a/b\\c",
        "<b>T1</b>",
        "CON",
        "nul.txt",
        'T:1?*|"',
        " .hidden",
        "Ærø-7",
        "",
        "\x1b[31mT01",
        "T0\r2\x07",
        "\x1b",
    ],
)
def test_safe_stem_is_a_plain_file_name(bike_id):
    stem = safe_stem(bike_id)
    assert stem and stem not in (".", "..") and ".." not in stem
    assert not set(stem) & WINDOWS_RESERVED_CHARS and "\x00" not in stem
    assert stem.split(".")[0].upper() not in WINDOWS_RESERVED_NAMES
    assert not stem.startswith(".") and not stem.endswith((".", " "))
    assert re.fullmatch(r"[A-Za-z0-9._-]+", stem)


def test_safe_file_names_resolve_collisions_case_insensitively():
    ids = ["T/1", "T:1", "t_1", "T_1", "T2"]
    names = safe_file_names(ids)
    assert len({n.lower() for n in names.values()}) == len(ids)
    assert names["T2"] == "T2"
    # Independent of order: the same id gets the same name in another order.
    assert safe_file_names(list(reversed(ids))) == names


@pytest.mark.parametrize(
    "value, text",
    [
        (1.5, "1½"),
        (2.0, "2"),
        (0.25, "¼"),
        (2.75, "2¾"),
        (-0.5, "−½"),
        (1.3, "1.30"),
        (None, "–"),
    ],
)
def test_turns_in_quarters(value, text):  # common practice: screws are set in quarter turns
    assert tables.turns(value) == text


def test_window_is_site_local_time_as_given():
    # 2026-06-13 is a Saturday (ISO 8601 calendar; Python's datetime as the reference).
    assert tables.window("2026-06-13T08:00:00+01:00", "2026-06-13T09:30:00+01:00") == "Sat 13 Jun 08:00–09:30"


@pytest.fixture(scope="module")
def plan4():
    return report_fixtures.make_plan(n_bikes=4, n_sessions=4)


@pytest.mark.parametrize(
    "paper, size_pt",
    [
        ("a4", (595.28, 841.89)),  # ISO 216 A4: 210 x 297 mm = 595.28 x 841.89 pt (1 pt = 1/72 in)
        ("letter", (612.0, 792.0)),  # ANSI/ASME Y14.1 letter: 8.5 x 11 in = 612 x 792 pt
    ],
)
def test_sheet_is_one_page_of_the_paper_with_four_sessions(plan4, tmp_path, paper, size_pt):
    entries = tables.entries_by_bike(plan4)["T002"]
    pages = render.write_sheet(plan4, entries, tmp_path / "s.html", tmp_path / "s.pdf", paper)
    reader = pypdf.PdfReader(tmp_path / "s.pdf")
    assert pages == len(reader.pages) == 1
    box = reader.pages[0].mediabox
    assert float(box.width) == pytest.approx(size_pt[0], abs=0.05)
    assert float(box.height) == pytest.approx(size_pt[1], abs=0.05)


def test_crowded_sheet_still_fits_one_page(plan4, tmp_path):
    entries = [dict(e) for e in tables.entries_by_bike(plan4)["T001"]]
    session_codes = [(code, severity, text) for code, (severity, text) in CODES.items() if code not in BIKE_CODES]
    for i, e in enumerate(entries):  # every session warning code, long messages, two differing by session
        e["warnings"] = [
            {"code": code, "severity": severity, "message": f"{text}; " * 2 + (f"session {i}" if k < 2 else "")}
            for k, (code, severity, text) in enumerate(session_codes)
        ]
    pages = render.write_sheet(plan4, entries, tmp_path / "s.html", tmp_path / "s.pdf", "letter")
    reader = pypdf.PdfReader(tmp_path / "s.pdf")
    assert pages == len(reader.pages) in (1, 2)
    if pages == 2:  # a clean second page: the form, under the bike id
        assert reader.pages[1].extract_text().split()[0] == "T001"
    text = " ".join(" ".join(p.extract_text() for p in reader.pages).split())
    for code in CODES:  # no code dropped (the bike notices of the fixture's record included)
        assert code in text or code in BIKE_CODES - {w["code"] for w in plan4["bikes"][0]["notices"]}, code
    assert "DANGER" in text


def test_sheet_html_shows_every_setting_of_the_plan(plan4):
    for _bike, entries in tables.entries_by_bike(plan4).items():
        cells = read_cells(render.sheet_html(plan4, entries))
        for i, e in enumerate(entries):
            s = e["settings"]
            before = entries[i - 1]["settings"] if i else None  # the words are given where the value changes
            assert str(s["main_jet"]["recommended"]) in cells[("main_jet", e["session"])]
            if before is None or before["main_jet"]["recommended"] != s["main_jet"]["recommended"]:
                assert s["main_jet"]["change"] in cells[("main_jet", e["session"])]
            assert str(s["pilot_jet"]["recommended"]) in cells[("pilot_jet", e["session"])]
            assert str(s["clip"]["recommended"]) in cells[("clip", e["session"])]
            assert tables.turns(s["mixture_screw"]["recommended_turns"]) in cells[("mixture_screw", e["session"])]
            if (
                before is None
                or before["mixture_screw"]["recommended_turns"] != s["mixture_screw"]["recommended_turns"]
            ):
                assert s["mixture_screw"]["change"] in cells[("mixture_screw", e["session"])]
        assert str(entries[0]["settings"]["main_jet"]["current"]) in cells[("main_jet", "fitted")]


def test_bike_id_is_escaped_everywhere(tmp_path):
    plan = report_fixtures.make_plan(bike_ids=["<b>T1</b>", "../x"], n_sessions=1)
    entries = tables.entries_by_bike(plan)["<b>T1</b>"]
    page = render.sheet_html(plan, entries)
    assert "<b>T1</b>" not in page
    assert html.escape("<b>T1</b>") in page  # the reference escaper: Python's html.escape
    summary = render.summary_html(plan)
    assert "<b>T1</b>" not in summary and html.escape("<b>T1</b>") in summary


def _renamed_plan(bike_ids: list[str], names: dict[str, str]) -> dict:
    """The invented plan with awkward bike ids and fleet, event, site, model and session names."""
    plan = report_fixtures.make_plan(bike_ids=bike_ids, n_sessions=2)
    plan["fleet"], plan["event"], plan["site"]["name"] = names["fleet"], names["event"], names["site"]
    renamed = {s["name"]: s["name"] + names["session"] for s in plan["sessions"]}
    for s in plan["sessions"]:
        s["name"] = renamed[s["name"]]
    for e in plan["entries"]:
        e["session"], e["model"] = renamed[e["session"]], names["model"]
    return plan


def test_every_name_is_escaped_on_sheet_and_summary():
    names = {
        "fleet": "<i>F</i>",
        "event": "<b>E&amp;</b>",
        "site": "<u>S</u>",
        "model": "<s>M</s>",
        "session": " <em>x</em>",
    }
    plan = _renamed_plan(["<b>T1</b>"], names)
    pages = {
        "sheet": render.sheet_html(plan, plan["entries"]),
        "summary": render.summary_html(plan),
        "index": render.index_html(plan, []),
    }
    for which, page in pages.items():
        for key, name in names.items():
            if which == "index" and key == "session":
                continue  # the front page names no session
            assert name.strip() not in page and html.escape(name.strip()) in page, (which, key)


def test_control_characters_in_names_leave_the_chart_and_page_whole(tmp_path):
    # XML cannot hold an ESC or a BEL: the pages and the summary's chart show such names escaped
    # (as the terminal does) instead of the SVG converter aborting the process; both still print.
    names = {"fleet": "F\x1b[1m", "event": "E\r\x07", "site": "S\x1b[2J", "model": "M\x07", "session": "\x1b[31m"}
    plan = _renamed_plan(["\x1b[31mT01", "T0\r2\x07"], names)
    for bike, entries in tables.entries_by_bike(plan).items():
        assert render.write_sheet(plan, entries, tmp_path / "s.html", tmp_path / "s.pdf") == 1, bike
        assert len(pypdf.PdfReader(tmp_path / "s.pdf").pages) == 1
        page = (tmp_path / "s.html").read_text(encoding="utf-8")
        assert not {"\x1b", "\x07"} & set(page)
        assert r"Session A\x1b[31m" in page  # the session named, escaped
    render.write_pdf(render.summary_html(plan, links=False), tmp_path / "summary.pdf", tmp_path)
    assert len(pypdf.PdfReader(tmp_path / "summary.pdf").pages) >= 1


def test_cautions_are_on_sheet_and_summary(plan4):
    entries = tables.entries_by_bike(plan4)["T001"]
    # DESIGN.md section 6, in substance: the key phrases must be there.
    for phrase in (
        "Estimates only",
        "plug reading",
        "choose the richer",
        "seize",
        "cold engine",
        "service manual",
        "qualified mechanic",
        "baseline settings",
    ):
        assert phrase in CAUTIONS
    assert html.escape(CAUTIONS, quote=False).replace("'", "&#39;") in render.sheet_html(plan4, entries)
    assert html.escape(CAUTIONS, quote=False).replace("'", "&#39;") in render.summary_html(plan4)


def test_summary_groups_identical_change_sets_and_lists_jets_to_order_first(plan4):
    rows = tables.summary_rows(plan4, safe_file_names([e["bike"] for e in plan4["entries"]]))
    members = [b for batch in rows["batches"] for b in batch["bikes"]]
    assert sorted(members) == sorted({e["bike"] for e in plan4["entries"]})
    by_bike = tables.entries_by_bike(plan4)
    for batch in rows["batches"]:
        sets = {tables.change_set(by_bike[b]) for b in batch["bikes"]}
        assert len(sets) == 1
    to_order = [r["to_order"] > 0 for r in rows["pick_list"]]
    assert any(to_order) and to_order == sorted(to_order, reverse=True)


def test_unknown_paper_is_a_user_error():
    with pytest.raises(UserError, match="paper"):
        render.page_css("a3", "")


def test_unknown_bike_is_a_user_error(plan4, tmp_path):
    with pytest.raises(UserError, match="not in the plan"):
        render.render_setup_sheets(plan4, tmp_path, ["nope"])


def test_no_network_resource_in_rendered_pages(plan4):
    entries = tables.entries_by_bike(plan4)["T001"]
    for page in (render.sheet_html(plan4, entries), render.summary_html(plan4), render.index_html(plan4, [])):
        assert not re.search(r"""(src|href)\s*=\s*["']?\s*(https?:)?//""", page)
        assert "@import" not in page and "<script" not in page
        # Only XML namespace names may mention http: they are identifiers, not resources.
        rest = re.sub(r'xmlns(:\w+)?="http://www\.w3\.org/[^"]*"', "", page)
        assert "http://" not in rest and "https://" not in rest


def test_the_report_keeps_no_warning_vocabulary_of_its_own():
    # one home for codes, severities and meanings: tuning/plan/notices.py; the report imports them
    import tuning.report

    assert not hasattr(tuning.report, "WARNING_CODES")
    folder = Path(__file__).resolve().parents[1] / "tuning" / "report"
    for path in [*folder.glob("*.py"), *(folder / "templates").glob("*")]:
        text = path.read_text(encoding="utf-8")
        for code, (_severity, meaning) in CODES.items():
            assert meaning not in text, (path.name, code)


def test_values_not_on_record_show_as_dashes(plan4):
    entries = [json_copy(e) for e in tables.entries_by_bike(plan4)["T001"]]
    for e in entries:  # the plan's shape for a bike without a needle on record (tuning.plan, no-needle)
        e["settings"]["clip"].update(
            needle=None,
            current=None,
            recommended=None,
            grooves=None,
            steps=0,
            change="no needle or clip on record: not planned",
        )
    rows = tables.sheet_rows(entries)
    clip = next(c for c in rows["circuits"] if c["key"] == "clip")
    assert clip["current"] == "–" and "None" not in clip["detail"]
    assert "None" not in render.sheet_html(plan4, entries)


def json_copy(value):
    import json

    return json.loads(json.dumps(value))


def test_fixture_plan_keeps_the_plan_contract():
    # consistency check (not validation): the invented plan the report tests use must have the
    # shape that tuning.plan produces, as tuning/schemas/recommendations.schema.json states it
    import json

    import jsonschema

    schema = json.loads((Path(__file__).parents[1] / "tuning/schemas/recommendations.schema.json").read_text())
    jsonschema.Draft202012Validator(schema).validate(report_fixtures.make_plan(3, 4))


def test_control_characters_in_names_never_reach_the_page():
    # an ESC or BEL in a bike id garbles the PDF's text; the page shows them escaped
    from tuning.report import render as render_module

    plan = report_fixtures.make_plan(n_bikes=1, n_sessions=1, bike_ids=["T\x1b[31m1\x07"])
    entries = plan["entries"]
    page = render_module.sheet_html(plan, entries)
    assert "\x1b" not in page and "\x07" not in page
    assert "T\\x1b[31m1\\x07" in page


@pytest.mark.parametrize("paper", ["a4", "letter"])
def test_eight_sessions_and_a_long_note_fit_one_page_or_a_clean_second(paper, tmp_path):
    """Issue 10: up to 8 sessions and 300 characters of notes give one page per bike, or a
    second page that starts with the bike id and holds only the hand-filled form."""
    plan = report_fixtures.make_plan(n_bikes=2, n_sessions=8)
    note = ("Idles high when hot; check the throttle cable free play before each session. " * 5)[:300]
    for e in plan["entries"]:
        e["notes"] = note
    for bike, entries in tables.entries_by_bike(plan).items():
        pages = render.write_sheet(plan, entries, tmp_path / "s.html", tmp_path / "s.pdf", paper)
        reader = pypdf.PdfReader(tmp_path / "s.pdf")
        assert pages == len(reader.pages) in (1, 2), bike
        first = " ".join(reader.pages[0].extract_text().split())
        for e in entries:  # every session's headline on the first page
            assert e["session"] in first
        assert note[:60] in first
        if pages == 2:
            second = reader.pages[1].extract_text().split()
            assert second[0] == bike
            assert "DANGER" not in " ".join(second)


@pytest.mark.parametrize("n_bikes, n_sessions", [(3, 2), (12, 4), (40, 4)])
def test_no_summary_page_holds_the_cautions_alone(n_bikes, n_sessions, tmp_path):
    plan = report_fixtures.make_plan(n_bikes=n_bikes, n_sessions=n_sessions)
    render.write_pdf(render.summary_html(plan, links=False), tmp_path / "s.pdf", tmp_path)
    caution = " ".join(CAUTIONS.split())
    for i, page in enumerate(pypdf.PdfReader(tmp_path / "s.pdf").pages):
        text = " ".join(page.extract_text().split())
        rest = text.replace(caution, "").replace("CAUTIONS.", "").replace("Cautions.", "")
        assert len(rest) > 200, (i, text[:200])  # more on the page than the cautions and the footer


def test_sheets_laid_out_as_one_document_give_each_bike_its_own_page(tmp_path):
    # regression check of the batched rendering (render.write_sheets), not validation: four bikes
    # of two sessions in one WeasyPrint document, one of them crowded enough to need a later
    # layout on its own; each must come out as if rendered alone
    plan = report_fixtures.make_plan(n_bikes=4, n_sessions=2)
    grouped = {bike: [dict(e) for e in entries] for bike, entries in tables.entries_by_bike(plan).items()}
    session_codes = [(code, severity, text) for code, (severity, text) in CODES.items() if code not in BIKE_CODES]
    for i, e in enumerate(grouped["T003"]):
        e["warnings"] = [
            {"code": code, "severity": severity, "message": f"{text}; " * 2 + f"session {i}"}
            for code, severity, text in session_codes
        ]
    jobs = [
        render.SheetJob(entries, tmp_path / f"{bike}.html", tmp_path / f"{bike}.pdf", f"sheet-{bike}")
        for bike, entries in grouped.items()
    ]
    assert render.write_sheets(plan, jobs, "a4") == [1] * len(jobs)
    for bike, entries in grouped.items():
        reader = pypdf.PdfReader(tmp_path / f"{bike}.pdf")
        assert len(reader.pages) == 1, bike
        text = " ".join(reader.pages[0].extract_text().split())
        assert bike in text and f"sheet {bike}" in text, bike  # the body and the page footer
        # other bikes are named only as where a jet comes from ("off bike T001"), never their sheets
        own_words = re.sub(r"off bike T\d+", "", text)
        assert not [other for other in grouped if other != bike and other in own_words], bike
        alone = tmp_path / "alone"
        alone.mkdir(exist_ok=True)
        assert render.write_sheet(plan, entries, alone / "s.html", alone / "s.pdf", "a4") == 1
        assert " ".join(pypdf.PdfReader(alone / "s.pdf").pages[0].extract_text().split()) == text, bike
        assert bike in reader.metadata.title
        page = (tmp_path / f"{bike}.html").read_text(encoding="utf-8")
        assert page.startswith("<!DOCTYPE html>") and page.count('<div class="sheet ') == 1  # its own page
        cells = read_cells(page)
        for e in entries:
            main = e["settings"]["main_jet"]
            assert str(main["recommended"]) in cells[("main_jet", e["session"])], bike
        assert page == (alone / "s.html").read_text(encoding="utf-8"), bike  # as if rendered alone

    def density(bike):
        return re.search(
            r'<div class="sheet ([a-z ]+)"', (tmp_path / f"{bike}.html").read_text(encoding="utf-8")
        ).group(1)

    order = [d for d, _ in render.LAYOUTS]
    assert order.index(density("T003")) >= order.index(density("T001"))  # a layout no earlier than the others'
    crowded = (tmp_path / "T003.html").read_text(encoding="utf-8")
    assert "also in" in crowded and "also in" not in (tmp_path / "T001.html").read_text(encoding="utf-8")  # condensed


def test_remembered_layouts_give_the_sheets_they_would_get_anyway(tmp_path):
    # regression check of render.write_sheets' memory of layouts by sheet shape (a speed-up, not
    # validation): the same plan rendered with and without it gives the same layout per sheet
    plan = report_fixtures.make_plan(n_bikes=6, n_sessions=4)
    grouped = tables.entries_by_bike(plan)
    densities = {}
    for memory in (None, {}):
        folder = tmp_path / ("with" if memory is not None else "without")
        folder.mkdir()
        jobs = [
            render.SheetJob(entries, folder / f"{bike}.html", folder / f"{bike}.pdf", f"sheet-{bike}")
            for bike, entries in grouped.items()
        ]
        for k in range(0, len(jobs), 3):
            assert render.write_sheets(plan, jobs[k : k + 3], "a4", fitted=memory) == [1] * len(jobs[k : k + 3])
        densities[memory is not None] = [
            re.search(r'<div class="sheet ([a-z ]+)"', job.html_path.read_text(encoding="utf-8")).group(1)
            for job in jobs
        ]
    assert densities[True] == densities[False]
