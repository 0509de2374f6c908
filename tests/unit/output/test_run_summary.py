"""Tables, summary, figure and command line of one analysed run.

Journal column widths 85 / 175 mm and 300 dpi: common practice, no source."""

import dataclasses

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.__main__ import main
from vpkit.physics.simulate import NOISE


@pytest.fixture(scope="module")
def analysis():
    run = make_run("2-propanol", noise=NOISE, rng=np.random.default_rng(9), boiling_point=355.3)
    return vpkit.analyze(run, exclude={4: "stirrer stopped"})


def test_tables_carry_units_and_reasons(analysis):
    pts = analysis.points()
    assert {"T [K]", "p_vap [kPa]", "u(p_vap) [kPa]", "included", "reason"} <= set(pts.columns)
    assert pts.loc[4, "reason"] == "stirrer stopped" and not pts.loc[4, "included"]
    res = analysis.results()
    assert res["ΔH_vap [kJ/mol]"].iloc[0] == pytest.approx(analysis.enthalpy.nominal_value / 1e3)


def test_summary_has_numbers_exclusions_and_safety(analysis):
    s = analysis.summary()
    assert "kJ/mol" in s and "stirrer stopped" in s and "Safety" in s


@pytest.mark.parametrize("width", [85.0, 175.0])
def test_figure_size_matches_journal_width(analysis, width, tmp_path):
    fig = analysis.figure(width_mm=width)
    assert fig.get_size_inches()[0] * 25.4 == pytest.approx(width)
    fig.savefig(tmp_path / "f.png", dpi=300)
    from matplotlib.image import imread

    img = imread(tmp_path / "f.png")
    assert img.shape[1] == pytest.approx(width / 25.4 * 300, abs=2)


def test_command_line_writes_outputs(tmp_path, capsys):
    run = make_run("toluene", noise=NOISE, rng=np.random.default_rng(2))
    path = vpkit.write_run(run, tmp_path / "toluene_run.csv")
    status = main(["analyze", str(path), "--out", str(tmp_path / "out")])
    assert status == 0
    for suffix in (".png", ".svg", "_points.csv", "_results.csv", "_summary.md"):
        assert (tmp_path / "out" / f"toluene_run{suffix}").exists()
    out = capsys.readouterr().out
    assert "ΔH_vap" in out and "Safety" in out
    # the run id is the file's name, as in the many-run report (not "run1")
    import pandas as pd

    results = pd.read_csv(tmp_path / "out" / "toluene_run_results.csv")
    assert results["run_id"].tolist() == ["toluene_run"]


def test_command_line_reports_bad_file(tmp_path, capsys):
    bad = tmp_path / "bad.csv"
    bad.write_text("[run]\nliquid,water,,\n")
    assert main(["analyze", str(bad), "--out", str(tmp_path / "o")]) == 2
    assert "bad.csv" in capsys.readouterr().err


def test_markdown_shows_comparison_signs_not_html_entities():
    """A flag text with ≤ reads as such in the Markdown summary (no '&lt;=')."""
    run = make_run("ethanol")
    a = vpkit.analyze(dataclasses.replace(run, reading=(run.reading[0] - 0.5,) + run.reading[1:]),
                      warn=False)
    s = a.summary()
    assert "≤ 0" in s and "&lt;" not in s


def test_free_text_in_markdown_carries_no_link_or_markup():
    from vpkit.output.run_summary import md_text

    out = md_text("[x](javascript:alert(1)) <img src=x onerror=y> *bold* a|b")
    assert "](" not in out.replace("\\](", "") and "<img" not in out
    assert out.startswith("\\[x\\]") and "\\*bold\\*" in out and "a\\|b" in out


def test_an_output_folder_that_is_a_file_is_said_once_and_plainly(tmp_path, capsys):
    path = vpkit.write_run(make_run("toluene"), tmp_path / "toluene_run.csv")
    taken = tmp_path / "results"
    taken.write_text("keep me", "utf-8")
    for command in (["analyze", str(path), str(path)], ["report", str(tmp_path)]):
        assert main(command + ["--out", str(taken)]) == 2
        err = capsys.readouterr().err
        assert err.count("is a file") == 1 and "results" in err and "Traceback" not in err
    assert taken.read_text("utf-8") == "keep me"


def test_two_run_files_of_one_name_keep_both_outputs(tmp_path, capsys):
    paths = []
    for k, liquid in enumerate(["toluene", "ethanol"]):
        (tmp_path / str(k)).mkdir()
        paths.append(str(vpkit.write_run(make_run(liquid), tmp_path / str(k) / "run.csv")))
    assert main(["analyze", *paths, "--out", str(tmp_path / "out")]) == 0
    assert "outputs are named run_2" in capsys.readouterr().out
    import pandas as pd

    first = pd.read_csv(tmp_path / "out" / "run_results.csv")
    second = pd.read_csv(tmp_path / "out" / "run_2_results.csv")
    assert (first["liquid"].item(), second["liquid"].item()) == ("toluene", "ethanol")
