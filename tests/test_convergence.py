"""Convergence order and the lower-bound property of the stress-function J.

Linear elements give an energy error O(h^2) in J on smooth solutions (any FE
text, e.g. Strang & Fix, An Analysis of the Finite Element Method, 1973, ch. 3).
The exact references are the Saint-Venant series for the rectangle and the
closed form for the equilateral triangle (see tests/reference.py).
"""

import numpy as np
import pytest

import reference as ref
from soapfilm import Profile, mesh_profile
from soapfilm.fem.torsion import solve_torsion

SIZES = [0.2, 0.1, 0.05, 0.025]


def _slope(h, err):
    return np.polyfit(np.log(h), np.log(err), 1)[0]


@pytest.mark.parametrize(
    "name,loop,exact",
    [
        ("rectangle 2:1 (T&G sec. 109)", ref.rectangle_points(2.0, 1.0), ref.rectangle_series(2, 1)[0]),
        ("equilateral triangle (Roark 7th Table 10.1)", ref.triangle_points(1.5),
         ref.equilateral_triangle(1.5)[0]),
    ],
)
def test_order_and_lower_bound(name, loop, exact):
    prof = Profile.from_loops([loop])
    errs_lo, errs_hi = [], []
    for h in SIZES:
        f = solve_torsion(mesh_profile(prof, h))
        # lower bound at every mesh size (rounding allowance 1e-12)
        assert f.j_lo <= exact * (1 + 1e-12), (name, h, f.j_lo, exact)
        assert f.j_hi >= exact * (1 - 1e-12), (name, h, f.j_hi, exact)
        errs_lo.append((exact - f.j_lo) / exact)
        errs_hi.append((f.j_hi - exact) / exact)
    order = _slope(SIZES, errs_lo)
    assert order >= 1.8, f"{name}: observed order {order:.2f} of J_lo, errors {errs_lo}"
    order_hi = _slope(SIZES, errs_hi)
    assert order_hi >= 1.8, f"{name}: observed order {order_hi:.2f} of J_hi, errors {errs_hi}"
