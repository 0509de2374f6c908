"""What users install: the built wheel, in a fresh virtual environment, outside the repo.

Builds the wheel and the sdist, installs the wheel (not editable) with the notebook
extra into a new venv, and from a temporary folder: imports vpkit.panels, opens the
explorer and the overview headless on a clean copy of the bundled demo runs, and runs
`python -m vpkit analyze`. Expectations are ours (common practice, no source): a
plain `pip install` must give a working tool. Marked `wheel` (slow: it installs the
dependencies into the new venv); `make test` and CI run it.
"""

import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
CLEAN = shutil.ignore_patterns("*.vpkit-session.json", "*.refused-*", "*-report", "__pycache__")

SCRIPT = r"""
import sys, pathlib
import vpkit, vpkit.panels
assert "site-packages" in vpkit.__file__, vpkit.__file__
demo = pathlib.Path(sys.argv[1])
panel = vpkit.explore(demo / "recovered_2-propanol.csv", canvas="static", autosave=False)
assert panel.analysis is not None and panel.analysis.enthalpy.std_dev > 0
ov = vpkit.overview(demo)
assert (ov.summary["status"] == "").sum() == 3, ov.summary[["run_id", "status"]]
print("ok", vpkit.__file__)
"""


@pytest.mark.wheel
def test_wheel_installs_and_runs_outside_the_repo(tmp_path):
    dist = tmp_path / "dist"
    subprocess.run([sys.executable, "-m", "build", "--wheel", "--sdist", "--outdir", str(dist),
                    str(ROOT)], check=True, capture_output=True)
    wheel = next(dist.glob("vpkit-*.whl"))
    names = zipfile.ZipFile(wheel).namelist()
    for needed in ("vpkit/panels/__init__.py", "vpkit/panels/explorer.py",
                   "vpkit/physics/data/antoine_poling.csv",
                   "vpkit/physics/data/water_iapws95_psat.csv", "vpkit/analysis/engine.py",
                   "vpkit/record/__init__.py", "vpkit/output/__init__.py"):
        assert needed in names, needed
    assert next(dist.glob("vpkit-*.tar.gz"))
    venv = tmp_path / "fresh"
    subprocess.run([sys.executable, "-m", "venv", str(venv)], check=True)
    py = venv / "bin" / "python"
    subprocess.run([str(py), "-m", "pip", "install", "--quiet", f"{wheel}[notebook]"],
                   check=True, capture_output=True)
    work = tmp_path / "elsewhere"
    shutil.copytree(ROOT / "data" / "demo", work / "demo", ignore=CLEAN)
    out = subprocess.run([str(py), "-c", SCRIPT, str(work / "demo")], cwd=work,
                         capture_output=True, text=True, env={"MPLBACKEND": "Agg",
                                                              "HOME": str(tmp_path / "home")})
    assert out.returncode == 0, out.stderr
    assert "ok" in out.stdout
    run_file = work / "demo" / "tube_check_water.csv"
    cli = subprocess.run([str(py), "-m", "vpkit", "analyze", str(run_file), "--out",
                          str(work / "out")], cwd=work, capture_output=True, text=True,
                         env={"MPLBACKEND": "Agg", "HOME": str(tmp_path / "home")})
    assert cli.returncode == 0, cli.stderr
    assert "ΔH_vap" in cli.stdout and (work / "out" / "tube_check_water.png").exists()
