"""The notebooks: thin, parameterised, stored without outputs, and executed here with papermill.

Execution uses the demo scenario (tuning/demo/demo-*.yaml, an invented fleet) through the real
path config -> plan -> report inside the kernel, and the whole ``carbfleet build`` command on it.
"""

from __future__ import annotations

import ast
import json
from pathlib import Path

import nbformat
import pypdf
import pytest

from tuning import resources
from tuning.cli import main
from tuning.report import pipeline
from tuning.report.names import safe_file_names

ROOT = Path(__file__).resolve().parents[1]
NOTEBOOKS = sorted((ROOT / "tuning" / "notebooks").glob("*.ipynb"))
DEMO_FLEET = ROOT / "tuning" / "demo" / "demo-fleet.yaml"
DEMO_EVENT = ROOT / "tuning" / "demo" / "demo-event.yaml"


def test_the_two_notebooks_exist():
    assert {p.name for p in NOTEBOOKS} == set(resources.NOTEBOOK_NAMES)  # the package data the build names


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.name)
def test_notebook_is_stored_without_outputs(path):
    nb = nbformat.read(str(path), as_version=4)
    nbformat.validate(nb)
    for cell in nb.cells:
        if cell.cell_type == "code":
            assert cell.outputs == [] and cell.execution_count is None


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.name)
def test_notebook_is_thin(path):
    nb = nbformat.read(str(path), as_version=4)
    code = [c for c in nb.cells if c.cell_type == "code"]
    assert "parameters" in code[0].metadata.get("tags", [])
    for node in ast.walk(ast.parse(code[0].source)):  # parameters: plain assignments of constants
        assert not isinstance(node, (ast.Call, ast.FunctionDef, ast.For, ast.While, ast.Import))
    for cell in code[1:]:
        tree = ast.parse(cell.source)
        assert len(cell.source.strip().splitlines()) <= 5
        for node in ast.walk(tree):
            assert not isinstance(
                node, (ast.FunctionDef, ast.ClassDef, ast.For, ast.While, ast.Lambda, ast.ListComp, ast.BinOp)
            ), ast.dump(node)
            if isinstance(node, (ast.Import, ast.ImportFrom)):
                assert getattr(node, "module", None) in ("tuning", "tuning.report")


def test_setup_sheet_notebook_plans_from_the_files_in_kernel(demo_plan, tmp_path):
    import papermill

    first = demo_plan["entries"][0]["bike"]
    output = tmp_path / "setup-sheets.ipynb"
    papermill.execute_notebook(
        str(ROOT / "tuning" / "notebooks" / "setup-sheets.ipynb"),
        str(output),
        kernel_name="python3",
        parameters={
            "fleet_path": str(DEMO_FLEET),
            "event_path": str(DEMO_EVENT),
            "out_dir": str(tmp_path),
            "paper": "letter",
            "bikes": [first],
        },
        progress_bar=False,
        kernel_manager_class=pipeline._manager_in(tmp_path),
    )
    name = safe_file_names([e["bike"] for e in demo_plan["entries"]])[first]
    pdf = pypdf.PdfReader(tmp_path / "sheets" / f"{name}.pdf")
    assert len(pdf.pages) == 1
    assert float(pdf.pages[0].mediabox.height) == pytest.approx(792.0, abs=0.05)  # letter, 11 in
    outputs = [o for c in nbformat.read(str(output), as_version=4).cells for o in c.get("outputs", [])]
    assert not [o for o in outputs if o["output_type"] == "error"]
    assert any("1 setup sheets written" in o.get("data", {}).get("text/html", "") for o in outputs)


@pytest.fixture(scope="module")
def demo_build(demo_plan, tmp_path_factory):
    import contextlib
    import io

    out = tmp_path_factory.mktemp("demo") / "out"
    printed = io.StringIO()
    with contextlib.redirect_stdout(printed):
        code = main(["build", str(DEMO_FLEET), str(DEMO_EVENT), "--out", str(out)])
    return code, out, printed.getvalue()


def test_carbfleet_build_on_the_demo(demo_build, demo_plan):
    code, out, printed = demo_build
    assert code == 0
    bikes = list(dict.fromkeys(e["bike"] for e in demo_plan["entries"]))
    summary = printed.strip().splitlines()[-1]  # the one-line summary: sheets, warnings, time
    assert (
        summary.startswith(f"built {len(bikes)} setup sheets")
        and f"({demo_plan['warnings_count']} warnings," in summary
    )
    names = safe_file_names(bikes)
    for bike in bikes:
        assert len(pypdf.PdfReader(out / "sheets" / f"{names[bike]}.pdf").pages) == 1, bike
    summary_pages = len(pypdf.PdfReader(out / "fleet-summary.pdf").pages)
    assert len(pypdf.PdfReader(out / "print-pack.pdf").pages) == summary_pages + len(bikes)
    written = json.loads((out / "recommendations.json").read_text(encoding="utf-8"))
    assert written["entries"] == demo_plan["entries"]  # written by tuning.plan.write_plan_files
    assert (out / "recommendations.csv").exists() and (out / "pick-list.csv").exists()
    for name in ("fleet-report", "setup-sheets-1", "setup-sheets-2"):
        assert (out / "notebooks" / f"{name}.ipynb").exists() and (out / "notebooks" / f"{name}.html").exists()


def test_carbfleet_build_unknown_paper_exits_2(tmp_path, capsys):
    with pytest.raises(SystemExit) as stop:  # argparse's own usage error, exit status 2
        main(["build", str(DEMO_FLEET), str(DEMO_EVENT), "--out", str(tmp_path / "o"), "--paper", "a3"])
    assert stop.value.code == 2 and "invalid choice" in capsys.readouterr().err
    assert not (tmp_path / "o").exists()


def test_carbfleet_build_zero_workers_exits_2(tmp_path, capsys):
    code = main(["build", str(DEMO_FLEET), str(DEMO_EVENT), "--out", str(tmp_path / "o"), "--workers", "0"])
    assert code == 2 and "--workers" in capsys.readouterr().err
    assert not (tmp_path / "o").exists()


def test_carbfleet_build_missing_file_exit_2(tmp_path, capsys):
    code = main(["build", str(tmp_path / "nope.yaml"), str(DEMO_EVENT), "--out", str(tmp_path / "o")])
    assert code == 2
    err = capsys.readouterr().err
    assert "nope.yaml" in err and "Traceback" not in err


def test_executed_notebooks_run_again_from_the_output(demo_build):
    # the kept notebooks name ../recommendations.json and write to ..: Jupyter runs them again
    # in their own folder (papermill's cwd stands for that)
    import papermill

    code, out, _ = demo_build
    assert code == 0
    bikes = list(dict.fromkeys(e["bike"] for e in json.loads((out / "recommendations.json").read_text())["entries"]))
    sheet = out / "sheets" / f"{safe_file_names(bikes)[bikes[0]]}.pdf"  # the first bike: shard 1
    sheet.unlink()
    rerun = out.parent / "rerun.ipynb"
    papermill.execute_notebook(
        str(out / "notebooks" / "setup-sheets-1.ipynb"),
        str(rerun),
        cwd=str(out / "notebooks"),
        progress_bar=False,
        kernel_name="python3",
    )
    papermill.execute_notebook(
        str(out / "notebooks" / "fleet-report.ipynb"),
        str(rerun),
        cwd=str(out / "notebooks"),
        progress_bar=False,
        kernel_name="python3",
    )
    assert sheet.exists() and len(list((out / "sheets").glob("*.pdf"))) == len(bikes)


def test_notebooks_run_alone_with_their_defaults_and_write_only_below_their_folder(tmp_path):
    # run as Jupyter would run the notebook shipped in the package: defaults, the demo scenario
    import papermill

    from tuning.resources import notebook

    work = tmp_path / "work"
    work.mkdir()
    for name in ("fleet-report.ipynb", "setup-sheets.ipynb"):
        papermill.execute_notebook(
            str(notebook(name)), str(tmp_path / name), cwd=str(work), progress_bar=False, kernel_name="python3"
        )
    written = sorted(str(p.relative_to(work)) for p in work.rglob("*") if p.is_file())
    assert written and all(name.startswith("carbfleet-out/") for name in written)
    assert "carbfleet-out/fleet-summary.pdf" in written and any(n.endswith(".pdf") and "/sheets/" in n for n in written)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["fleet-report.ipynb", "setup-sheets.ipynb", "work"]


def test_the_manifest_lists_exactly_what_the_build_wrote(demo_build):
    from tuning.output import MANIFEST

    code, out, _ = demo_build
    listed = json.loads((out / MANIFEST).read_text())["files"]
    present = sorted(str(p.relative_to(out)) for p in out.rglob("*") if p.is_file() and p.name != MANIFEST)
    assert listed == present
