"""Real-browser check of the run explorer: the quick-start notebook served by Voila
on 127.0.0.1 and driven in headless Chromium (Debian's package, via Playwright).

The ΔH_vap shown on the page after a point is toggled must equal what
vpkit.analyze gives for the same exclusions (common practice, no source: the page
shows the core's numbers). A screenshot is saved under out/browser-test/.
Skipped, with the reason, where no browser or driver can be had.
"""

import shutil
import sys
from pathlib import Path

import pytest

import vpkit

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "benchmarks"))
from browser import run_session, unavailable  # noqa: E402

REASON = unavailable()


@pytest.mark.skipif(REASON is not None, reason=f"real-browser test skipped: {REASON}")
def test_toggle_in_browser_shows_core_enthalpy(tmp_path):
    r = run_session(tmp_path, point=2, clicks=2)
    served = vpkit.read_run(tmp_path / "served" / "data" / "demo" / "recovered_2-propanol.csv")
    expected = vpkit.analyze(served, exclude={2: "excluded in the explorer"})
    baseline = vpkit.analyze(served)
    shown = lambda e: vpkit.display.value_u(e.nominal_value / 1e3, e.std_dev / 1e3)  # noqa: E731
    assert " ± ".join(r["before"]) == shown(baseline.enthalpy)
    assert " ± ".join(r["after"]) == shown(expected.enthalpy)
    assert r["screenshot"].exists()
    keep = ROOT / "out" / "browser-test"
    keep.mkdir(parents=True, exist_ok=True)
    shutil.copy(r["screenshot"], keep / r["screenshot"].name)
    print(f"click -> readout {r['readout_ms']} ms; click -> repaint {r['repaint_ms']} ms; "
          f"screenshot {keep / r['screenshot'].name}")
