"""Small sections and closed forms shared by the picture, report and mesh-file tests."""

from __future__ import annotations

import functools
import io
import math

import numpy as np

from soapfilm import Profile, analyse


def rectangle_series(b: float, t: float, terms: int = 200) -> tuple[float, float]:
    """Exact J and tau_max/T of a b x t rectangle (b >= t, full side lengths).

    Timoshenko & Goodier, Theory of Elasticity, 3rd ed., sec. 109 (series):
    J = (b t^3 / 3) [1 - (192/pi^5)(t/b) sum_{n odd} tanh(n pi b / 2t) / n^5],
    tau_max = G theta t k, k = 1 - (8/pi^2) sum_{n odd} 1 / (n^2 cosh(n pi b / 2t)),
    so tau_max / T = t k / J, at the middle of the long sides.
    """
    n = np.arange(1, 2 * terms, 2, dtype=float)
    j = b * t**3 / 3 * (1 - 192 / math.pi**5 * (t / b) * np.sum(np.tanh(n * math.pi * b / (2 * t))
                                                                   / n**5))
    x = n * math.pi * b / (2 * t)
    sech = 2 * np.exp(-x) / (1 + np.exp(-2 * x))  # 1/cosh without overflow
    k = 1 - 8 / math.pi**2 * np.sum(sech / n**2)
    return float(j), float(t * k / j)


def rectangle(b=20.0, t=10.0, name="bar 20x10") -> Profile:
    return Profile.from_loops([[(0, 0), (b, 0), (b, t), (0, t)]], name=name)


def circle_loop(r: float, n: int, clockwise=False) -> np.ndarray:
    th = np.linspace(0, 2 * np.pi, n, endpoint=False)
    xy = np.c_[r * np.cos(th), r * np.sin(th)]
    return xy[::-1] if clockwise else xy


def hollow_circle(ro=10.0, ri=6.0, n=256) -> Profile:
    return Profile.from_loops([circle_loop(ro, n), circle_loop(ri, n)], name="tube d20/d12")


def box_tube() -> Profile:
    return Profile.from_loops([[(0, 0), (40, 0), (40, 25), (0, 25)],
                               [(4, 4), (36, 4), (36, 21), (4, 21)]], name="box tube 40x25x4")


@functools.cache
def rect_result():
    return analyse(rectangle(), mesh_size=0.4)


@functools.cache
def tube_result():
    return analyse(box_tube(), mesh_size=0.8)


def png_pixels(data: bytes) -> np.ndarray:
    """RGB(A) float array of a PNG."""
    import matplotlib.image as mpimg

    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    return mpimg.imread(io.BytesIO(data), format="png")


def nonwhite_fraction(img: np.ndarray) -> float:
    rgb = img[..., :3]
    return float(np.mean(np.any(rgb < 0.94, axis=-1)))
