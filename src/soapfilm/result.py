"""Result of a torsion analysis: a frozen object with a JSON-ready dict."""

from __future__ import annotations

import math
import warnings as _warnings
from dataclasses import dataclass, field

import numpy as np

from .fem.sectorial import WarpingProperties
from .fem.torsion import TorsionFields
from .mesh import Mesh
from .profile import Profile

__all__ = ["TorsionResult", "CAUTION", "json_ready"]

#: Short caution carried by every report and check output.
from .defaults import CAUTION  # noqa: E402  (re-exported; its home is defaults)


def diameter_same_stiffness(j: float) -> float:
    """d_J = (32 J / pi)^(1/4): the solid round bar with the same torsion constant."""
    return (32.0 * j / math.pi) ** 0.25


def diameter_same_strength(wt: float) -> float:
    """d_tau = (16 Wt / pi)^(1/3): the solid round bar with the same section modulus."""
    return (16.0 * wt / math.pi) ** (1.0 / 3.0)


@dataclass(frozen=True)
class TorsionResult:
    """Section properties in torsion, in the profile's length unit.

    Stresses are per unit torque (1/length^3); multiply by the torque.

    Attributes
    ----------
    profile, mesh : the analysed section and the final mesh
    fields : TorsionFields
        Nodal stress and warping functions (per unit G*theta).
    area, centroid, polar_moment : float, (float, float), float
        Net area, centroid, polar moment of area about the centroid (Ip), of
        the drawn outline (curves integrated exactly).
    torsion_constant_bounds : (float, float)
        Guaranteed ``(J_lo, J_hi)`` from the stress-function and
        warping-function solutions, for what :attr:`bounds_hold_for` says:
        the drawn outline with its curves, or the polygon given.
    max_shear_per_torque : float
        Peak shear stress divided by the torque, tau_max / T.
    peak_location : (float, float)
        Where the peak sits, in input coordinates.
    warnings : tuple of str
    refinement : tuple of dict
        One entry per adaptive step (elements, J_lo, J_hi, tau_max/T).
    estimated_relative_error : dict
        ``torsion_constant`` (half-width of the bracket over J) and
        ``max_shear`` (estimate from the last refinements, or on a single mesh
        the disagreement of the two fields).
    order : int
        Element order (1 linear, 2 quadratic).
    corners : tuple of soapfilm.corners.Corner
        Sharp re-entrant corners (the stress is unbounded there).
    converged : bool or None
        Whether the adaptive loop met its tolerances (None: no loop was run).
    max_shear_per_torque_warping : float or None
        The peak shear at the same place from the warping-function field: an
        independent cross-check of ``max_shear_per_torque``.
    warping : WarpingProperties or None
        Restrained-warping quantities: shear centre, warping constant Gamma,
        largest normalised warping, second moments and principal axes
        (:mod:`soapfilm.fem.sectorial`).
    """

    profile: Profile
    mesh: Mesh
    fields: TorsionFields
    area: float
    centroid: tuple[float, float]
    polar_moment: float
    torsion_constant_bounds: tuple[float, float]
    max_shear_per_torque: float
    peak_location: tuple[float, float]
    warnings: tuple[str, ...] = ()
    refinement: tuple[dict, ...] = ()
    estimated_relative_error: dict = field(default_factory=dict)
    order: int = 1
    corners: tuple = ()
    converged: bool | None = None
    max_shear_per_torque_warping: float | None = None
    warping: WarpingProperties | None = None

    @property
    def units(self) -> str:
        return self.profile.units

    @property
    def torsion_constant(self) -> float:
        """J, the centre of the guaranteed bracket."""
        lo, hi = self.torsion_constant_bounds
        return 0.5 * (lo + hi)

    @property
    def torsional_section_modulus(self) -> float:
        """Wt = T / tau_max."""
        return 1.0 / self.max_shear_per_torque

    @property
    def equivalent_diameter_stiffness(self) -> float:
        """Diameter of the round bar with the same J: (32 J / pi)^(1/4)."""
        return diameter_same_stiffness(self.torsion_constant)

    @property
    def equivalent_diameter_strength(self) -> float:
        """Diameter of the round bar with the same Wt: (16 Wt / pi)^(1/3)."""
        return diameter_same_strength(self.torsional_section_modulus)

    @property
    def bounds_hold_for(self) -> str:
        """What the J bounds are guaranteed for (a sentence)."""
        from .fem.torsion import BOUNDS_SCOPES

        return BOUNDS_SCOPES[getattr(self.fields, "bounds_scope", "polygon")]

    def to_dict(self, include_mesh: bool | None = None) -> dict:
        """Plain-JSON dictionary: what ``soapfilm solve --json`` writes.

        Every key, its type, unit and meaning is in README.md, section "JSON
        output", ``solve`` (tests/test_json_schema.py checks the output
        against those tables).  Keys are stable: later versions only add.
        ``mesh`` holds the mesh's sizes only; the mesh itself is written by
        :func:`soapfilm.export.write_mesh` (``--mesh-out``).  Numbers are
        finite or None (null).

        Parameters
        ----------
        include_mesh : bool, optional
            Deprecated and ignored (the mesh is always the summary).
        """
        if include_mesh is not None:
            _warnings.warn(
                "to_dict(include_mesh=...) is deprecated and ignored: 'mesh' always holds the "
                "counts; write the mesh with soapfilm.export.write_mesh (solve --mesh-out)",
                DeprecationWarning, stacklevel=2)
        lo, hi = self.torsion_constant_bounds
        out = {
            "units": self.units,
            "name": self.profile.name,
            "area": self.area,
            "centroid": list(self.centroid),
            "polar_moment": self.polar_moment,
            "torsion_constant": self.torsion_constant,
            "torsion_constant_bounds": [lo, hi],
            "bounds_hold_for": self.bounds_hold_for,
            "max_shear_per_torque": self.max_shear_per_torque,
            "max_shear_per_torque_cross_check": self.max_shear_per_torque_warping,
            "torsional_section_modulus": self.torsional_section_modulus,
            "peak_location": list(self.peak_location),
            "equivalent_diameter_stiffness": self.equivalent_diameter_stiffness,
            "equivalent_diameter_strength": self.equivalent_diameter_strength,
            "estimated_relative_error": dict(self.estimated_relative_error),
            "refinement": [dict(r) for r in self.refinement],
            "singular_corners": [
                {"x": c.x, "y": c.y, "interior_angle_deg": c.angle} for c in self.corners
            ],
            "converged": self.converged,
            "element_order": self.order,
            "warnings": list(self.warnings),
            "caution": CAUTION,
            "mesh": {
                "nodes": self.mesh.nnodes,
                "elements": self.mesh.nelements,
                "order": self.order,
            },
            "warping": _warping_dict(self.warping),
        }
        return json_ready(out)

    def summary_rows(self) -> list[tuple[str, str, str]]:
        """(quantity, value, unit) rows for a terminal or report table."""
        u = self.units
        lo, hi = self.torsion_constant_bounds
        j = self.torsion_constant
        tiny = 1e-9 * self.profile.size  # rounding noise of a coordinate

        def xy(v):
            return f"({v[0] if abs(v[0]) > tiny else 0.0:.5g}, {v[1] if abs(v[1]) > tiny else 0.0:.5g})"

        rows = [
            ("Area A", f"{self.area:.6g}", f"{u}^2"),
            ("Centroid (x, y)", xy(self.centroid), u),
            ("Polar moment Ip (about centroid)", f"{self.polar_moment:.6g}", f"{u}^4"),
            ("Torsion constant J", f"{j:.6g}", f"{u}^4"),
            ("  guaranteed bounds", f"[{lo:.6g}, {hi:.6g}]", f"{u}^4"),
            ("  relative half-width", f"{(hi - lo) / (hi + lo):.1e}", "-"),
            ("  bounds hold for", self.bounds_hold_for, ""),
            ("J / Ip", f"{j / self.polar_moment:.4f}", "-"),
            ("Peak shear per unit torque", f"{self.max_shear_per_torque:.6g}", f"1/{u}^3"),
            ("  at (x, y)", xy(self.peak_location), u),
            ("Torsional section modulus Wt", f"{self.torsional_section_modulus:.6g}", f"{u}^3"),
            ("Equivalent round dia. (stiffness)", f"{self.equivalent_diameter_stiffness:.5g}", u),
            ("Equivalent round dia. (strength)", f"{self.equivalent_diameter_strength:.5g}", u),
            ("Mesh", f"{self.mesh.nelements} triangles, {self.mesh.nnodes} nodes", f"P{self.order}"),
        ]
        err = self.estimated_relative_error.get("max_shear")
        extra = []
        if self.max_shear_per_torque_warping is not None:
            extra.append(("  cross-check (warping field)",
                          f"{self.max_shear_per_torque_warping:.6g}", f"1/{u}^3"))
        if err is not None:
            extra.append(("  estimated relative error", f"{err:.1e}", "-"))
        rows[10:10] = extra
        rows[-1:-1] = _warping_rows(self.warping, u, xy)
        return rows

    def _repr_html_(self) -> str:  # notebooks
        from html import escape

        cells = "".join(
            f"<tr><td>{escape(q)}</td><td style='text-align:right'>{escape(v)}</td>"
            f"<td>{escape(u)}</td></tr>"
            for q, v, u in self.summary_rows()
        )
        warn = "".join(f"<li>{escape(w)}</li>" for w in self.warnings)
        return (
            f"<table>{cells}</table>"
            + (f"<ul>{warn}</ul>" if warn else "")
            + f"<p><small>{escape(CAUTION)}</small></p>"
        )


def _warping_dict(w: WarpingProperties | None) -> dict | None:
    """The JSON object ``warping`` (README, "JSON output"), or None."""
    if w is None:
        return None
    shear = None if w.does_not_warp else w.max_warping_shear
    return {
        "shear_centre": list(w.shear_centre),
        "warping_constant": w.warping_constant,
        "max_warping": w.max_warping,
        "max_warping_location": list(w.max_warping_location),
        "max_warping_shear_per_warping_torque": shear,
        "max_warping_shear_location": (None if shear is None
                                       else list(w.max_warping_shear_location)),
        "second_moments": list(w.second_moments),
        "principal_angle_deg": math.degrees(w.principal_angle),
        "principal_moments": list(w.principal_moments),
        "estimated_relative_error": {
            "warping_constant": w.estimated_relative_error.get("warping_constant"),
            "shear_centre": w.estimated_relative_error.get("shear_centre"),
        },
    }


def _warping_rows(w: WarpingProperties | None, u: str, xy) -> list[tuple[str, str, str]]:
    """Table rows of the restrained-warping quantities."""
    if w is None:
        return []
    err = w.estimated_relative_error
    ix, iy, ixy = w.second_moments
    # rounding noise of the moment sums (a few eps of I_x + I_y) is written as 0, like the
    # coordinates' (the JSON keeps the numbers as computed)
    noise = 1e-12 * (abs(ix) + abs(iy))
    ixy_shown = 0.0 if abs(ixy) <= noise else ixy
    imax, imin = w.principal_moments
    if imax - imin <= noise:  # equal principal moments (round, square, regular polygon)
        angle_shown = "any (I_max = I_min)"
    else:
        angle = 0.0 if ixy_shown == 0.0 and ix >= iy else math.degrees(w.principal_angle)
        angle_shown = f"{angle:.4g}"
    flat = [("  Γ zero within its estimate", "section does not warp", "")] \
        if w.does_not_warp else []

    def est(key):
        # twice the change over the last refinements: an indicator, not a bound (it fell
        # short of errors of 7e-9 to 2.6e-7 against the ellipse's closed form), so named
        # apart from the J bracket and the peak's estimate
        v = err.get(key)
        return [] if v is None else [("  error indicator (history)", f"{v:.1e}", "-")]

    return [
        ("Shear centre (x, y)", xy(w.shear_centre), u),
        *est("shear_centre"),
        ("Warping constant Γ", f"{w.warping_constant:.6g}", f"{u}^6"),
        *est("warping_constant"),
        *flat,
        ("Largest |ω_n| (normalised warping)", f"{w.max_warping:.6g}", f"{u}^2"),
        ("  at (x, y)", xy(w.max_warping_location), u),
        *([] if w.max_warping_shear is None or flat else [
            ("Warping shear per unit warping torque", f"{w.max_warping_shear:.6g}", f"1/{u}^3"),
            ("  at (x, y)", xy(w.max_warping_shear_location), u)]),
        ("Second moments I_x, I_y (centroid)", f"{ix:.6g}, {iy:.6g}", f"{u}^4"),
        ("  product I_xy", f"{ixy_shown:.6g}", f"{u}^4"),
        ("Principal moments I_max, I_min", f"{w.principal_moments[0]:.6g}, "
                                           f"{w.principal_moments[1]:.6g}", f"{u}^4"),
        ("  I_max axis from x (anticlockwise)", angle_shown, "deg"),
    ]


def json_ready(obj):
    """A copy of ``obj`` that ``json.dumps(..., allow_nan=False)`` takes.

    Dicts, lists and tuples are copied (tuples become lists, keys strings);
    numpy scalars become Python numbers; a float that is not finite (an
    estimate not yet available, a quotient by zero) becomes None (null), so
    the JSON never holds NaN or Infinity.

    Examples
    --------
    >>> json_ready({"a": (1.5, float("nan")), "b": {"c": float("inf")}})
    {'a': [1.5, None], 'b': {'c': None}}
    """
    if isinstance(obj, dict):
        return {str(k): json_ready(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [json_ready(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return json_ready(obj.tolist())
    if isinstance(obj, (bool, np.bool_)):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        return float(obj) if math.isfinite(obj) else None
    return obj


def nodal_shear_magnitude(result: TorsionResult) -> np.ndarray:
    """|grad phi| / J averaged to the nodes (per unit torque), for plots."""
    f = result.fields
    t = result.mesh.t
    g = np.einsum("cie,ie->ce", f.elem_grad, f.phi[t])
    mag = np.hypot(g[0], g[1]) * f.elem_area
    n = result.mesh.nnodes
    num = np.bincount(t.ravel(), weights=np.tile(mag, 3), minlength=n)
    den = np.bincount(t.ravel(), weights=np.tile(f.elem_area, 3), minlength=n)
    return num / den / result.torsion_constant
