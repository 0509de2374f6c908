"""The stacked run record: padding, views, subsets, and the one default-uncertainty
rule. Expectations are the documented rule (vpkit.record.fields.DEFAULT_UNCERTAINTY, common
practice, no source) and the run's own entries converted by hand."""

import numpy as np

from tests.conftest import make_run
from vpkit.record import run_in_si
from vpkit.record.assemble import stack_runs


def test_padding_masks_and_rows():
    runs = {"a": make_run("ethanol", (25, 30, 35)), "b": make_run("water")}
    s = stack_runs(runs)
    assert s.R == 2 and s.N == 8 and list(s.n_points) == [3, 8]
    assert np.isnan(s.T[0, 3:]).all() and not s.mask[0, 3:].any()
    si = s.row(0)
    assert len(si.T) == 3 and si.liquid == "ethanol"
    np.testing.assert_array_equal(si.T, run_in_si(runs["a"]).T)
    sub = s.take([1])
    assert sub.run_ids == ("b",) and sub.N == 8


