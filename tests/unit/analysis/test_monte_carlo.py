"""Monte Carlo propagation (vpkit.analysis.monte_carlo, GUM Supplement 1)."""

import pytest

import vpkit
from tests.unit.analysis.test_budget import _run


def test_unknown_monte_carlo_inputs_are_refused():
    a = vpkit.analyze(_run(), warn=False)
    with pytest.raises(vpkit.InputError, match="unknown input"):
        a.monte_carlo(10, inputs=["thermometre"])
