"""Comparison with a published curve (vpkit.analysis.comparison)."""


import numpy as np

from vpkit.analysis.comparison import compare_to_reference
from vpkit.physics.curves import antoine_curve


def test_comparison_warns_outside_validity():
    c = antoine_curve("1-butanol")  # valid from 310.18 K
    T = np.array([300.0, 320.0, 340.0])
    cmp = compare_to_reference(c, T, c.p(T) * 1.01, [True] * 3, 320.0)
    np.testing.assert_allclose(cmp.deviation_percent, 1.0, rtol=1e-9)
    assert cmp.outside == (0,) and cmp.warnings
