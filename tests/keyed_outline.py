"""A round shaft with one parallel keyway, as a point list (test helper).

Built here, in the tests, because the parametric keyed kind lives elsewhere.
Geometry: shaft radius R; keyway of width w cut from the top, its flat floor a
depth ``depth`` below the top of the circle on the centreline (the DIN 6885
t1 convention); the two floor corners rounded with radius rf (concave arcs).
"""

from __future__ import annotations

import math

import numpy as np


def keyed_outline(R: float, w: float, depth: float, rf: float,
                  n_circle: int = 720, n_fillet: int = 24) -> np.ndarray:
    """Counter-clockwise outline (n, 2) of the keyed section, not closed."""
    hw = 0.5 * w
    yfl = R - depth
    th0 = math.asin(hw / R)
    n_arc = int(round(n_circle * (2 * math.pi - 2 * th0) / (2 * math.pi)))
    ang = np.linspace(math.pi / 2 + th0, math.pi / 2 - th0 + 2 * math.pi, n_arc)
    circ = np.column_stack([R * np.cos(ang), R * np.sin(ang)])
    t = np.linspace(0.0, math.pi / 2, n_fillet + 1)
    c_right = np.array([hw - rf, yfl + rf])
    right = c_right + rf * np.column_stack([np.cos(-t), np.sin(-t)])
    c_left = np.array([-hw + rf, yfl + rf])
    left = c_left + rf * np.column_stack([np.cos(-np.pi / 2 - t), np.sin(-np.pi / 2 - t)])
    return np.vstack([circ, right, left])
