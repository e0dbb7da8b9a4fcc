"""Every notebook in templates/ and examples/ runs top to bottom with nbclient, with no error output.

Each notebook's folder is copied to a temporary directory and the copy is
executed there (the kernel's working directory), so the repository is never
written.  The kernel is the ``python3`` kernel of the interpreter running the
tests (the project's .venv); a probe cell appended to the copy checks that.
A test fails on any output of type ``error`` and on a traceback printed to
stderr (a widget callback's exception, for instance, ends up there).
"""

from __future__ import annotations

import shutil
import sys
from pathlib import Path

import pytest

nbformat = pytest.importorskip("nbformat")
nbclient = pytest.importorskip("nbclient")
pytest.importorskip("ipykernel")

ROOT = Path(__file__).resolve().parents[2]
NOTEBOOKS = sorted([*ROOT.glob("templates/**/*.ipynb"), *ROOT.glob("examples/**/*.ipynb")])
NOTEBOOKS = [p for p in NOTEBOOKS if ".ipynb_checkpoints" not in p.parts]

pytestmark = pytest.mark.notebooks

PROBE = "import sys as _fb_sys; print('FB-KERNEL', _fb_sys.executable)"


def test_there_are_notebooks_to_run():
    names = {p.relative_to(ROOT).as_posix() for p in NOTEBOOKS}
    assert {"templates/nmr-reference-field.ipynb", "templates/teslameter-calibration.ipynb",
            "templates/lab-dashboard.ipynb"} <= names
    assert any(n.startswith("examples/") for n in names)


def _problems(nb) -> list[str]:
    found = []
    for i, cell in enumerate(nb.cells):
        for out in cell.get("outputs", []):
            if out.get("output_type") == "error":
                found.append(f"cell {i}: {out.get('ename')}: {out.get('evalue')}")
            elif out.get("output_type") == "stream" and out.get("name") == "stderr" and \
                    "Traceback (most recent call last)" in out.get("text", ""):
                found.append(f"cell {i}: traceback on stderr:\n{out['text']}")
    return found


def test_problems_are_found():
    nb = nbformat.v4.new_notebook()
    nb.cells = [nbformat.v4.new_code_cell("1/0"), nbformat.v4.new_code_cell("x")]
    nb.cells[0].outputs = [nbformat.v4.new_output("error", ename="ZeroDivisionError", evalue="division by zero")]
    nb.cells[1].outputs = [nbformat.v4.new_output("stream", name="stderr",
                                                  text="Traceback (most recent call last):\n  ...\nKeyError: 1\n")]
    assert [p.split(":")[0] for p in _problems(nb)] == ["cell 0", "cell 1"]
    nb.cells[1].outputs = [nbformat.v4.new_output("stream", name="stderr", text="a harmless warning\n")]
    assert len(_problems(nb)) == 1


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.relative_to(ROOT).as_posix())
def test_notebook_runs_without_errors(path, tmp_path, monkeypatch):
    # Keep Jupyter's runtime files (kernel connection files) out of the user's home.
    monkeypatch.setenv("JUPYTER_RUNTIME_DIR", str(tmp_path / "jupyter-runtime"))
    # Both folders are copied side by side: a template may point at the demo data in examples/.
    for top in ("templates", "examples"):
        shutil.copytree(ROOT / top, tmp_path / top, ignore=shutil.ignore_patterns(".ipynb_checkpoints", "__pycache__"))
    copy = tmp_path / path.relative_to(ROOT)
    before = path.read_bytes()

    nb = nbformat.read(copy, as_version=4)
    nb.cells.append(nbformat.v4.new_code_cell(PROBE))
    client = nbclient.NotebookClient(nb, timeout=180, kernel_name="python3", allow_errors=True,
                                     resources={"metadata": {"path": str(copy.parent)}})
    client.execute()

    problems = _problems(nb)
    assert not problems, "\n".join(problems)
    probe = "".join(o.get("text", "") for o in nb.cells[-1].outputs if o.get("output_type") == "stream")
    assert probe.split() == ["FB-KERNEL", sys.executable], probe
    assert path.read_bytes() == before   # the repository copy is untouched


def test_a_figure_shows_as_an_image_in_a_fresh_kernel(tmp_path, monkeypatch):
    # A bare matplotlib Figure prints "<Figure size ...>" unless a formatter is registered; importing
    # fieldbudget.plots registers one, for its own figures and for any function that returns a Figure.
    monkeypatch.setenv("JUPYTER_RUNTIME_DIR", str(tmp_path / "jupyter-runtime"))
    nb = nbformat.v4.new_notebook()
    nb.cells = [nbformat.v4.new_code_cell("from fieldbudget import plots\nfrom matplotlib.figure import Figure\n"
                                          "fig = Figure(figsize=(3, 2))\nfig.add_subplot().plot([0, 1], [1, 0])\nfig")]
    nbclient.NotebookClient(nb, timeout=120, kernel_name="python3",
                            resources={"metadata": {"path": str(tmp_path)}}).execute()
    data = nb.cells[0].outputs[0]["data"]
    assert "image/png" in data and data["image/png"]
