"""Render the plan to HTML (Jinja, autoescaped) and PDF (WeasyPrint): setup sheets, summary, index.

Runs inside the notebook kernels (``tuning/notebooks/*.ipynb`` call :func:`render_setup_sheets` and
:func:`render_fleet_report`) and can be called directly. Formats the plan; computes no physics.
"""

from __future__ import annotations

import html as html_lib
import json
import logging
import os
import re
from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path

import jinja2

from tuning import __version__
from tuning.display import METRIC_EN, N_, Display
from tuning.errors import BuildError, UserError
from tuning.gcpause import gc_paused
from tuning.plan.document import FORMAT as PLAN_FORMAT  # the one format this report reads
from tuning.report import charts, tables
from tuning.report.names import safe_file_names, safe_stem

PAPER_SIZES = {"a4": "A4 portrait", "letter": "letter portrait"}
SHEET_WORD = N_("sheet")  # in a sheet's page footer: "<event> · sheet T01"
SUMMARY_WORD = N_("fleet summary")  # in the summary's page footer
TEMPLATES = Path(__file__).resolve().parent / "templates"

# WeasyPrint logs a warning per document when HarfBuzz's subset library is missing; say it once.
logging.getLogger("fontTools").setLevel(logging.ERROR)


class _QuietSubsetWarning(logging.Filter):
    def filter(self, record: logging.LogRecord) -> bool:
        return "HarfBuzz-Subset" not in record.getMessage()


logging.getLogger("weasyprint").addFilter(_QuietSubsetWarning())

# Characters every sheet may use; their glyphs are always kept in the embedded font subset.
_COMMON_TEXT = (
    "".join(chr(c) for c in range(0x20, 0x7F))
    + "".join(chr(c) for c in range(0xA0, 0x100))
    + "–—‘’“”•…→←−·½¼¾°×≈≤≥±µ²³"
)


def install_font_subset_cache() -> None:
    """Subset each font once per process when WeasyPrint falls back to fontTools.

    Without HarfBuzz's subset library WeasyPrint subsets every font of every PDF with fontTools
    (about 0.2 s per font). Keeping the glyphs of the common Latin characters in every subset
    (plus any other glyph a page uses) makes the subset request identical from sheet to sheet, so
    one cached result serves them all; the PDFs grow by a few kilobytes. With HarfBuzz present
    nothing is changed.
    """
    import hashlib
    import io

    from fontTools.ttLib import TTFont
    from weasyprint.pdf import fonts as wp_fonts

    original = wp_fonts.Font._fonttools_subset
    if getattr(original, "carbfleet_cached", False):
        return
    common: dict[tuple, frozenset] = {}
    results: dict[tuple, bytes] = {}

    def cached(self, to_unicode, hinting):
        digest = (hashlib.sha1(self.file_content).digest(), self.index)
        if digest not in common:
            font = TTFont(io.BytesIO(self.file_content), fontNumber=self.index, lazy=True)
            cmap = font.getBestCmap() or {}
            common[digest] = frozenset(font.getGlyphID(cmap[ord(c)]) for c in _COMMON_TEXT if ord(c) in cmap)
        gids = frozenset(to_unicode) | common[digest]
        key = (digest, gids, bool(hinting), bool(self.missing))
        if key not in results:
            original(self, dict.fromkeys(sorted(gids)), hinting)
            results[key] = self.file_content
        self.file_content = results[key]

    cached.carbfleet_cached = True
    wp_fonts.Font._fonttools_subset = cached


_CONTROL = {c: f"\\x{c:02x}" for c in (*range(0x00, 0x09), 0x0B, 0x0C, *range(0x0E, 0x20), 0x7F)}


def _no_control_characters(value):
    """Template output with control characters (other than tab and line breaks) escaped: an
    ESC in a bike id must not reach the page, where it garbles the PDF's text."""
    if isinstance(value, str) and not value.isprintable():
        return value.translate(_CONTROL)
    return value


@lru_cache(maxsize=1)
def environment() -> jinja2.Environment:
    """The Jinja environment: autoescaping for every ``.html.j2`` template (bike ids are escaped)."""
    return jinja2.Environment(
        finalize=_no_control_characters,
        loader=jinja2.FileSystemLoader(str(TEMPLATES)),
        autoescape=jinja2.select_autoescape(enabled_extensions=("html", "html.j2", "j2"), default_for_string=True),
        undefined=jinja2.StrictUndefined,
        trim_blocks=False,
        keep_trailing_newline=True,
    )


def _css_string(text: str) -> str:
    """Quote ``text`` as a CSS string body (for the page footer)."""
    return "".join(c if c.isalnum() or c in " .,:;·()-_/'" else f"\\{ord(c):x} " for c in text)


def page_css(paper: str, footer_left: str | None, page_numbers: bool = True) -> str:
    """The stylesheet with the page size for ``paper`` (``a4`` or ``letter``).

    ``footer_left`` is the text at the foot of every page; ``None`` takes it from each setup
    sheet's ``data-footer`` (so that sheets laid out as one document keep their own footers).
    """
    if paper not in PAPER_SIZES:
        raise UserError(
            f"paper: expected one of {', '.join(PAPER_SIZES)}, got {paper!r}; use --paper a4 or --paper letter"
        )
    return _page_css(paper, None if footer_left is None else _css_string(footer_left), page_numbers)


@lru_cache(maxsize=16)
def _page_css(paper: str, footer_css: str | None, page_numbers: bool) -> str:
    return (
        environment()
        .get_template("report.css")
        .render(page_size=PAPER_SIZES[paper], footer_left=footer_css, page_numbers=page_numbers)
    )


def load_plan(fleet_path: str = "", event_path: str = "", plan_path: str = "") -> dict:
    """Return the plan document: read ``plan_path`` (JSON) if given, else compute it from the files.

    Relative paths are taken from the working folder (a notebook's own folder in Jupyter) and
    nothing else: a file that is not there is an error, never replaced by another. Only when
    both ``fleet_path`` and ``event_path`` are empty is the demo scenario shipped with carbfleet
    planned (the notebooks' defaults).
    """
    if plan_path:
        try:
            plan = json.loads(Path(plan_path).read_text(encoding="utf-8"))
        except FileNotFoundError:
            raise UserError(
                f"{plan_path}: plan file not found (looked for {Path(plan_path).resolve()}); "
                "give the recommendations.json of a plan"
            ) from None
        except (OSError, ValueError) as exc:
            raise UserError(f"{plan_path}: cannot read the plan: {exc}") from None
    else:
        from tuning import resources
        from tuning.config import load_event, load_fleet
        from tuning.plan import make_plan

        if not fleet_path and not event_path:
            fleet_path, event_path = resources.demo_file("demo-fleet.yaml"), resources.demo_file("demo-event.yaml")
        elif not fleet_path or not event_path:
            raise UserError("give both fleet_path and event_path (or neither, for the demo scenario)")
        fleet = load_fleet(fleet_path)
        event = load_event(event_path, fleet)
        plan = make_plan(fleet, event)
    if plan.get("format") != PLAN_FORMAT:
        raise UserError(
            f"plan: expected format {PLAN_FORMAT!r}, got {plan.get('format')!r}; "
            "plan the fleet again with this carbfleet (carbfleet plan or carbfleet build)"
        )
    return plan


def _stamp(plan: dict) -> str:
    """The date written into PDF metadata: the first session's start (not the clock)."""
    return plan["sessions"][0]["start"]


def _reference_text(ref: dict, d: Display = METRIC_EN) -> str:
    return d._(
        "%(elevation)s elevation, %(temperature)s, %(pressure)s station pressure, %(humidity)s humidity, "
        "density altitude %(altitude)s, fuel %(fuel)s"
    ) % {
        "elevation": d.elevation(ref["elevation_m"]),
        "temperature": d.temperature(ref["air_temperature_C"]),
        "pressure": d.pressure(ref["station_pressure_hPa"]),
        "humidity": d.percent(ref["relative_humidity_pct"]),
        "altitude": d.elevation(ref["density_altitude_m"]),
        "fuel": ref["fuel"],
    }


def _footer(title: str) -> str:
    """The text at the foot of a page: carbfleet's version and ``title``."""
    return f"carbfleet {__version__} · {title}"


def _common(
    plan: dict,
    paper: str,
    title: str | None,
    page_numbers: bool = True,
    display: Display = METRIC_EN,
    reference: dict | None = None,
) -> dict:
    """The template context every page shares; ``title`` None: the footer comes from the sheet.
    ``reference``: the conditions ``ref_text`` describes (a bike's own; default the fleet's)."""
    from tuning import constants
    from tuning.report import CAUTIONS

    d = display
    (t_lo, t_hi), (p_lo, p_hi) = constants.SAE_J1349_AIR_TEMPERATURE_RANGE, constants.SAE_J1349_DRY_AIR_PRESSURE_RANGE
    return {
        "d": d,
        "_": d._,
        "ngettext": d.n_,
        "lang": d.language,
        "plan": plan,
        "css": page_css(paper, None if title is None else _footer(title), page_numbers),
        "stamp": _stamp(plan),
        "version": __version__,
        "cautions": d._(CAUTIONS),
        "ref_text": _reference_text(reference or plan["reference"], d),
        "site_elevation": d.elevation(plan["site"]["elevation_m"]),
        "j1349_t_range": f"{d.temperature(t_lo - constants.ZERO_CELSIUS, unit=False)}…{d.temperature(t_hi - constants.ZERO_CELSIUS)}",
        "j1349_p_range": f"{d.pressure(p_lo / 100.0, unit=False)}…{d.pressure(p_hi / 100.0)}",
    }


def pages_allowed(density: str) -> int:
    """Pages a sheet of this layout may take: 1, or 2 where the form moves to a second page."""
    return 2 if "split" in density.split() else 1


#: The layouts tried in turn until a sheet fits one page: (density, condense level). The last
#: ones name the repeats of a warning in later sessions instead of writing them out (every session
#: stays named), and at last give the notes by code alone; the plan files and the fleet summary
#: keep every message.
#: The last resort (many sessions, long notes, many warnings): the hand-filled form on a second
#: page that repeats the bike id.
LAYOUTS = (
    ("normal", 0),
    ("compact", 0),
    ("tight", 0),
    ("tight", 1),
    ("tight", 2),
    ("tight", 3),
    ("compact split", 0),
    ("tight split", 0),
    ("tight split", 3),
)


def sheet_html(
    plan: dict,
    entries: list[dict],
    paper: str = "a4",
    density: str = "normal",
    condense: int = 0,
    display: Display = METRIC_EN,
    sheet_id: str | None = None,
) -> str:
    """The setup sheet of one bike (its plan entries, session order) as a self-contained HTML page.

    ``density`` (``normal``, ``compact``, ``tight``) shrinks type and chart so a crowded sheet
    (many sessions, many warnings) still prints on one page; ``condense`` (see
    :data:`tables.CONDENSE_LEVELS`) then names a warning's repeats in later sessions instead of
    writing them out. The sheet is one ``div.sheet`` with the id ``sheet_id`` (default
    ``sheet-<file stem of the bike>``) inside the page's body: :func:`write_sheets` lays several
    sheets' bodies out as one document and finds each sheet's pages by that id.
    """
    index = _index(plan)
    bike = entries[0]["bike"]
    rows = tables.sheet_rows(
        entries, index["records"].get(bike), index["work"].get(bike, ()), condense, display, plan["sessions"]
    )
    # One page by design: no "page n of m" footer (it costs WeasyPrint a second layout pass).
    context = _common(plan, paper, None, page_numbers=False, display=display, reference=entries[0]["reference"])
    context.update(
        s=rows,
        density=density,
        sheet_id=sheet_id or f"sheet-{safe_stem(bike)}",
        footer=_footer(f"{plan['event']} · {display._(SHEET_WORD)} {bike}"),
    )
    return environment().get_template("sheet.html.j2").render(**context)


_INDEX: list = [None, None]  # (plan, its index): the last plan's, built once for all its sheets


def _index(plan: dict) -> dict:
    """:func:`tables.plan_index` of ``plan``, kept while the same plan renders sheet after sheet."""
    if _INDEX[0] is not plan:
        _INDEX[:] = [plan, tables.plan_index(plan)]
    return _INDEX[1]


def summary_html(plan: dict, paper: str = "a4", links: bool = True, display: Display = METRIC_EN) -> str:
    """The fleet summary as a self-contained HTML page."""
    context = _common(plan, paper, f"{plan['event']} · {display._(SUMMARY_WORD)}", display=display)
    names = safe_file_names([e["bike"] for e in plan["entries"]])
    route = charts.route_chart(plan, display)
    context.update(
        r=tables.summary_rows(plan, names, display),
        chart_svg=charts.to_svg(charts.weather_chart(plan, display)),
        route_svg=charts.to_svg(route) if route is not None else "",
        links=links,
    )
    return environment().get_template("summary.html.j2").render(**context)


def index_html(plan: dict, notebooks: list[str], display: Display = METRIC_EN) -> str:
    """The folder's front page: links to the summary, the print pack, every sheet and the data."""
    context = _common(plan, "a4", plan["event"], display=display)
    names = safe_file_names([e["bike"] for e in plan["entries"]])
    context.update(r=tables.summary_rows(plan, names, display), notebooks=notebooks)
    return environment().get_template("index.html.j2").render(**context)


def pin_font_timestamps(plan: dict) -> None:
    """Make embedded font subsets reproducible: fontTools stamps them with the clock unless
    ``SOURCE_DATE_EPOCH`` is set; use the event's first session start instead."""
    import datetime as dt

    os.environ["SOURCE_DATE_EPOCH"] = str(int(dt.datetime.fromisoformat(_stamp(plan)).timestamp()))


def layout(html: str, base_url: Path):
    """Lay ``html`` out with WeasyPrint (no network: every resource is inline); a Document."""
    import weasyprint

    install_font_subset_cache()
    return weasyprint.HTML(string=html, base_url=str(base_url), url_fetcher=_no_fetch()).render()


def write_pdf(html: str, path: Path, base_url: Path) -> Path:
    """Write ``html`` to ``path`` as PDF with WeasyPrint."""
    layout(html, base_url).write_pdf(str(path))
    return path


def write_sheet(
    plan: dict, entries: list[dict], html_path: Path, pdf_path: Path, paper: str = "a4", display: Display = METRIC_EN
) -> int:
    """Write one bike's sheet as HTML and PDF, on one page if any layout allows; return pages."""
    job = SheetJob(entries, html_path, pdf_path, f"sheet-{safe_stem(entries[0]['bike'])}")
    return write_sheets(plan, [job], paper, display)[0]


@dataclass(frozen=True)
class SheetJob:
    """One bike's sheet to write: its plan entries, the two files and the sheet's HTML id."""

    entries: list[dict]
    html_path: Path
    pdf_path: Path
    sheet_id: str


def write_sheets(
    plan: dict, jobs: list[SheetJob], paper: str = "a4", display: Display = METRIC_EN, fitted: dict | None = None
) -> list[int]:
    """Write several bikes' sheets as HTML and PDF, each on one page if any layout allows.

    The sheets are laid out together as ONE WeasyPrint document (their bodies one after
    another, each starting a page), which saves WeasyPrint's work per document; each bike's
    pages, found by its sheet's id, are then written as its own PDF. Sheets that spill over a
    page go through the next entries of :data:`LAYOUTS`, again together. Each HTML file is the
    bike's own self-contained page, in the layout its PDF got. Returns the page count per job.

    ``fitted`` (kept by the caller across calls, e.g. for one notebook's shard) remembers the
    layout that sheets of each :func:`sheet_shape` fitted in: a sheet of a shape seen before
    starts there instead of being laid out again in every looser layout (most of a fleet's
    sheets share a few shapes; this halves the layout work of a build).
    """
    fitted = {} if fitted is None else fitted
    shapes = [sheet_shape(plan, job.entries) for job in jobs]
    first = [fitted.get(shape, 0) for shape in shapes]
    pages: list[int] = [0] * len(jobs)
    pending = list(range(len(jobs)))
    for step, (density, condense) in enumerate(LAYOUTS):
        last = step == len(LAYOUTS) - 1
        now = [i for i in pending if first[i] <= step]
        if not now:
            continue
        htmls = {i: sheet_html(plan, jobs[i].entries, paper, density, condense, display, jobs[i].sheet_id) for i in now}
        document = layout(_one_document([htmls[i] for i in now]), jobs[now[0]].pdf_path.parent)
        by_id = _pages_by_id(document, [jobs[i].sheet_id for i in now])
        for i in now:
            own = by_id[jobs[i].sheet_id]
            if len(own) > pages_allowed(density) and not last:
                continue
            jobs[i].html_path.write_text(htmls[i], encoding="utf-8")
            single = document.copy(own)
            single.metadata = _sheet_metadata(document, htmls[i])
            single.write_pdf(str(jobs[i].pdf_path))
            pages[i] = len(own)
            fitted.setdefault(shapes[i], step)
            pending.remove(i)
        del document
        if not pending:
            break
    return pages


def sheet_shape(plan: dict, entries: list[dict]) -> tuple:
    """What decides how much room a bike's sheet needs, coarsely: its sessions, notes, warnings
    (count and length), checks, work-order changes and which circuits change. Sheets of one shape
    fit the same layout (the ids and numbers that differ between them take the same room)."""
    index = _index(plan)
    bike = entries[0]["bike"]
    record = index["records"].get(bike) or {}
    return (
        len(entries),
        len(entries[0]["notes"] or "") // 60,
        tuple(len(e["warnings"]) for e in entries),
        sum(len(w["message"]) for e in entries for w in e["warnings"]) // 120,
        len(record.get("notices", ())),
        sum(len(row["changes"]) for _order, row in index["work"].get(bike, ())),
        tuple(len(e["checks"]) for e in entries),
        tuple(
            bool(e["settings"][key].get("steps") or e["settings"][key].get("change_turns"))
            for e in entries
            for key in ("main_jet", "pilot_jet", "clip", "mixture_screw")
        ),
    )


def _one_document(pages: list[str]) -> str:
    """Self-contained sheet pages as one HTML document: the first one's head, every body in order."""
    first = pages[0]
    bodies = [page[page.index(">", page.index("<body")) + 1 : page.rindex("</body>")] for page in pages]
    return first[: first.index("<body")] + "<body>" + "".join(bodies) + "</body>\n</html>\n"


def _pages_by_id(document, ids: list[str]) -> dict[str, list]:
    """The pages of each sheet of ``document``, from the page holding its id to the next sheet's."""
    first_page: dict[str, int] = {}
    for number, page in enumerate(document.pages):
        for name in page.anchors:
            first_page.setdefault(name, number)
    missing = [i for i in ids if i not in first_page]
    if missing:
        raise BuildError(f"sheet {missing[0]!r} has no page in the laid-out document")
    starts = [first_page[i] for i in ids] + [len(document.pages)]
    return {i: document.pages[starts[k] : starts[k + 1]] for k, i in enumerate(ids)}


_TITLE = re.compile(r"<title>(.*?)</title>", re.S)
_DESCRIPTION = re.compile(r'<meta name="description" content="([^"]*)">')


def _sheet_metadata(document, html: str):
    """``document``'s PDF metadata with the title and description of the sheet page ``html``
    (the sheets of one document differ only in these; the rest comes from the first's head)."""
    import copy

    metadata = copy.copy(document.metadata)
    title, description = _TITLE.search(html), _DESCRIPTION.search(html)
    metadata.title = html_lib.unescape(title.group(1)) if title else metadata.title
    metadata.description = html_lib.unescape(description.group(1)) if description else metadata.description
    return metadata


@lru_cache(maxsize=1)
def _no_fetch():
    """A fetcher that reads ``data:`` URLs only; any other URL stops the
    rendering: carbfleet reports load nothing from outside the page."""
    from weasyprint.urls import URLFetcher

    return URLFetcher(allowed_protocols={"data"}, fail_on_errors=True)


@dataclass
class SheetBatch:
    """The sheets one notebook rendered; shows as a table in the notebook."""

    out_dir: Path
    rows: list[tuple[str, str, int]] = field(default_factory=list)  # bike, file stem, warnings

    def _repr_html_(self) -> str:
        body = "".join(
            f"<tr><td>{html_lib.escape(b)}</td><td>sheets/{html_lib.escape(f)}.html, .pdf</td><td>{w}</td></tr>"
            for b, f, w in self.rows
        )
        return (
            f"<p>{len(self.rows)} setup sheets written.</p><table><thead><tr><th>Bike</th>"
            f"<th>Files</th><th>Warnings</th></tr></thead><tbody>{body}</tbody></table>"
        )


def render_setup_sheets(
    plan: dict, out_dir: str | Path, bikes=(), paper: str = "a4", units: str = "metric", language: str = "en"
) -> SheetBatch:
    """Write ``sheets/<bike>.html`` and ``.pdf`` for ``bikes`` (all when empty) under ``out_dir``.

    ``units`` (``metric`` or ``us``) and ``language`` (``en`` or ``de``) are those of what the
    sheets show (:class:`tuning.display.Display`). The sheets are laid out :data:`SHEETS_PER_DOCUMENT`
    at a time as one document (:func:`write_sheets`). Raises :class:`tuning.errors.BuildError`
    naming the bike whose sheet failed.
    """
    display = Display(units, language)
    out = Path(out_dir)
    (out / "sheets").mkdir(parents=True, exist_ok=True)
    grouped = tables.entries_by_bike(plan)
    names = safe_file_names(list(grouped))
    wanted = list(bikes) if bikes else list(grouped)
    unknown = [b for b in wanted if b not in grouped]
    if unknown:
        raise UserError(f"bikes: {unknown[0]!r} is not in the plan; give bike ids from the fleet file")
    batch = SheetBatch(out)
    pin_font_timestamps(plan)
    fitted: dict = {}  # sheet shape -> the layout such sheets fitted in (see write_sheets)
    with gc_paused(collect_every=1) as group_done:
        for start in range(0, len(wanted), SHEETS_PER_DOCUMENT):
            group = wanted[start : start + SHEETS_PER_DOCUMENT]
            jobs = [
                SheetJob(
                    grouped[b],
                    out / "sheets" / f"{names[b]}.html",
                    out / "sheets" / f"{names[b]}.pdf",
                    f"sheet-{names[b]}",
                )
                for b in group
            ]
            try:
                write_sheets(plan, jobs, paper, display, fitted)
            except UserError:
                raise
            except Exception as exc:
                raise BuildError(
                    f"setup sheet of bike {_failed_bike(plan, group, paper, display)!r} failed: "
                    f"{type(exc).__name__}: {exc}"
                ) from exc
            for bike in group:
                batch.rows.append(
                    (bike, names[bike], tables.warning_count(grouped[bike], _index(plan)["records"].get(bike)))
                )
            group_done()
    return batch


def _failed_bike(plan: dict, group: list[str], paper: str, display: Display) -> str:
    """The first bike of ``group`` whose sheet cannot be made into HTML (else the group's first)."""
    grouped = tables.entries_by_bike(plan)
    for bike in group:
        try:
            sheet_html(plan, grouped[bike], paper, display=display)
        except Exception:
            return bike
    return group[0]


#: Sheets laid out as one WeasyPrint document (and rendered between two garbage collections,
#: see :func:`tuning.gcpause.gc_paused`): larger groups save little more and hold more pages in memory.
SHEETS_PER_DOCUMENT = 10


@dataclass
class FleetReport:
    """The fleet summary a notebook rendered; shows the summary itself in the notebook."""

    body_html: str
    files: list[Path]

    def _repr_html_(self) -> str:
        return self.body_html


def render_fleet_report(
    plan: dict, out_dir: str | Path, paper: str = "a4", notebooks=(), units: str = "metric", language: str = "en"
) -> FleetReport:
    """Write ``fleet-summary.html``, ``fleet-summary.pdf`` and ``index.html`` under ``out_dir``.

    ``units`` (``metric`` or ``us``) and ``language`` (``en`` or ``de``): see :class:`tuning.display.Display`.
    """
    display = Display(units, language)
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    pin_font_timestamps(plan)
    try:
        html = summary_html(plan, paper, display=display)
        (out / "fleet-summary.html").write_text(html, encoding="utf-8")
        # In print the links would point into the temporary build folder: leave them out.
        with gc_paused():
            write_pdf(summary_html(plan, paper, links=False, display=display), out / "fleet-summary.pdf", out)
        (out / "index.html").write_text(index_html(plan, list(notebooks), display=display), encoding="utf-8")
    except UserError:
        raise
    except Exception as exc:
        raise BuildError(f"fleet summary failed: {type(exc).__name__}: {exc}") from exc
    body = html[html.index("<body") :]
    body = body[body.index(">") + 1 : body.rindex("</body>")]
    return FleetReport(body, [out / "fleet-summary.html", out / "fleet-summary.pdf", out / "index.html"])
