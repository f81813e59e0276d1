"""nbval really compares: a notebook with a wrong stored check output must fail.

The sample lives as ``*.ipynb.sample`` so the main run does not collect it;
the test copies it to a scratch folder and runs nbval there in a subprocess.
"""

import shutil
import subprocess
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent


def _nbval(path, tmp_path):
    return subprocess.run([sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider", "--nbval-lax",
                           "--nbval-sanitize-with", str(HERE / "nbval" / "sanitize.cfg"),
                           "--rootdir", str(tmp_path), str(path)],
                          capture_output=True, text=True, cwd=tmp_path, timeout=300)


def test_a_wrong_stored_output_fails(tmp_path):
    sample = tmp_path / "must_fail.ipynb"
    shutil.copyfile(HERE / "nbval" / "must-fail.ipynb.sample", sample)
    result = _nbval(sample, tmp_path)
    assert result.returncode == 1, result.stdout[-2000:]
    # it fails on the comparison (not on an error in the cell) and shows the stored output it compared
    assert "Cell outputs differ" in result.stdout, result.stdout[-2000:]
    assert "1.234 mA" in result.stdout


def test_the_same_notebook_passes_with_the_right_output(tmp_path):
    import nbformat

    import kit
    from kit.report.evaluation import headline

    notebook = nbformat.read(HERE / "nbval" / "must-fail.ipynb.sample", as_version=4)
    right = headline(kit.evaluate(kit.design("divider_source")))["I_out"]
    notebook.cells[1].outputs[0]["text"] = right + "\n"
    sample = tmp_path / "passes.ipynb"
    nbformat.write(notebook, sample)
    result = _nbval(sample, tmp_path)
    assert result.returncode == 0, result.stdout[-2000:]
