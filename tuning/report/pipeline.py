"""``carbfleet build``: plan -> papermill-run notebooks -> HTML, PDF, print pack, in one folder.

The build runs one papermill execution of ``fleet-report.ipynb`` and one of ``setup-sheets.ipynb``
per worker (both shipped in ``tuning/notebooks/``), each rendering a contiguous shard of the bikes
in-kernel (one kernel start per shard, not per bike). Everything is written to a temporary folder
beside the output and moved into place at the end, so a failed or interrupted build (Ctrl-C,
SIGTERM, SIGHUP) leaves the previous output as it was. The output folder is replaced only when
it is new, empty or holds nothing but an earlier build's files (:mod:`tuning.output`). Two builds
of the same inputs give byte-identical files.

The executed notebooks kept in ``notebooks/`` read ``../recommendations.json`` and write to
``..``: opened in Jupyter from the output folder they run again as they are.
"""

from __future__ import annotations

import contextlib
import copy
import itertools
import os
import shutil
import subprocess
import tempfile
import time
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path

import nbformat
from jupyter_client.manager import AsyncKernelManager

from tuning import output, resources
from tuning.display import DEFAULT_LANGUAGE, DEFAULT_UNITS, Display
from tuning.errors import BuildError, CarbfleetError, UserError
from tuning.gcpause import gc_paused
from tuning.report import render, tables
from tuning.report.names import safe_file_names

#: The most notebook kernels a build runs at once (each holds about 150 MB).
MAX_WORKERS = 8
NB_TEMPLATE = Path(__file__).resolve().parent / "nbconvert_template" / "carbfleet.html.j2"
_kernel_numbers = itertools.count(1)
_live_kernels: set = set()  # kernel processes of running builds, stopped on an interrupt


def _stop_kernels() -> None:
    """Kill the kernels still running (they run in their own session: Ctrl-C does not reach them)."""
    for process in list(_live_kernels):
        with contextlib.suppress(Exception):
            if process.poll() is None:
                process.kill()
        _live_kernels.discard(process)


class IpcKernelManager(AsyncKernelManager):
    """A kernel manager on IPC sockets (no TCP: no "running over TCP without encryption" warning)."""

    socket_dir: str | None = None

    def __init__(self, **kwargs):
        kwargs.setdefault("transport", "ipc")
        super().__init__(**kwargs)
        folder = self.socket_dir or socket_folder_base()
        number = next(_kernel_numbers)
        self.ip = os.path.join(folder, f"k{number}")  # sockets k<n>-<port>: short paths
        # The connection file holds the kernel's key: keep it in the build's own folder too, so
        # that it is removed with the folder (also after an interrupt), not left in ~/.local.
        self.connection_file = os.path.join(folder, f"k{number}.json")

    kernel_cwd: str | None = None

    async def _async_launch_kernel(self, kernel_cmd, **kw):
        # The kernel's own console chatter (shutdown notices) is not the user's business; errors
        # reach the build through the executed notebook.
        kw["stdout"] = kw["stderr"] = subprocess.DEVNULL
        if self.kernel_cwd:
            kw["cwd"] = self.kernel_cwd
        result = await super()._async_launch_kernel(kernel_cmd, **kw)
        process = getattr(self.provisioner, "process", None)
        if process is not None:
            _live_kernels.add(process)
        return result


#: Longest path of a Unix socket on Linux is 107 bytes; the kernel's sockets are named
#: ``<folder>/k<n>-<port>`` inside a ``carbfleet-XXXXXXXX`` folder, which needs about 30 of them.
_SOCKET_PATH_ROOM = 107 - 30


def socket_folder_base() -> str:
    """A writable temporary folder short enough to hold the kernels' Unix sockets.

    ``TMPDIR`` is used when it is short enough; else ``/tmp``, ``/var/tmp`` or ``/dev/shm``.
    """
    candidates = [tempfile.gettempdir(), "/tmp", "/var/tmp", "/dev/shm"]
    for folder in candidates:
        if (
            len(os.fsencode(folder)) <= _SOCKET_PATH_ROOM
            and os.path.isdir(folder)
            and os.access(folder, os.W_OK | os.X_OK)
        ):
            return folder
    raise BuildError(
        "no temporary folder with a path short enough for the notebook kernels' sockets; "
        "set TMPDIR to a short writable folder such as /tmp"
    )


def _manager_in(cwd: Path, socket_dir: Path | None = None) -> type:
    """An IPC kernel manager class whose kernels start in ``cwd`` (sockets in ``socket_dir``).

    papermill's own ``cwd=`` changes the working folder of the whole process, which races when
    several notebooks run in threads; the kernel's folder is set at launch instead.
    """
    return type(
        "IpcKernelManagerIn",
        (IpcKernelManager,),
        {"kernel_cwd": str(cwd), "socket_dir": str(socket_dir) if socket_dir else None},
    )


@dataclass(frozen=True)
class BuildResult:
    """What a build wrote: the folder, the number of sheets and warnings, the wall time [s]."""

    out_dir: Path
    sheets: int
    warnings: int
    seconds: float
    font_subsetter: str
    units: str = DEFAULT_UNITS
    language: str = DEFAULT_LANGUAGE

    def summary_line(self) -> str:
        d = Display(self.units, self.language)
        return d._(
            "built %(sheets)s setup sheets, fleet summary and print pack in %(out)s "
            "(%(warnings)s warnings, %(seconds)s s)"
        ) % {
            "sheets": self.sheets,
            "out": self.out_dir,
            "warnings": self.warnings,
            "seconds": d.number(self.seconds, 1),
        }


def font_subsetter() -> str:
    """Which font subsetter WeasyPrint uses here: ``harfbuzz`` (fast) or ``fonttools`` (about 2x slower)."""
    try:
        from weasyprint.text.ffi import harfbuzz_subset
    except ImportError:  # pragma: no cover - other WeasyPrint layouts
        return "unknown"
    return "harfbuzz" if harfbuzz_subset else "fonttools"


def shards(items: list[str], n: int) -> list[list[str]]:
    """Split ``items`` into at most ``n`` contiguous, nearly equal, non-empty chunks (order kept)."""
    n = max(1, min(n, len(items)))
    size, extra = divmod(len(items), n)
    out, start = [], 0
    for i in range(n):
        end = start + size + (1 if i < extra else 0)
        out.append(items[start:end])
        start = end
    return [chunk for chunk in out if chunk]


def _execute(notebook: str, output: Path, parameters: dict, cwd: Path, socket_dir: Path | None = None) -> None:
    """Run one notebook with papermill (Python API, IPC kernel, no timing records)."""
    import papermill
    from papermill.exceptions import PapermillExecutionError

    try:
        papermill.execute_notebook(
            str(resources.notebook(notebook)),
            str(output),
            parameters=parameters,
            kernel_name="python3",
            progress_bar=False,
            log_output=False,
            request_save_on_cell_execute=False,
            kernel_manager_class=_manager_in(cwd, socket_dir),
            record_timing=False,
        )
    except PapermillExecutionError as exc:
        raise BuildError(f"{output.name}: {exc.ename}: {exc.evalue}") from None


def _clean_notebook(path: Path) -> nbformat.NotebookNode:
    """Remove what differs between two runs: papermill timings and paths, random cell ids, counts."""
    nb = nbformat.read(str(path), as_version=4)
    nb.metadata.pop("papermill", None)
    count = 0
    for i, cell in enumerate(nb.cells):
        cell.id = f"{path.stem}-{i}"
        cell.metadata.pop("papermill", None)
        cell.metadata.pop("execution", None)
        if cell.cell_type == "code":
            count += 1
            cell.execution_count = count
            for output in cell.get("outputs", []):
                if "execution_count" in output:
                    output["execution_count"] = count
    nbformat.write(nb, str(path))
    return nb


class _Exporter:
    """One nbconvert HTMLExporter with our template, reused for every notebook."""

    def __init__(self):
        from nbconvert import HTMLExporter

        self.exporter = HTMLExporter(template_file=str(NB_TEMPLATE), extra_template_basedirs=[str(NB_TEMPLATE.parent)])
        self.exporter.exclude_input = True
        self.css = render.page_css("a4", "carbfleet notebook")

    def export(self, nb: nbformat.NotebookNode, name: str) -> str:
        body, _ = self.exporter.from_notebook_node(
            copy.deepcopy(nb), resources={"metadata": {"name": name}, "carbfleet_css": self.css}
        )
        return body


def _merge_pdfs(paths: list[Path], target: Path, stamp: str, title: str) -> int:
    """Concatenate PDFs into ``target`` with fixed metadata and id (deterministic); return pages."""
    from pypdf import PdfWriter
    from pypdf.generic import ArrayObject, ByteStringObject

    writer = PdfWriter()
    with gc_paused():  # about 40 % faster for a fleet's pages
        for path in paths:
            writer.append(str(path))
    date = "D:" + stamp[:19].replace("-", "").replace("T", "").replace(":", "")
    writer.add_metadata({"/Title": title, "/Producer": "carbfleet (pypdf)", "/CreationDate": date, "/ModDate": date})
    import hashlib

    digest = hashlib.md5(b"".join(p.read_bytes() for p in paths)).digest()
    writer._ID = ArrayObject([ByteStringObject(digest), ByteStringObject(digest)])
    with open(target, "wb") as handle, gc_paused():
        writer.write(handle)
    return len(writer.pages)


def _check_options(paper: str, workers: int, units: str = "metric", language: str = "en") -> None:
    render.page_css(paper, "")  # raises UserError on an unknown paper name
    Display(units, language)  # raises UserError on unknown units or language
    if not isinstance(workers, int) or not 1 <= workers <= MAX_WORKERS:
        raise UserError(f"--workers: expected a whole number from 1 to {MAX_WORKERS}, got {workers}; try --workers 2")


def build(
    fleet_path: str | Path,
    event_path: str | Path,
    out_dir: str | Path,
    paper: str = "a4",
    quiet: bool = False,
    workers: int = 2,
    policy: str | None = None,
    units: str | None = None,
    language: str | None = None,
    adjust=None,
    calibrate=None,
) -> BuildResult:
    """Plan ``fleet_path`` x ``event_path`` and build the whole output folder ``out_dir``.

    ``calibrate``, if given, is called as ``calibrate(fleet)`` before planning and returns the
    calibration to plan with (:func:`tuning.plan.make_plan`'s ``calibration``; None: the law).

    ``adjust``, if given, is called as ``adjust(fleet, event, plan)`` after planning and returns
    the plan document to build (the CLI's history: settings still fitted, the plan to record).

    ``units`` (``metric`` or ``us``) and ``language`` (``en`` or ``de``) of the pages: ``None``
    takes the event file's ``units`` and ``language``, else metric and English.

    Raises :class:`tuning.errors.UserError` for bad input files or an output folder that is not
    carbfleet's to replace (exit 2) and :class:`tuning.errors.BuildError` naming the failed bike
    or step (exit 1).
    """
    from tuning.config import display_for, load_event, load_fleet
    from tuning.plan import make_plan

    _check_options(paper, workers, units or DEFAULT_UNITS, language or DEFAULT_LANGUAGE)
    inputs = [str(fleet_path), str(event_path)]
    output.safe_out_dir(str(out_dir), inputs)  # before the planning: fail fast
    fleet = load_fleet(fleet_path)
    event = load_event(event_path, fleet)
    if event.weather.source and event.weather.source != "METAR":
        inputs.append(event.weather.source)
    calibration = calibrate(fleet) if calibrate is not None else None
    plan = make_plan(fleet, event, policy_name=policy, calibration=calibration)
    if adjust is not None:
        plan = adjust(fleet, event, plan)
    display = display_for(event, units, language)  # the command line, else the event file, else metric/en
    units, language = display.units, display.language
    return build_from_plan(
        plan,
        out_dir,
        paper=paper,
        quiet=quiet,
        workers=workers,
        fleet_path=str(fleet_path),
        event_path=str(event_path),
        inputs=inputs,
        units=units,
        language=language,
    )


def _prepare_out(out_dir: str | Path, inputs) -> tuple[Path, Path]:
    """Check the output folder and make the temporary folder beside it; (out, tmp)."""
    out = output.safe_out_dir(str(out_dir), inputs)
    output.check_replaceable(out)
    try:
        out.parent.mkdir(parents=True, exist_ok=True)
        tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.building-", dir=out.parent))
    except OSError as exc:
        raise output.os_problem("--out", out, exc) from None
    output.apply_umask(tmp, folder=True)  # mkdtemp makes it 0700
    return out, tmp


def build_from_plan(
    plan: dict,
    out_dir: str | Path,
    paper: str = "a4",
    quiet: bool = False,
    workers: int = 2,
    fleet_path: str = "",
    event_path: str = "",
    inputs=(),
    units: str = "metric",
    language: str = "en",
) -> BuildResult:
    """Build the output folder from a plan document (format ``carbfleet-plan/3``).

    ``units`` (``metric`` or ``us``) and ``language`` (``en`` or ``de``) are those of the pages
    (the notebooks' parameters of the same names). ``inputs`` are the paths of the files the plan was made from: the output folder may not
    hold them. The folder gets :data:`tuning.output.MANIFEST`, the list of what was written.
    """
    from tuning.plan import write_plan_files

    started = time.perf_counter()
    _check_options(paper, workers, units, language)
    output.umask()  # read it in this thread, before any worker thread starts
    out, tmp = _prepare_out(out_dir, inputs)
    step = "plan files"
    try:
        bikes = list(tables.entries_by_bike(plan))
        names = safe_file_names(bikes)
        write_plan_files(plan, tmp)
        (tmp / "notebooks").mkdir()
        (tmp / "sheets").mkdir()
        # Relative to the notebooks' own folder, where the kernels start and where Jupyter runs
        # them again later: the executed notebooks stay runnable in the finished output.
        common = {
            "fleet_path": _absolute(fleet_path),
            "event_path": _absolute(event_path),
            "plan_path": "../recommendations.json",
            "out_dir": "..",
            "paper": paper,
            "units": units,
            "language": language,
        }
        parts = shards(bikes, workers)
        sheets_stem = resources.SETUP_SHEETS.removesuffix(".ipynb")
        sheet_notebooks = [f"{sheets_stem}-{i}.ipynb" for i in range(1, len(parts) + 1)]
        html_names = [n.replace(".ipynb", ".html") for n in [resources.FLEET_REPORT, *sheet_notebooks]]
        jobs = [(resources.FLEET_REPORT, resources.FLEET_REPORT, {**common, "notebooks": html_names})]
        jobs += [
            (resources.SETUP_SHEETS, name, {**common, "bikes": part}) for name, part in zip(sheet_notebooks, parts)
        ]
        step = "notebooks"
        _run_jobs(jobs, tmp, bikes, names, quiet)
        step = "notebook export to HTML"
        exporter = _Exporter()
        for _src, name, _params in jobs:
            nb = _clean_notebook(tmp / "notebooks" / name)
            (tmp / "notebooks" / name.replace(".ipynb", ".html")).write_text(
                exporter.export(nb, name.replace(".ipynb", "")), encoding="utf-8"
            )
        missing = [b for b in bikes if not (tmp / "sheets" / f"{names[b]}.pdf").exists()]
        if missing:
            raise BuildError(f"setup sheet of bike {missing[0]!r} was not written")
        step = "print pack"
        _merge_pdfs(
            [tmp / "fleet-summary.pdf", *(tmp / "sheets" / f"{names[b]}.pdf" for b in bikes)],
            tmp / "print-pack.pdf",
            plan["sessions"][0]["start"] if plan["sessions"] else "2000-01-01",
            f"Print pack · {plan['event']}",
        )
        output.write_manifest(tmp, plan["event"])
        step = "moving the finished folder into place"
        _replace(tmp, out)
    except BaseException as exc:
        shutil.rmtree(tmp, ignore_errors=True)
        if isinstance(exc, CarbfleetError) or not isinstance(exc, Exception):
            raise
        if isinstance(exc, OSError) and exc.errno is not None:
            raise output.os_problem("--out", out, exc) from exc
        raise BuildError(f"build failed at step '{step}': {type(exc).__name__}: {exc}") from exc
    return BuildResult(
        out, len(bikes), int(plan["warnings_count"]), time.perf_counter() - started, font_subsetter(), units, language
    )


def _absolute(path: str) -> str:
    """An input path as an absolute path (empty stays empty: the notebook's own default)."""
    return str(Path(path).resolve()) if path else ""


def _run_jobs(jobs, tmp: Path, bikes: list[str], names: dict[str, str], quiet: bool) -> None:
    """Run the notebooks in threads (one kernel each); progress = sheet PDFs written so far."""
    errors: list[BaseException] = []
    sockets = Path(tempfile.mkdtemp(prefix="carbfleet-", dir=socket_folder_base()))

    def run(job):
        src, name, params = job
        try:
            _execute(src, tmp / "notebooks" / name, params, tmp / "notebooks", sockets)
        except BaseException as exc:  # reported after all threads stop
            errors.append(exc)

    def written() -> int:
        return sum(1 for b in bikes if (tmp / "sheets" / f"{names[b]}.pdf").exists())

    try:
        with ThreadPoolExecutor(max_workers=len(jobs)) as pool:
            futures = [pool.submit(run, job) for job in jobs]
            try:
                _wait(futures, bikes, written, quiet)
            except BaseException:
                _stop_kernels()  # an interrupt: do not wait for the kernels to finish their shards
                raise
    finally:
        shutil.rmtree(sockets, ignore_errors=True)
        for process in list(_live_kernels):
            if process.poll() is not None:
                _live_kernels.discard(process)
    if errors:
        first = next((e for e in errors if isinstance(e, CarbfleetError)), errors[0])
        if isinstance(first, CarbfleetError):
            raise first
        raise BuildError(f"notebook run failed: {type(first).__name__}: {first}")


def _wait(futures, bikes: list[str], written, quiet: bool) -> None:
    """Wait for the notebook threads, with a progress bar of sheets written unless ``quiet``."""
    if quiet:
        while not all(f.done() for f in futures):
            time.sleep(0.1)
        return
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

    with Progress(
        TextColumn("setup sheets"), BarColumn(), MofNCompleteColumn(), TimeElapsedColumn(), transient=True
    ) as progress:
        task = progress.add_task("sheets", total=len(bikes))
        while not all(f.done() for f in futures):
            progress.update(task, completed=written())
            time.sleep(0.2)
        progress.update(task, completed=written())


def _replace(tmp: Path, out: Path) -> None:
    """Move the finished folder into place; the old output is removed only after the swap."""
    old = None
    if out.exists():
        old = out.parent / f".{out.name}.old-{os.getpid()}"
        shutil.rmtree(old, ignore_errors=True)
        os.replace(out, old)
    try:
        os.replace(tmp, out)
    except BaseException:
        if old is not None:
            os.replace(old, out)
        raise
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)
