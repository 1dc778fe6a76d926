"""The HTML pages on a phone: at 390 px wide nothing overflows, overlaps or scrolls sideways.

The demo's setup sheets, fleet summary and index are rendered once and opened in headless
Chromium (Debian package ``chromium``) with a 390 px wide window. The test inserts a small
measuring script into a temporary copy of each page (the pages themselves carry no script);
on load it lists, in ``<pre id="phone-result">``, every problem it finds:

- the page is wider than the window (it would scroll sideways);
- an element reaches past the window's edges without a sideways-scrolling box around it (the
  outermost one only, not each of its children);
- a table cell's content is wider than the cell (it spills over its neighbour);
- an element that hides its overflow holds wider content (text cut off).

The test reads the page Chromium dumps after load. Without ``/usr/bin/chromium`` it is skipped.
"""

from __future__ import annotations

import html
import json
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from tuning.report import render

DEMO = Path(__file__).resolve().parent.parent / "tuning" / "demo"
CHROMIUM = Path("/usr/bin/chromium")
PHONE_WIDTH = 390  # px, the CSS width of a common phone screen held upright

# Inserted into the temporary copy of a page: the page's findings, sent to the frame's holder.
MEASURE = """<script>
addEventListener("load", function () {
  var width = window.innerWidth, problems = [];
  function name(el) {
    var text = (el.textContent || "").trim().replace(/\\s+/g, " ").slice(0, 40);
    return el.tagName.toLowerCase() + (el.className ? "." + String(el.className).trim().replace(/\\s+/g, ".") : "")
      + " \\"" + text + "\\"";
  }
  function scrolls(el) {
    for (var p = el.parentElement; p; p = p.parentElement) {
      var o = getComputedStyle(p).overflowX;
      if (o === "auto" || o === "scroll") return true;
    }
    return false;
  }
  var page = document.documentElement.scrollWidth;
  if (page > width) problems.push("page " + page + " px wide > window " + width + " px");
  var all = document.body.querySelectorAll("*"), outside = new Set();
  for (var i = 0; i < all.length; i++) {
    var el = all[i], box = el.getBoundingClientRect(), style = getComputedStyle(el);
    if (style.display === "none" || (box.width === 0 && box.height === 0)) continue;
    if (!scrolls(el) && (box.right > width + 1 || box.left < -1) && !outside.add(el).has(el.parentElement))
      problems.push("past the edge (" + Math.round(box.left) + ".." + Math.round(box.right) + " px): " + name(el));
    if ((el.tagName === "TD" || el.tagName === "TH") && el.scrollWidth > el.clientWidth + 1)
      problems.push("cell content " + el.scrollWidth + " px in a cell of " + el.clientWidth + " px: " + name(el));
    var o = style.overflowX;
    if ((o === "hidden" || o === "clip") && el.scrollWidth > el.clientWidth + 1)
      problems.push("text cut (" + el.scrollWidth + " > " + el.clientWidth + " px): " + name(el));
  }
  parent.postMessage(JSON.stringify({width: width, problems: problems}), "*");
});
</script>"""

# Headless Chromium keeps its window at least 500 px wide: the page is measured in a frame of
# phone width, and sends its findings to the frame's holder, which writes them where --dump-dom shows them.
HOLDER = """<!DOCTYPE html><html><head><meta charset="utf-8"><style>body {{ margin: 0; }}
iframe {{ border: 0; width: {width}px; height: 2000px; display: block; }}</style><script>
addEventListener("message", function (event) {{
  var pre = document.createElement("pre");
  pre.id = "phone-result";
  pre.textContent = event.data;
  document.body.appendChild(pre);
}});
</script></head><body><iframe src="{src}"></iframe></body></html>"""


def measure(page: Path, work: Path) -> dict:
    """Open a copy of ``page`` (with the measuring script) at phone width; the script's findings."""
    copy = page.with_name(f".phone-{page.name}")  # beside the page: relative links and images still resolve
    copy.write_text(page.read_text(encoding="utf-8").replace("</head>", MEASURE + "\n</head>", 1), encoding="utf-8")
    holder = work / f"holder-{page.name}"
    holder.write_text(HOLDER.format(width=PHONE_WIDTH, src=html.escape(copy.as_uri())), encoding="utf-8")
    profile = work / f"profile-{page.stem}"
    command = [
        str(CHROMIUM),
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--hide-scrollbars",
        f"--user-data-dir={profile}",
        "--window-size=800,2200",
        "--virtual-time-budget=3000",
        "--dump-dom",
        holder.as_uri(),
    ]
    try:
        done = subprocess.run(command, capture_output=True, text=True, timeout=120, check=False)
    finally:
        copy.unlink()
        shutil.rmtree(profile, ignore_errors=True)
    found = re.search(r'<pre id="phone-result">(.*?)</pre>', done.stdout, re.S)
    assert found, f"Chromium gave no measurement for {page.name} (exit {done.returncode}): {done.stderr[-2000:]}"
    return json.loads(html.unescape(found.group(1)))


@pytest.fixture(scope="module")
def pages(tmp_path_factory):
    """The demo's HTML pages as the build writes them: every setup sheet, the summary, the index."""
    if not CHROMIUM.exists():
        pytest.skip("headless Chromium (/usr/bin/chromium, Debian package chromium) is not installed")
    out = tmp_path_factory.mktemp("phone") / "out"
    plan = render.load_plan(str(DEMO / "demo-fleet.yaml"), str(DEMO / "demo-event.yaml"))
    render.render_setup_sheets(plan, out)
    render.render_fleet_report(plan, out)
    return out


def test_pages_carry_no_script_of_their_own(pages):
    for page in pages.rglob("*.html"):
        assert "<script" not in page.read_text(encoding="utf-8"), page


def test_sheets_fit_a_phone(pages, tmp_path):
    sheets = sorted((pages / "sheets").glob("*.html"))
    assert sheets
    problems = {}
    for sheet in sheets:
        result = measure(sheet, tmp_path)
        assert result["width"] == PHONE_WIDTH
        if result["problems"]:
            problems[sheet.name] = result["problems"]
    assert not problems, json.dumps(problems, indent=1)


@pytest.mark.parametrize("name", ["fleet-summary.html", "index.html"])
def test_summary_and_index_fit_a_phone(pages, tmp_path, name):
    result = measure(pages / name, tmp_path)
    assert result["width"] == PHONE_WIDTH
    assert not result["problems"], json.dumps(result["problems"], indent=1)
