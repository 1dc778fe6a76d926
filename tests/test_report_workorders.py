"""What a mechanic sees of the plan's danger, jet sources, work orders and pick list (format /2).

The plans come from the invented scenarios of tests/scenarios.py (the shipped demo, and its
mirror image ``downhill``: proven at 1650 m, ridden at 120 m in frost, the direction that hurts
engines) planned by ``tuning.plan``. These tests check that the pages SHOW what the plan
document says; they check no physics.
"""

from __future__ import annotations

import html
import re
import warnings

import pypdf
import pytest
import scenarios
from test_report import read_cells

from tuning.config import load_event, load_fleet
from tuning.display import Display
from tuning.plan import make_plan
from tuning.plan.notices import SEVERITIES, say_item
from tuning.report import CAUTIONS, render, tables
from tuning.report.names import safe_file_names


def _plan(fleet_path, event_path) -> dict:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the air outside a formula's range: warned by the plan, not our subject
        fleet = load_fleet(fleet_path)
        return make_plan(fleet, load_event(event_path, fleet))


@pytest.fixture(scope="module")
def demo(demo_plan):
    return demo_plan


@pytest.fixture(scope="module")
def downhill(tmp_path_factory):
    return _plan(*scenarios.downhill(tmp_path_factory.mktemp("downhill")))


@pytest.fixture(scope="module")
def downhill_no_stock(tmp_path_factory):
    return _plan(*scenarios.downhill(tmp_path_factory.mktemp("downhill-no-stock"), stock=False))


def visible(page: str) -> str:
    """The words of an HTML page (no style, no chart, no tags, entities decoded, spaces squeezed)."""
    page = re.sub(r"<(style|svg)\b.*?</\1>", " ", page, flags=re.S)
    return " ".join(html.unescape(re.sub(r"<[^>]+>", " ", page)).split())


def squeezed(text: str) -> str:
    """Text without any white space: PDF text extraction breaks lines where the layout did."""
    return re.sub(r"\s+", "", text)


def names_of(plan: dict) -> dict[str, str]:
    return safe_file_names([e["bike"] for e in plan["entries"]])


def test_summary_leads_with_the_bikes_in_danger_downhill_without_stock(downhill_no_stock, tmp_path):
    plan = downhill_no_stock
    in_danger = [b["bike"] for b in plan["bikes"] if b["danger"]]
    safe = [b["bike"] for b in plan["bikes"] if not b["danger"]]
    assert in_danger and safe  # the scenario has both (else this test could not fail)
    page = render.summary_html(plan)
    text = visible(page)
    box = visible(page[page.index('<div class="danger">') : page.index("<h2>Sessions</h2>")])
    assert text.index("DANGER") < text.index("Pick list") < text.index("Work orders")
    for bike in in_danger:
        assert re.search(rf"(^| ){re.escape(bike)} ", box), bike
    for bike in safe:
        assert not re.search(rf"(^| ){re.escape(bike)} ", box), bike
    first = next(
        e
        for e in plan["entries"]
        if e["bike"] == in_danger[0] and any(w["severity"] == "danger" for w in e["warnings"])
    )
    for w in (w for w in first["warnings"] if w["severity"] == "danger"):
        assert " ".join(say_item(w, Display()).split()) in box  # the first session's danger in full, as shown
    # on paper too: the first page of the summary's PDF starts with the danger box
    render.write_pdf(render.summary_html(plan, links=False), tmp_path / "summary.pdf", tmp_path)
    page1 = " ".join(pypdf.PdfReader(tmp_path / "summary.pdf").pages[0].extract_text().split())
    assert "DANGER" in page1 and in_danger[0] in page1
    assert "no stock list kept" in text and "TO ORDER" not in text


def test_summary_groups_warnings_by_severity_and_they_add_up(downhill):
    rows = tables.summary_rows(downhill, names_of(downhill))["warning_groups"]
    assert [g["severity"] for g in rows["groups"]] == list(SEVERITIES)
    assert sum(g["count"] for g in rows["groups"]) == downhill["warnings_count"]
    assert all(g["count"] for g in rows["groups"])  # the downhill plan has warnings of every severity
    text = visible(render.summary_html(downhill))
    heads = [text.index(f"{g['title']} ({g['count']})") for g in rows["groups"]]
    assert heads == sorted(heads)
    for record in downhill["bikes"]:  # bike notices listed once, with their bikes
        for w in record["notices"]:
            assert " ".join(say_item(w, Display()).split()) in text


def test_summary_pick_list_shows_to_order(demo):
    page = render.summary_html(demo)
    table = re.search(r'<table class="picklist">(.*?)</table>', page, re.S).group(1)
    header = visible(table.split("</thead>")[0])
    assert "Fitted now" in header and "In stock" in header and "Needed" in header and "To order" in header
    rows = [visible(r) for r in re.findall(r"<tr>(.*?)</tr>", table.split("</thead>")[1], re.S)]
    assert len(rows) == len(demo["pick_list"])
    ordered = [p for p in demo["pick_list"] if p["to_order"]]
    assert ordered  # the demo's shelf lacks a jet (else the test could not fail)
    for p in demo["pick_list"]:
        row = next(r for r in rows if r.startswith(f"{p['family']} {p['size']} "))
        cells = f"{p['fitted_now']} {p['in_stock']} {p['needed']} {p['to_order']}"
        assert row.startswith(f"{p['family']} {p['size']} {cells}"), row
        assert ("TO ORDER" in row) == bool(p["to_order"])
    assert rows[0].startswith(f"{ordered[0]['family']} {ordered[0]['size']} ")  # to order first


def test_summary_work_orders_one_row_per_bike_per_transition(demo):
    page = render.summary_html(demo)
    tables_html = re.findall(r'<table class="work workorder">(.*?)</table>', page, re.S)
    assert len(tables_html) == len(demo["work_orders"])
    for order, table in zip(demo["work_orders"], tables_html):
        head = visible(table.split("</thead>")[0])
        assert head.lower().startswith(order["label"].lower())
        assert (tables.minutes(order["minutes"]) in head) == bool(order["bikes"])
        rows = (
            [visible(r) for r in re.findall(r"<tr>(.*?)</tr>", table.split("</thead>")[1], re.S)]
            if order["bikes"]
            else []
        )
        assert len(rows) == len(order["bikes"])
        for row, b in zip(rows, order["bikes"]):
            assert row.startswith(b["bike"])
            for change in b["changes"]:
                assert change["text"] in row


def test_sheet_pdf_shows_the_bikes_work_order_and_jet_sources(demo, tmp_path):
    work = tables.plan_index(demo)["work"]
    by_bike = tables.entries_by_bike(demo)
    # a bike whose jet comes off another bike, and one whose jet must be ordered
    picked = {
        e["bike"]
        for e in demo["entries"]
        for k in ("main_jet", "pilot_jet")
        if e["settings"][k]["source"]["kind"] in ("bike", "order")
    }
    assert picked
    for bike in picked:
        entries = by_bike[bike]
        render.write_sheet(demo, entries, tmp_path / "s.html", tmp_path / "s.pdf", "a4")
        text = squeezed(pypdf.PdfReader(tmp_path / "s.pdf").pages[0].extract_text())
        page = (tmp_path / "s.html").read_text(encoding="utf-8")
        form = page[page.index('<table class="form">') :]
        rows = form.split("<tr>")
        for order, row in work[bike]:  # in the form: the row of the session it comes before, or the last
            where = order["before_session"] or "After the event"
            form_row = next(r for r in rows if f"<strong>{html.escape(where)}</strong>" in r)
            for change in row["changes"]:
                assert squeezed(f"{change['text']} — {tables.minutes(change['minutes'])}") in text, change["text"]
                assert html.escape(change["text"]) in form_row
        assert "returned_to_proven" in form and squeezed("Returned to proven settings") in text
        cells = read_cells((tmp_path / "s.html").read_text(encoding="utf-8"))
        for i, e in enumerate(entries):
            for key in ("main_jet", "pilot_jet"):
                jet = e["settings"][key]
                before = entries[i - 1]["settings"][key]["recommended"] if i else jet["current"]
                if jet["recommended"] != before and jet["source"]["kind"] not in ("fitted", "own"):
                    assert jet["source"]["text"] in cells[(key, e["session"])]  # the source in the circuit table
                    assert squeezed(jet["source"]["text"]) in text


def test_sheet_says_danger_first_in_words(downhill, tmp_path):
    by_bike = tables.entries_by_bike(downhill)
    danger = next(b for b in downhill["bikes"] if b["danger"])
    safe = next(b for b in downhill["bikes"] if not b["danger"] and b["notices"])  # a bike with notices to show
    render.write_sheet(downhill, by_bike[danger["bike"]], tmp_path / "d.html", tmp_path / "d.pdf", "a4")
    text = " ".join(pypdf.PdfReader(tmp_path / "d.pdf").pages[0].extract_text().split())
    assert "DANGER" in text and text.index("DANGER") < text.index("AIR AT THE SESSIONS")
    page = (tmp_path / "d.html").read_text(encoding="utf-8")
    box = visible(page[page.index('<div class="danger">') : page.index("<h2>Air at the sessions</h2>")])
    for e in by_bike[danger["bike"]]:  # every session with a danger is named in the box, with its codes
        for w in e["warnings"]:
            if w["severity"] == "danger":
                assert w["code"] in box and (e["session"] in box or "(all sessions)" in box)
    render.write_sheet(downhill, by_bike[safe["bike"]], tmp_path / "s.html", tmp_path / "s.pdf", "a4")
    assert "DANGER" not in pypdf.PdfReader(tmp_path / "s.pdf").pages[0].extract_text()
    shown = visible((tmp_path / "s.html").read_text(encoding="utf-8"))
    for w in safe["notices"]:  # the bike's notices once (compared as shown: the page escapes ' as &#39;)
        assert shown.count(" ".join(w["message"].split())) == 1, w["code"]


@pytest.mark.parametrize("paper", ["a4", "letter"])
@pytest.mark.parametrize("scenario", ["demo", "downhill"])
def test_every_sheet_of_the_scenarios_is_one_page(scenario, paper, request, tmp_path):
    plan = request.getfixturevalue(scenario)
    render.render_setup_sheets(plan, tmp_path, paper=paper)
    for bike, stem in names_of(plan).items():
        pages = pypdf.PdfReader(tmp_path / "sheets" / f"{stem}.pdf").pages
        if scenario == "demo":
            assert len(pages) == 1, (scenario, paper, bike)
        else:  # crowded with danger: one page, or the form on a clean second page under the bike id
            assert len(pages) in (1, 2), (scenario, paper, bike)
            if len(pages) == 2:
                assert pages[1].extract_text().split()[0] == bike
        text = squeezed(pages[-1].extract_text())
        assert squeezed(CAUTIONS[-40:]) in text  # the last words of the sheet are still on it


def test_condensed_sheet_names_every_session_of_a_warning():
    rows = [
        {"severity": "danger", "code": "no-safe-jet", "message": m, "session_list": s, "sessions": ", ".join(s)}
        for m, s in (("main, A", ["A"]), ("pilot, A", ["A"]), ("main, B", ["B"]), ("pilot, C", ["C"]))
    ]
    rows.append({"severity": "note", "code": "icing-risk", "message": "n", "session_list": ["A"], "sessions": "A"})
    kept = tables.condensed(rows, {"danger"})
    assert [r["message"] for r in kept] == ["main, A", "pilot, A", "n"]  # both jets of the first session in full
    assert kept[1]["also"] == "B, C" and kept[0]["also"] == "" and kept[2]["also"] == ""
    assert tables.condensed(rows, set()) == [dict(r, also="") for r in rows]
