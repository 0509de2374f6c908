"""Seeded mutation property at depth: damaged run files and long tables give vpkit's own
errors or a result, never a library exception, never output on stderr, and never an
absurd result without a flag.

Inputs: the bundled (invented) demo runs and a long table simulated from published
curves, with cells replaced by extreme numbers (1e400, 1e-5, nan, -273.16, inf, 1e308,
3.7e5), swapped units, shuffled cells and appended tokens. "Absurd" is ours (common
practice, no source): ΔH_vap outside 10-80 kJ/mol or more than 30 % from the reference,
or a normal boiling point outside 150-700 K. Marked `long` (about two minutes); `make
test` and CI run it, `pytest -m "not long"` skips it.
"""

import random
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.analysis.many_runs import analyze_table
from vpkit.errors import VpkitError
from vpkit.physics.simulate import NOISE
from vpkit.record.longtable import runs_to_table

ROOT = Path(__file__).resolve().parents[2]
TOKENS = ["1e400", "1e-5", "nan", "-273.16", "0", "-1", "inf", "1e308", "kPa", "degC", "K",
          "mL", "g", "bar", "mbar", "degF", "mmHg", "", "yes", "no", "reference", "x", "3.7e5",
          "-0", "1,5", "°C", "torr"]
OPTIONS = [{}, {"model": "antoine"}, {"air_from": "cold", "vapor_at_air_reference": "fit"},
           {"model": "constant_dcp", "weighting": "ordinary"}, {"air_from": "injected"},
           {"weighting": "weighted", "vapor_at_air_reference": "neglect"}]
N_FILES = 10_000
N_TABLES = 600


def _mutate(text: str, rnd: random.Random) -> str:
    lines = text.splitlines()
    for _ in range(rnd.randint(1, 3)):
        i = rnd.randrange(len(lines))
        cells = lines[i].split(",")
        j = rnd.randrange(len(cells))
        r = rnd.random()
        if r < 0.6:
            cells[j] = rnd.choice(TOKENS)
        elif r < 0.8:
            rnd.shuffle(cells)
        else:
            cells[j] += rnd.choice(TOKENS)
        lines[i] = ",".join(cells)
    return "\n".join(lines)


def _absurd_unflagged(row) -> bool:
    dH, ref, Tb = row["ΔH_vap [kJ/mol]"], row["reference ΔH_vap at T_m [kJ/mol]"], \
        row["T_b at 101.325 kPa [degC]"] + 273.15
    absurd = (not 10 <= dH <= 80) or (np.isfinite(ref) and abs(dH / ref - 1) > 0.3) or (
        np.isfinite(Tb) and not 150 <= Tb <= 700)
    return bool(absurd and not row["flags"])


def _check(fn, failures, key):
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error")  # any Python warning but vpkit's own is a finding
            warnings.simplefilter("ignore", vpkit.VpkitWarning)
            fn()
    except VpkitError:
        pass
    except Exception as exc:  # noqa: BLE001 - what this test hunts for
        failures.append((key, f"{type(exc).__name__}: {exc}"[:300]))


def _verdict(what, failures, absurd, capfd):
    _, err = capfd.readouterr()
    print(f"{what}: {len(failures)} unexpected exceptions, {len(absurd)} absurd results "
          "without a flag")
    assert not failures, failures[:5]
    assert not absurd, absurd[:5]
    assert err == "", err[:500]


@pytest.mark.long
def test_mutated_run_files(capfd):
    texts = [p.read_text() for p in sorted((ROOT / "data" / "demo").glob("*.csv"))]
    rnd = random.Random(2026)
    failures, absurd = [], []
    for k in range(N_FILES):
        text = _mutate(rnd.choice(texts), rnd)
        options = rnd.choice(OPTIONS)

        def one(text=text, options=options, k=k):
            a = vpkit.analyze(vpkit.parse_run(text, source=f"mutant{k}.csv"), warn=False,
                              **options)
            row = a.results().iloc[0]
            a.points()
            a.summary(shifts=False)
            if _absurd_unflagged(row):
                absurd.append((k, row["ΔH_vap [kJ/mol]"]))

        _check(one, failures, k)
    _verdict(f"{N_FILES} mutated run files", failures, absurd, capfd)


@pytest.mark.long
def test_mutated_long_tables(capfd):
    rng = np.random.default_rng(0)
    base = runs_to_table({f"r{k}": make_run(["ethanol", "water", "toluene"][k % 3], noise=NOISE,
                                            rng=rng) for k in range(6)})
    rnd = random.Random(7)
    failures, absurd = [], []
    for k in range(N_TABLES):
        t = base.copy().astype(object)
        for _ in range(rnd.randint(1, 4)):
            i, j = rnd.randrange(len(t)), rnd.randrange(len(t.columns))
            t.iat[i, j] = (rnd.choice(TOKENS) if rnd.random() < 0.8
                           else t.iat[rnd.randrange(len(t)), j])

        def one(t=t):
            s = analyze_table(t)
            ok = s[s["status"] == ""]
            absurd.extend(rid for rid, (_, row) in zip(ok["run_id"], ok.iterrows())
                          if _absurd_unflagged(row))

        _check(one, failures, k)
    _verdict(f"{N_TABLES} mutated long tables", failures, absurd, capfd)


def _base_table():
    rng = np.random.default_rng(1)
    return runs_to_table({f"r{k}": make_run(["ethanol", "water", "toluene"][k % 3],
                                            (25, 32, 39, 46, 53, 60), noise=NOISE, rng=rng)
                          for k in range(3)})


_BASE = None
CELL = ["", "nan", "-1", "0", "1e400", "-273.16", "inf", "x", "1,5", "yes", "no", "'=1+1",
        "r0", "r1", "-", "None", " ", "degC", "mL", "1e-300", "-5", "3.7e5", "@", "ethanol",
        "unknown liquid", "reference", "closed end", "open end", "'", "\t"]


@pytest.mark.long
def test_mutated_long_tables_hypothesis():
    """Hypothesis drives the long-table path: any cell, the run_id and header cells
    included, replaced by a hostile token, or rows dropped or duplicated. 10,000 examples
    under CI (CI=true), 300 otherwise; only vpkit's own errors may come out."""
    import os

    from hypothesis import HealthCheck, given, settings
    from hypothesis import strategies as st

    global _BASE
    _BASE = _BASE if _BASE is not None else _base_table()
    base = _BASE
    n = 10_000 if os.environ.get("CI") else 300
    edit = st.tuples(st.integers(0, len(base)), st.integers(0, len(base.columns) - 1),
                     st.sampled_from(CELL))

    @settings(max_examples=n, deadline=None, database=None, derandomize=True,
              suppress_health_check=list(HealthCheck))
    @given(st.lists(edit, min_size=1, max_size=4),
           st.lists(st.integers(0, len(base) - 1), max_size=3), st.booleans())
    def prop(edits, drop, dup):
        t = base.copy().astype(object)
        cols = list(t.columns)
        for i, j, token in edits:
            if i == len(t):  # the header row
                cols[j] = token or cols[j]
            else:
                t.iat[i, j] = token
        t.columns = cols
        t = t.drop(index=[t.index[k] for k in set(drop) if k < len(t)])
        if dup and len(t):
            t = pd.concat([t, t.iloc[:1]], ignore_index=True)
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("error")
                warnings.simplefilter("ignore", vpkit.VpkitWarning)
                analyze_table(t.reset_index(drop=True))
        except VpkitError:
            pass

    prop()
