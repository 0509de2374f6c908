"""Monte Carlo propagation (vpkit.analysis.monte_carlo, GUM Supplement 1)."""

import pytest

import vpkit
from tests.unit.analysis.test_budget import _run


def test_unknown_monte_carlo_inputs_are_refused():
    a = vpkit.analyze(_run(), warn=False)
    with pytest.raises(vpkit.InputError, match="unknown input"):
        a.monte_carlo(10, inputs=["thermometre"])


def test_draws_in_blocks_are_the_draws_in_one(monkeypatch):
    """Blocks only bound memory: one random stream, drawn and fitted in order, gives the
    same numbers whatever the block size (here 7 blocks of 300 against one of 2,000)."""
    import numpy as np

    import vpkit.analysis.monte_carlo as mc

    a = vpkit.analyze(_run(), warn=False)
    one = a.monte_carlo(2_000, seed=4)
    monkeypatch.setattr(mc, "BLOCK", 300)
    blocks = a.monte_carlo(2_000, seed=4)
    assert one.draws == blocks.draws == 2_000 and one.failed == blocks.failed
    assert np.array_equal(one.enthalpy, blocks.enthalpy)
