"""Overview panel: summary of a folder, sorting, drill-down, exclusions persist per run.

Check values come from vpkit.analyze / analyze_runs (common practice, no source)."""

import numpy as np
import pytest

import vpkit

pytest.importorskip("ipywidgets")
from tests.conftest import make_run  # noqa: E402
from vpkit.analysis.many_runs import analyze_runs
from vpkit.physics.simulate import NOISE


@pytest.fixture
def folder(tmp_path):
    rng = np.random.default_rng(41)
    for k, liquid in enumerate(["ethanol", "toluene", "ethanol"]):
        vpkit.write_run(make_run(liquid, noise=NOISE, rng=rng), tmp_path / f"bench{k}.csv")
    (tmp_path / "bench9.csv").write_text("not a run file")
    return tmp_path


def test_summary_sorting_and_failed_runs(folder):
    ov = vpkit.overview(folder)
    analysed = ov.summary[ov.summary["status"] == ""]
    assert list(analysed["run_id"]) == ["bench0", "bench1", "bench2"]
    assert "bench9.csv" in ov.w_messages.value  # the unreadable file is listed, not dropped
    ov.w_sort.value = "ΔH_vap [kJ/mol]"
    ov.w_desc.value = False
    dh = list(ov.sorted_summary()["ΔH_vap [kJ/mol]"])
    assert dh == sorted(dh)
    assert ov.w_figure.value[:4] == b"\x89PNG"


def test_drill_down_exclusion_flows_back_and_persists(folder):
    ov = vpkit.overview(folder)
    ov.w_runs.value = "bench1"
    panel = ov.explorers["bench1"]
    assert panel.readouts()["enthalpy"] == vpkit.analyze(
        folder / "bench1.csv", reference="auto", warn=False).enthalpy.nominal_value
    panel.toggle(3, "stirrer stopped")
    ov.refresh()
    row = ov.summary.set_index("run_id").loc["bench1"]
    assert row["points used"] == 7
    expected = analyze_runs({"bench1": vpkit.read_run(folder / "bench1.csv").with_include(
        panel.include, panel.reasons)}).iloc[0]
    assert row["ΔH_vap [kJ/mol]"] == pytest.approx(expected["ΔH_vap [kJ/mol]"], rel=1e-12)
    again = vpkit.overview(folder)  # a new session: the exclusion is still there
    assert again.summary.set_index("run_id").loc["bench1", "points used"] == 7


def test_the_section_consensus_is_shown_per_liquid(folder):
    ov = vpkit.overview(folder)
    assert list(ov.w_liquid.options) == ["ethanol"]  # toluene has one run: no section
    row = ov.result.consensus.iloc[0]
    shown = vpkit.display.value_u(row["consensus ΔH_vap [kJ/mol]"],
                                  row["u(consensus ΔH_vap) [kJ/mol]"], "kJ/mol")
    assert shown in ov.w_consensus.value and ov.w_section.value[:4] == b"\x89PNG"
