"""Report for a set of runs: self-contained HTML, Markdown, escaping, command line.

Structure checks only (common practice, no source): no numbers are asserted here."""

from html.parser import HTMLParser

import numpy as np

import vpkit
from tests.conftest import make_run
from vpkit.__main__ import main
from vpkit.analysis.many_runs import analyze_many
from vpkit.output.section_report import write_batch_report
from vpkit.physics.simulate import NOISE


class _Collect(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags, self.imgs, self.scripts, self.text = [], [], 0, []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        if tag == "img":
            self.imgs.append(dict(attrs)["src"])
        if tag in ("script", "link", "iframe"):
            self.scripts += 1

    def handle_data(self, data):
        self.text.append(data)


def _folder(tmp_path):
    rng = np.random.default_rng(31)
    folder = tmp_path / "section"
    folder.mkdir()
    for k, liquid in enumerate(["ethanol", "ethanol", "toluene", "water"]):
        run = make_run(liquid, noise=NOISE, rng=rng, boiling_point=350.0)
        if k == 1:
            run = run.with_include([True] * 7 + [False],
                                   [""] * 7 + ["<script>alert('x')</script> | bubble lost"])
        vpkit.write_run(run, folder / f"pair{k + 1}.csv")
    (folder / "pair9.csv").write_text("[run]\nliquid,water,,\n")
    return folder


def test_html_is_self_contained_and_escapes_user_text(tmp_path):
    res = write_batch_report(analyze_many(_folder(tmp_path)), tmp_path / "out")
    html = res["html"].read_text()
    p = _Collect()
    p.feed(html)
    assert p.scripts == 0 and "http" not in " ".join(p.imgs)
    assert len(p.imgs) == 1 + 1 + 4  # overview + the ethanol section (2 runs) + one per run
    assert all(src.startswith("data:image/png;base64,") for src in p.imgs)
    assert "<script>alert" not in html and "&lt;script&gt;alert" in html
    text = " ".join(p.text)
    assert "Safety" in text and "Methods" in text and "pair9.csv" in text
    assert "1 point was left out of the fits" in text
    assert "Runs not analysed" in text


def test_markdown_report_and_summary(tmp_path):
    res = write_batch_report(analyze_many(_folder(tmp_path)), tmp_path / "out")
    md = res["markdown"].read_text()
    assert "![overview](figures/overview.png)" in md
    assert (tmp_path / "out" / "figures" / "run_pair1.png").exists()
    assert "&lt;script&gt;" in md and "\\| bubble lost" in md
    summary = res["summary"]
    assert len(summary) == 5 and len(res["failed"]) == 1  # the unreadable file keeps a row
    assert (summary["status"] == "").sum() == 4
    assert "pair9.csv" in summary.loc[summary["status"] != "", "run_id"].iloc[0]


def test_report_command(tmp_path, capsys):
    assert main(["report", str(_folder(tmp_path)), "--out", str(tmp_path / "o")]) == 0
    out = capsys.readouterr().out
    assert "4 runs analysed" in out and "could not be read" in out
    assert (tmp_path / "o" / "report.html").exists()


def test_the_section_part_and_consensus_csv(tmp_path):
    """The report names the estimators and their sources, shows ΔH_vap with its u, writes
    consensus.csv with every estimator, and every number in its tables follows the one
    rounding rule (no value of a CSV with full precision leaks into the text)."""
    import pandas as pd

    res = write_batch_report(analyze_many(_folder(tmp_path)), tmp_path / "out")
    md = res["markdown"].read_text()
    assert "## Section consensus" in md and "Paule–Mandel" in md and "ISO 13528" in md
    cons = pd.read_csv(res["consensus_csv"])
    assert list(cons["liquid"]) == ["ethanol"]
    for col in ("Birge ratio", "DerSimonian-Laird ΔH_vap [kJ/mol]",
                "robust ΔH_vap (Algorithm A) [kJ/mol]", "joint-fit ΔH_vap [kJ/mol]"):
        assert np.isfinite(cons[col]).all(), col
    row = res["summary"].set_index("run_id").loc["pair1"]
    shown = vpkit.display.value_u(row["ΔH_vap [kJ/mol]"], row["u(ΔH_vap) [kJ/mol]"])
    assert f"| {shown} |" in md
    assert repr(row["ΔH_vap [kJ/mol]"]) not in md


def test_run_ids_that_clean_to_one_file_name_keep_both_figures(tmp_path):
    """Issue "large and hostile inputs": 'a b' and 'a_b' (and a run called 'overview')
    once overwrote each other's figures."""
    rng = np.random.default_rng(4)
    runs = {rid: make_run("ethanol", noise=NOISE, rng=rng)
            for rid in ("a b", "a_b", "overview")}
    res = write_batch_report(analyze_many(runs), tmp_path / "rep")
    figs = sorted(p.name for p in (tmp_path / "rep" / "figures").glob("run_*.png"))
    assert figs == ["run_a_b.png", "run_a_b_2.png", "run_overview.png"]
    md = res["markdown"].read_text("utf-8")
    assert "(figures/run_a_b.png)" in md and "(figures/run_a_b_2.png)" in md
    assert (tmp_path / "rep" / "figures" / "overview.png").exists()
