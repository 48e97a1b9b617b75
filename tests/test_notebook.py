"""The example notebook runs top to bottom (nbclient, a fresh IPython kernel).

It uses the fictional demo survey in ``examples/oskeran-ridge``; every cell
must run without an error, and the results it shows must be ventflux's
readable summaries (median and 5–95 %), never raw draws.
"""

from __future__ import annotations

from pathlib import Path

import pytest

nbformat = pytest.importorskip("nbformat")
nbclient = pytest.importorskip("nbclient")
pytest.importorskip("ipykernel")

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


def test_example_notebook_runs_top_to_bottom():
    nb = nbformat.read(EXAMPLES / "notebook.ipynb", as_version=4)
    client = nbclient.NotebookClient(nb, timeout=300, kernel_name="python3",
                                     resources={"metadata": {"path": str(EXAMPLES)}})
    client.execute()
    outputs = [o for c in nb.cells if c.cell_type == "code" for o in c.get("outputs", [])]
    assert not [o for o in outputs if o.get("output_type") == "error"]
    shown = "\n".join(o.get("data", {}).get("text/plain", "") + o.get("text", "") for o in outputs)
    html = "\n".join(o.get("data", {}).get("text/html", "") for o in outputs)
    assert "SurveyResult" in shown and "5–95 %" in shown and "total_heat_power" in shown
    assert "same profile from netCDF: True" in shown
    assert "ventflux-result" in html  # results render as HTML tables in the notebook
