"""Benchmark of ``carbfleet build``'s report stage: prints figures, asserts nothing.

A fleet of N bikes x 4 sessions is generated from the demo scenario: the demo is planned once
(config -> plan), then its bikes are repeated with new ids until there are N (the plan stage has
its own benchmark; this one times the report: notebooks, HTML, PDF, print pack).

Figures printed:
- build: wall time of ``build_from_plan`` (papermill kernels, sheets, summary, print pack);
- floor: rendering the same finished HTML sheets to PDF in this one process, one document per
  sheet, plus one notebook kernel start; the build should take at most 0.8 x this floor (issue 10:
  the build renders each worker's sheets as a few WeasyPrint documents split into pages);
- CPU seconds (user + system) of the build's process tree and of the floor: the work done,
  steadier than wall time when other jobs share the machine;
- the median of ``--repeat`` timed builds (run without the memory sampler);
- peak RSS of the build's process tree (this process + kernels) at ``--memory-bikes``, sampled
  from /proc every 0.1 s, and the getrusage figure (self + largest child).
Also says which font subsetter WeasyPrint used (HarfBuzz-subset is about 2x faster than fontTools).

Usage: .venv/bin/python benchmarks/build_bench.py [--bikes 100] [--repeat 3] [--memory-bikes 500] [--workers 2]
"""

from __future__ import annotations

import argparse
import copy
import json
import os
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))


def demo_plan() -> dict:
    from tuning.config import load_event, load_fleet
    from tuning.plan import make_plan

    fleet = load_fleet(ROOT / "tuning" / "demo" / "demo-fleet.yaml")
    return make_plan(fleet, load_event(ROOT / "tuning" / "demo" / "demo-event.yaml", fleet))


def generated_plan(n_bikes: int) -> dict:
    """The demo plan with its bikes repeated under new ids until there are ``n_bikes``."""
    plan = demo_plan()
    by_bike: dict[str, list[dict]] = {}
    for entry in plan["entries"]:
        by_bike.setdefault(entry["bike"], []).append(entry)
    originals = list(by_bike.values())
    entries = []
    for i in range(n_bikes):
        for entry in originals[i % len(originals)]:
            copied = copy.deepcopy(entry)
            copied["bike"] = f"{entry['bike']}-{i + 1:03d}"
            entries.append(copied)
    plan["entries"] = entries
    plan["warnings_count"] = sum(len(e["warnings"]) for e in entries)
    return plan


def tree_rss_bytes(pid: int) -> int:
    """Resident memory of ``pid`` and all its descendants [bytes], from /proc."""
    children: dict[int, list[int]] = {}
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            try:
                with open(f"/proc/{entry}/stat") as handle:
                    ppid = int(handle.read().rsplit(")", 1)[1].split()[1])
            except (OSError, IndexError, ValueError):
                continue
            children.setdefault(ppid, []).append(int(entry))
    total, stack = 0, [pid]
    page = os.sysconf("SC_PAGE_SIZE")
    while stack:
        p = stack.pop()
        try:
            with open(f"/proc/{p}/statm") as handle:
                total += int(handle.read().split()[1]) * page
        except OSError:
            pass
        stack.extend(children.get(p, []))
    return total


def run_build(n_bikes: int, workers: int, sample: bool = True) -> dict:
    """Build a generated fleet in this process; return wall time and peak tree RSS.

    With ``sample`` False the memory sampler (a thread reading /proc every 0.1 s, which costs CPU
    of its own) does not run and the peak RSS is reported as 0.
    """
    from tuning.report import pipeline

    plan = generated_plan(n_bikes)
    out = Path(tempfile.mkdtemp(prefix="carbfleet-bench-")) / "out"
    peak = [0]
    stop = threading.Event()

    def sample_rss():
        while not stop.is_set():
            peak[0] = max(peak[0], tree_rss_bytes(os.getpid()))
            time.sleep(0.1)

    sampler = threading.Thread(target=sample_rss, daemon=True)
    if sample:
        sampler.start()
    started, cpu_before = time.perf_counter(), _cpu_seconds()
    result = pipeline.build_from_plan(plan, out, quiet=True, workers=workers)
    seconds = time.perf_counter() - started
    cpu = _cpu_seconds() - cpu_before
    stop.set()
    if sample:
        sampler.join()
    usage = (
        resource.getrusage(resource.RUSAGE_SELF).ru_maxrss + resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    ) * 1024
    return {
        "bikes": n_bikes,
        "seconds": seconds,
        "cpu_s": cpu,
        "peak_tree_rss_MB": peak[0] / 1e6,
        "getrusage_self_plus_child_MB": usage / 1e6,
        "out": str(out),
        "font_subsetter": result.font_subsetter,
    }


def _cpu_seconds() -> float:
    """User + system CPU time of this process and its finished children (the kernels) [s]."""
    own, children = resource.getrusage(resource.RUSAGE_SELF), resource.getrusage(resource.RUSAGE_CHILDREN)
    return own.ru_utime + own.ru_stime + children.ru_utime + children.ru_stime


def floor(out: Path) -> dict:
    """Render the finished HTML sheets of ``out`` to PDF in one process, plus one kernel start."""
    from jupyter_client.manager import KernelManager

    from tuning.report import pipeline, render

    sheets = sorted((out / "sheets").glob("*.html"))
    tmp = Path(tempfile.mkdtemp(prefix="carbfleet-floor-"))
    started, cpu_before = time.perf_counter(), _cpu_seconds()
    km = KernelManager(kernel_name="python3", transport="ipc")
    km.ip = os.path.join(tmp, "kernel")
    km.start_kernel(stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    kc = km.client()
    kc.start_channels()
    kc.wait_for_ready(timeout=120)
    kc.execute_interactive("import tuning.report", timeout=120, output_hook=lambda msg: None)
    kernel_seconds = time.perf_counter() - started
    kc.stop_channels()
    km.shutdown_kernel(now=True)
    started = time.perf_counter()
    for sheet in sheets:
        render.write_pdf(sheet.read_text(encoding="utf-8"), tmp / (sheet.stem + ".pdf"), tmp)
    render_seconds = time.perf_counter() - started
    cpu = _cpu_seconds() - cpu_before
    del pipeline
    shutil.rmtree(tmp, ignore_errors=True)
    return {
        "sheets": len(sheets),
        "kernel_start_s": kernel_seconds,
        "render_s": render_seconds,
        "floor_s": kernel_seconds + render_seconds,
        "cpu_s": cpu,
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--bikes", type=int, default=100)
    parser.add_argument("--memory-bikes", type=int, default=500, help="fleet size for the memory figure (0: skip)")
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--repeat", type=int, default=3, help="timed builds (the median is the figure)")
    parser.add_argument("--child", action="store_true", help=argparse.SUPPRESS)
    parser.add_argument("--no-sample", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:  # one build in a fresh process, so getrusage covers it alone
        print(json.dumps(run_build(args.bikes, args.workers, sample=not args.no_sample)))
        return
    print(f"cores: {os.cpu_count()}, load average before: {os.getloadavg()[0]:.2f}")

    def child(bikes: int, sample: bool) -> dict:
        command = [sys.executable, __file__, "--child", "--bikes", str(bikes), "--workers", str(args.workers)]
        run = subprocess.run(command + ([] if sample else ["--no-sample"]), check=True, capture_output=True, text=True)
        return json.loads(run.stdout.strip().splitlines()[-1])

    runs = []
    for _ in range(max(1, args.repeat)):
        runs.append(child(args.bikes, sample=False))
        if len(runs) < args.repeat:
            shutil.rmtree(Path(runs[-1]["out"]).parent, ignore_errors=True)
    speed = runs[-1]
    seconds = statistics.median(r["seconds"] for r in runs)
    base = floor(Path(speed["out"]))
    print(f"font subsetter: {speed['font_subsetter']}")
    each = ", ".join(f"{r['seconds']:.1f}" for r in runs)
    print(
        f"build, {args.bikes} bikes x 4 sessions, {args.workers} workers: median {seconds:.1f} s of "
        f"{len(runs)} runs ({each}); {seconds / args.bikes * 1000:.0f} ms per bike"
    )
    print(
        f"floor: kernel start {base['kernel_start_s']:.1f} s + one-process PDF of {base['sheets']} finished "
        f"sheets {base['render_s']:.1f} s = {base['floor_s']:.1f} s"
    )
    cpu = statistics.median(r["cpu_s"] for r in runs)
    print(f"CPU (user + system): build median {cpu:.1f} s, floor {base['cpu_s']:.1f} s")
    print(f"build / floor: {seconds / base['floor_s']:.2f} (target <= 0.8); build target < 25 s")
    shutil.rmtree(Path(speed["out"]).parent, ignore_errors=True)
    if args.memory_bikes:
        memory = child(args.memory_bikes, sample=True)
        shutil.rmtree(Path(memory["out"]).parent, ignore_errors=True)
        print(
            f"build, {args.memory_bikes} bikes: {memory['seconds']:.1f} s; peak RSS of the process tree "
            f"{memory['peak_tree_rss_MB']:.0f} MB (sampled), getrusage self + largest child "
            f"{memory['getrusage_self_plus_child_MB']:.0f} MB (target < 1500 MB)"
        )
    print(f"load average after: {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
