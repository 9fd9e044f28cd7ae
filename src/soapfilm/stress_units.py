"""Turning shear per unit torque into a stress for a stated torque.

Results carry the peak shear per unit torque, ``tau / T`` in ``1/unit^3``
where ``unit`` is the section's length unit.  For a torque ``T`` in N*m the
stress in pascal is::

    tau [Pa] = T [N*m] * (tau/T) [1/unit^3] / s^3,   s = metres per unit

because ``T [N*unit] = T [N*m] / s`` and ``1 N/unit^2 = 1/s^2 Pa``.
"""

from __future__ import annotations

import math

from .defaults import LENGTH_UNITS
from .errors import InputError

__all__ = ["STRESS_UNITS", "ShearScale", "shear_scale"]

#: Stress units a torque-scaled result can be shown in, with their size in pascal.
#: psi = lbf/in^2 = 4.4482216152605 N / 0.00064516 m^2 (exact by definition of lbf and in).
STRESS_UNITS = {
    "Pa": 1.0,
    "kPa": 1e3,
    "MPa": 1e6,
    "GPa": 1e9,
    "psi": 4.4482216152605 / 0.0254**2,
    "ksi": 1e3 * 4.4482216152605 / 0.0254**2,
}


class ShearScale:
    """Factor and label that turn shear per unit torque into what is shown.

    Attributes
    ----------
    factor : float
        Multiply ``tau / T`` (1/unit^3) by this.
    unit : str
        Unit of the scaled value (``"1/mm^3"`` or ``"MPa"``...).
    quantity : str
        Short name of the scaled quantity for labels.
    torque : float or None
        The torque in N*m, or None for per-unit-torque values.
    """

    def __init__(self, factor: float, unit: str, quantity: str, torque: float | None):
        self.factor = factor
        self.unit = unit
        self.quantity = quantity
        self.torque = torque

    def label(self) -> str:
        """Axis or colour-bar label with the unit."""
        return f"{self.quantity} [{self.unit}]"

    def __repr__(self) -> str:  # pragma: no cover - debugging aid
        return f"ShearScale({self.factor!r}, {self.unit!r}, torque={self.torque!r})"


def shear_scale(length_unit: str, torque: float | None = None,
                stress_unit: str = "MPa") -> ShearScale:
    """Scale for shear values of a section in ``length_unit``.

    Parameters
    ----------
    length_unit : str
        Length unit of the section (key of :data:`~soapfilm.profile.LENGTH_UNITS`).
    torque : float, optional
        Torque in N*m.  ``None`` keeps values per unit torque.
    stress_unit : str
        Key of :data:`STRESS_UNITS`, used only with a torque.

    Examples
    --------
    >>> s = shear_scale("mm", torque=100.0, stress_unit="MPa")
    >>> round(s.factor, 9)  # 100 N*m = 1e5 N*mm; N/mm^2 = MPa
    100000.0
    """
    if torque is None:
        return ShearScale(1.0, f"1/{length_unit}³", "shear stress per unit torque |τ|/T", None)
    if not math.isfinite(torque) or torque <= 0:
        raise InputError(f"torque must be a positive number in N*m, got {torque:g}",
                         where="--torque", fix="give the torque magnitude, e.g. --torque 250")
    if stress_unit not in STRESS_UNITS:
        raise InputError(f"unknown stress unit {stress_unit!r}", where="--stress-unit",
                         fix=f"use one of {', '.join(STRESS_UNITS)}")
    s = LENGTH_UNITS[length_unit]
    factor = torque / s**3 / STRESS_UNITS[stress_unit]
    return ShearScale(factor, stress_unit, f"shear stress |τ| at T = {torque:g} N·m", torque)
