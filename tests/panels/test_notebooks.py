"""The notebooks in notebooks/ execute headless without error (copied with the demo
data into a temporary folder, so nothing is written into the repository)."""

import shutil
from pathlib import Path

import pytest

nbclient = pytest.importorskip("nbclient")
nbformat = pytest.importorskip("nbformat")
pytest.importorskip("ipykernel")

ROOT = Path(__file__).resolve().parents[2]
#: What a user's own work leaves beside the demo runs; never copied into a test.
CLEAN = shutil.ignore_patterns("*.vpkit-session.json", "*.refused-*", "*-report", "__pycache__")
NOTEBOOKS = sorted((ROOT / "notebooks").glob("*.ipynb"))


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.name)
def test_notebook_runs(path, tmp_path, monkeypatch):
    shutil.copytree(ROOT / "data", tmp_path / "data", ignore=CLEAN)
    (tmp_path / "notebooks").mkdir()
    target = tmp_path / "notebooks" / path.name
    shutil.copy(path, target)
    for var, sub in (("HOME", "home"), ("IPYTHONDIR", "ipython"), ("MPLCONFIGDIR", "mpl"),
                     ("JUPYTER_CONFIG_DIR", "jcfg"), ("JUPYTER_DATA_DIR", "jdata"),
                     ("JUPYTER_RUNTIME_DIR", "jrun")):
        monkeypatch.setenv(var, str(tmp_path / sub))
    nb = nbformat.read(target, as_version=4)
    client = nbclient.NotebookClient(nb, timeout=300, kernel_name="python3",
                                     resources={"metadata": {"path": str(target.parent)}})
    client.execute()
    outputs = [o for c in nb.cells if c.cell_type == "code" for o in c.get("outputs", [])]
    assert not [o for o in outputs if o.get("output_type") == "error"]
    assert len(NOTEBOOKS) >= 2
