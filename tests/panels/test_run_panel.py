"""Headless tests of the run explorer: controls driven by setting values, clicks
synthesized as matplotlib mouse events; every readout must equal what
vpkit.analyze gives for the same choices (common practice, no source: the panel
does no physics of its own)."""

import subprocess
import sys

import numpy as np
import pytest

import vpkit

pytest.importorskip("ipywidgets")
from matplotlib.backend_bases import MouseEvent  # noqa: E402

from tests.conftest import make_run  # noqa: E402
from vpkit.panels import explore
from vpkit.physics.simulate import NOISE
from vpkit.record.session import session_path


@pytest.fixture
def run_file(tmp_path):
    run = make_run("2-propanol", noise=NOISE, rng=np.random.default_rng(21), boiling_point=355.3)
    return vpkit.write_run(run, tmp_path / "bench7.csv")


def core(panel, **extra):
    return vpkit.analyze(panel.current_run(), **{**panel.analysis_options(), **extra})


def test_core_import_does_not_pull_widgets():
    code = "import sys, vpkit; vpkit.analyze; print('ipywidgets' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_readouts_equal_core_after_checkbox_toggle(run_file):
    p = explore(run_file)
    cb, _, _ = p.points.rows[3]
    cb.value = False  # what a user's click on the checkbox does
    expected = vpkit.analyze(vpkit.read_run(run_file), exclude={3: "excluded in the explorer"})
    r = p.readouts()
    assert r["enthalpy"] == pytest.approx(expected.enthalpy.nominal_value, rel=1e-14)
    assert r["u_enthalpy"] == pytest.approx(expected.enthalpy.std_dev, rel=1e-12)
    assert r["T_b_normal"] == pytest.approx(expected.boiling_point().nominal_value, rel=1e-14)
    dH = expected.enthalpy
    assert vpkit.display.value_u(dH.nominal_value / 1e3, dH.std_dev / 1e3, "kJ/mol") in \
        p.w_readouts.value
    assert r["shift"] == pytest.approx(expected.enthalpy.nominal_value
                                       - vpkit.analyze(run_file).enthalpy.nominal_value)


def test_click_on_a_point_toggles_it(run_file):
    p = explore(run_file, canvas="static")
    fig = p.figure.fig
    fig.canvas.draw()
    x, y = p.figure.pts_in.get_data()
    target = int(p.figure._idx_in[2])
    px, py = p.figure.ax.transData.transform((x[2], y[2]))
    MouseEvent("button_press_event", fig.canvas, px, py, button=1)._process()
    assert not p.include[target]
    assert p.readouts()["enthalpy"] == core(p).enthalpy.nominal_value
    # the excluded point is still drawn, as an excluded point
    xo, _ = p.figure.pts_out.get_data()
    assert x[2] in xo
    MouseEvent("button_press_event", fig.canvas, px, py, button=1)._process()
    assert p.include[target]


def test_exclusions_survive_model_and_correction_changes(run_file):
    p = explore(run_file)
    p.toggle(1, "thermometer not settled")
    p.w_model.value = ("constant_dcp", "gls")
    p.w_air.value = "injected"
    p.w_head.value = False
    assert not p.include[1] and p.reasons[1] == "thermometer not settled"
    a = p.analysis
    assert not a.include[1]
    assert a.enthalpy.nominal_value == core(p).enthalpy.nominal_value
    assert a.fit.model.name == "constant_dcp" and a.options["air_from"] == "injected"


def test_impossible_choice_is_explained_not_raised(run_file):
    p = explore(run_file)
    for i in range(6):
        p.toggle(i)
    p.w_model.value = ("antoine", "gls")  # 2 points left, 3 parameters
    assert p.last_error and "at least 3" in p.last_error
    assert "Cannot analyse" in p.w_messages.value
    assert p.analysis.fit.model.name == "clausius_clapeyron"  # last valid result kept


def test_session_saved_on_every_change_and_restored(run_file):
    p = explore(run_file)
    p.toggle(4, "bubble touched the wall")
    p.w_model.value = ("clausius_clapeyron", "weighted")
    assert session_path(run_file).exists()
    q = explore(run_file)
    assert q.state == p.state
    assert q.analysis.enthalpy.nominal_value == p.analysis.enthalpy.nominal_value
    assert "restored" in q.w_messages.value


def test_damaged_session_is_kept_aside_not_overwritten(run_file):
    session_path(run_file).write_text('{"schema": 1, "kind": "vpkit-session", "inc')
    p = explore(run_file)
    kept = list(run_file.parent.glob("*.refused-*"))
    assert len(kept) == 1 and kept[0].read_text().endswith('"inc')
    assert "damaged" in p.w_messages.value


def test_display_units_and_other_pressure(run_file):
    p = explore(run_file)
    p.w_tunit.value = "K"
    p.w_punit.value = "mmHg"
    assert " K" in p.w_readouts.value and "mmHg" in p.w_readouts.value
    p.w_pressure.value = "400"  # mmHg: a reduced-pressure distillation
    Tb = p.analysis.boiling_point(400.0 * 133.322387415)
    assert vpkit.display.value_u(Tb.nominal_value, Tb.std_dev, "K") in p.w_tb_other.value


def test_reference_liquid_preselected_and_switchable(run_file):
    p = explore(run_file)
    assert p.w_ref.value == "2-propanol"
    p.w_ref.value = "1-propanol"
    assert p.analysis.comparison.curve.liquid == "1-propanol"
    assert any("compared with 1-propanol" in w for w in p.analysis.warnings)


def test_export_writes_report_files_at_column_width(run_file, tmp_path):
    p = explore(run_file)
    paths = p.export(tmp_path / "report", width_mm=85, dpi=300)
    assert {"png", "svg", "pdf", "points", "results", "summary"} <= set(paths)
    from matplotlib.image import imread

    img = imread(paths["png"])
    assert img.shape[1] == pytest.approx(85 / 25.4 * 300, abs=2)
    assert "Safety" in paths["summary"].read_text()


def test_figure_updates_in_place(run_file):
    p = explore(run_file, canvas="static")
    line = p.figure.fit_line
    before = line.get_ydata().copy()
    p.toggle(0)
    assert p.figure.fit_line is line
    assert not np.array_equal(line.get_ydata(), before)
    x, y = line.get_data()
    np.testing.assert_allclose(y, core(p).fit.ln_p(1000.0 / np.asarray(x)), rtol=1e-12)


def test_a_new_reading_is_checked_as_typed_and_appended_to_the_file(tmp_path):
    """The bench check in the explorer: the message is vpkit.check_reading's; adding
    appends one line to the run file (everything before it unchanged) and re-analyses."""
    full = make_run("ethanol", noise=NOISE, rng=np.random.default_rng(5))
    import dataclasses

    k = 6
    part = dataclasses.replace(full, bath_temperature=full.bath_temperature[:k],
                               reading=full.reading[:k], pressure=full.pressure[:k],
                               include=full.include[:k], reason=full.reason[:k])
    path = vpkit.write_run(part, tmp_path / "bench.csv")
    before = path.read_text()
    p = explore(path, canvas="static")
    t, good = full.bath_temperature[k], full.reading[k]
    p.w_new_t.value = t
    p.w_new_r.value = good + 0.5  # a misread graduation
    assert "check it" in p.w_new_msg.value
    assert p.w_new_msg.value.count("expected") == 1
    p.w_new_r.value = good
    assert "consistent" in p.w_new_msg.value
    assert p.check_new(t, good).message in p.w_new_msg.value
    p.w_new_add.click()
    after = path.read_text()
    assert after.startswith(before) and after.count("\n") == before.count("\n") + 1
    assert p.run.n_points == k + 1 and len(p.include) == k + 1
    assert p.analysis.n == k + 1
    assert vpkit.read_run(path).reading[-1] == good


def test_budget_bars_show_the_analysis_budget(run_file):
    p = explore(run_file, canvas="static")
    b = p.analysis.budget()
    top = b.drop(index="total")[("ΔH_vap", "share")].idxmax()
    assert "What limits u(ΔH_vap)" in p.w_budget.value and top in p.w_budget.value


def test_boiling_point_box_refuses_slips_in_the_unit_typed(run_file):
    """'80,5' is refused with a decimal-comma hint (not read as 805), a negative pressure
    is named in the unit typed, and a pressure far beyond the data says how far."""
    p = explore(run_file, canvas="static")
    p.w_pressure.value = "80,5"
    assert "decimal comma" in p.w_tb_other.value and "→" not in p.w_tb_other.value
    p.w_pressure.value = "-5"
    assert "-5 kPa" in p.w_tb_other.value
    p.w_pressure.value = "500"
    assert "→" in p.w_tb_other.value and "extrapolation" in p.w_tb_other.value
    p.w_pressure.value = "3"  # 3 kPa: inside the data's range
    assert "→" in p.w_tb_other.value and "extrapolation" not in p.w_tb_other.value


def test_explorer_details(run_file, tmp_path, monkeypatch):
    """Point numbers with file lines; re-including a point drops its stale reason (and
    says so); the live legend names the reference's source; the title follows the
    temperature unit; the default export folder is not beside the data."""
    work = tmp_path / "notebooks"
    work.mkdir()
    monkeypatch.chdir(work)
    p = explore(run_file, canvas="static")
    cb, _, _ = p.points.rows[0]
    assert f"(line {p.run.row_of(0)})" in cb.description
    p.toggle(2, "bubble escaped")
    p.toggle(2)
    assert p.reasons[2] == "" and any("'bubble escaped' was removed" in m for m in p.messages)
    legend = p.figure.legend.get_texts()[1].get_text()
    assert legend == f"reference: {p.analysis.comparison.curve.label}"
    p.set_choices(temperature_unit="degC")
    assert "°C" in p.figure.title.get_text() and " K" not in p.figure.title.get_text()
    assert p._default_export_folder() == work / "vpkit-report" / run_file.stem


def test_editing_the_run_file_keeps_matching_exclusions(run_file):
    """A reading corrected in the file: the old session is kept aside, and the exclusions of
    points whose readings are unchanged are re-applied (and said so)."""
    p = explore(run_file, canvas="static")
    p.toggle(1, "thermometer not settled")
    p.toggle(6, "bubble escaped")
    text = run_file.read_text().splitlines()
    i6 = p.run.row_of(6) - 1  # 1-based file line
    cells = text[i6].split(",")
    cells[1] = f"{float(cells[1]) + 0.01:g}"  # point 6's reading corrected
    text[i6] = ",".join(cells)
    run_file.write_text("\n".join(text) + "\n")
    q = explore(run_file, canvas="static")
    assert q.include[1] is False and q.reasons[1] == "thermometer not settled"
    assert q.include[6] is True
    assert any("re-applied" in m and "1 saved point (6)" in m for m in q.messages)
    assert list(run_file.parent.glob("*.refused-*"))


def test_two_explorers_on_one_run_never_overwrite_each_other(run_file):
    """A second explorer whose session file changed under it says so, keeps its own state
    aside, and offers to reload the other's (issue "safe with others")."""
    a, b = explore(run_file, canvas="static"), explore(run_file, canvas="static")
    a.toggle(2, "thermometer not settled")
    b.toggle(5, "bubble lost")  # b read the file before a wrote it
    assert b.conflict and "changed by another writer" in b.conflict
    assert "Session conflict" in b.w_messages.value and b.w_reload.layout.display is None
    kept = list(run_file.parent.glob("bench7.vpkit-session.mine-*.json"))
    assert len(kept) == 1 and '"bubble lost"' in kept[0].read_text()
    saved = vpkit.record.session.load_session(session_path(run_file))
    assert saved.include[2] is False and saved.include[5] is True  # a's change, untouched
    b.reload_session()
    assert b.conflict is None and b.include[2] is False and b.include[5] is True
    b.toggle(5, "bubble lost")  # now based on a's state: saved without conflict
    saved = vpkit.record.session.load_session(session_path(run_file))
    assert saved.include[2] is False and saved.include[5] is False
