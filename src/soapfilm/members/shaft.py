"""Shaft checks in torsion: one section, or a stepped shaft of several.

Pure mechanics on plain numbers in SI base units (m, N*m, Pa, rad); nothing
here reads files or prints.  Each section enters through its torsion
constant J and its peak shear per unit torque tau_max/T, computed by the
finite-element solver for any section, or by the closed forms for plain
round and hollow round sections.

Sign convention: the shaft axis x runs from the left end (x = 0) to the
right; torques are vectors along +x by the right-hand rule.  The internal
torque T(x) is the torque the part right of a cut exerts on the part left
of it, positive along +x, so that ``T = G J d(phi)/dx`` and an end torque
+T0 on a shaft held at x = 0 gives T = +T0 and a positive twist.

Twist check (rule of thumb, common practice): the limit is a twist per
length, 0.25 deg/m by default, and it is meant for lengths of shaft that
carry torque from one station to another.  By default (``twist_rule =
"spans"``) it limits the relative rotation of every two stations (loads and
held stations; for one bar, its two ends): at most ``limit * max(distance,
basis)``, where the basis is the length the limit is written per (1 m for
deg/m, 1 ft for deg/ft).  A stretch shorter than the basis may twist as much
as the basis may: a short seat's fraction of a degree is not what a per-metre
rule limits.  ``twist_rule = "segments"`` applies the limit to the twist per
length of every segment, however short (the strictest reading).

References
----------
Gere, J. M., Mechanics of Materials: torsion of circular bars, nonuniform
torsion (stepped bars, sum of T_i L_i / (G_i J_i)) and statically
indeterminate torsional members (equilibrium plus compatibility of twist).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from ..materials import Allowable, Material
from ..result import diameter_same_stiffness, diameter_same_strength

__all__ = [
    "Section",
    "round_section",
    "section_from_result",
    "nominal_diameter_hint",
    "SectionCheck",
    "check_section",
    "Segment",
    "Load",
    "Support",
    "ShaftModel",
    "SegmentResult",
    "ShaftResult",
    "analyse_shaft",
    "TwistStretch",
    "DEFAULT_TWIST_LIMIT",
    "DEFAULT_TWIST_BASIS",
    "TWIST_LIMIT_NOTE",
    "TWIST_RULES",
    "kts_basis_text",
    "check_nominal_diameter",
    "NOMINAL_RATIO",
]

#: Default twist-per-length limit, rad/m: 0.25 deg/m for machine shafts.
DEFAULT_TWIST_LIMIT = math.radians(0.25)
TWIST_LIMIT_NOTE = (
    "rule of thumb for machine shafts (common practice, from memory), not a code requirement"
)
#: Length the default limit is written per (m): a stretch shorter than this may
#: twist ``limit * DEFAULT_TWIST_BASIS``.
DEFAULT_TWIST_BASIS = 1.0
#: How the twist limit is applied: between stations (default) or per segment.
TWIST_RULES = {
    "spans": "the twist between every two stations (for one bar: its ends), over their "
             "distance, a distance shorter than the basis counting as the basis",
    "segments": "the twist per length of every segment, however short (the strictest reading)",
}


# --------------------------------------------------------------------------- sections
class Verdict:
    """``utilisation``, ``governs`` and ``passed`` of a check from its
    ``utilisation_stress`` and ``utilisation_twist`` (None: no twist check); mixed into
    the checks of a section, a shaft segment, a shaft and a member."""

    @property
    def utilisation(self) -> float:
        return max(self.utilisation_stress, self.utilisation_twist or 0.0)

    @property
    def governs(self) -> str:
        """``"stress"`` or ``"twist"``: which check has the larger utilisation."""
        return "twist" if (self.utilisation_twist or 0.0) > self.utilisation_stress else "stress"

    @property
    def passed(self) -> bool:
        return self.utilisation <= 1.0


@dataclass(frozen=True)
class Section:
    """Torsion properties of a section, in SI units.

    Attributes
    ----------
    name : str
    torsion_constant : float
        J in m^4.
    max_shear_per_torque : float
        tau_max / T in 1/m^3.
    method : str
        ``"closed form"`` or ``"finite elements"``.
    nominal_diameter : float or None
        Diameter (m) on which Kts is based: 16 T / (pi d^3).  Only sections
        with a stress raiser on a round base (keyways, flats, splines) have
        one; a plain round bar or tube has none (no Kts).
    area, polar_moment : float or None
    torsion_constant_bounds : (float, float) or None
        Guaranteed bracket on J from the solver (m^4).
    warnings : tuple of str
    nominal_bore : float or None
        Bore (m) of a hollow round base: Kts is then based on the tube's
        nominal stress 16 T d / (pi (d^4 - d_i^4)), so that the hollow-section
        effect is not counted as a stress concentration.
    nominal_source : str
        Where the nominal diameter comes from (shown beside Kts).
    outside_diameter : float or None
        Outside diameter of a round section (m), for drawings.
    warping_constant : float or None
        Gamma = int omega_n^2 dA (m^6) about the shear centre; 0 for a round
        section (it does not warp), None where the section's result has none.
    max_warping : float or None
        Largest |omega_n| over the section (m^2), for sigma_w = B omega_n / Gamma.
    max_warping_shear : float or None
        Largest warping shear stress per unit warping torque (1/m^3), for
        tau_w = |T_w| * max_warping_shear; 0 for a round section, None where
        the section's result has none.
    size : float or None
        Largest distance across the section (m): the scale against which a
        member's warping decay length 1/lambda is judged (members/member.py).
    """

    name: str
    torsion_constant: float
    max_shear_per_torque: float
    method: str = "closed form"
    nominal_diameter: float | None = None
    area: float | None = None
    polar_moment: float | None = None
    torsion_constant_bounds: tuple[float, float] | None = None
    warnings: tuple[str, ...] = ()
    nominal_bore: float | None = None
    nominal_source: str = ""
    outside_diameter: float | None = None
    warping_constant: float | None = None
    max_warping: float | None = None
    size: float | None = None
    max_warping_shear: float | None = None

    @property
    def torsional_section_modulus(self) -> float:
        """Wt = T / tau_max (m^3)."""
        return 1.0 / self.max_shear_per_torque

    @property
    def equivalent_diameter_stiffness(self) -> float:
        """d_J = (32 J / pi)^(1/4): round bar of the same stiffness (m)."""
        return diameter_same_stiffness(self.torsion_constant)

    @property
    def equivalent_diameter_strength(self) -> float:
        """d_tau = (16 Wt / pi)^(1/3): round bar of the same peak stress (m)."""
        return diameter_same_strength(self.torsional_section_modulus)

    def kts(self, nominal_diameter: float | None = None) -> float | None:
        """Stress concentration in torsion, tau_max / (16 T / (pi d^3)).

        Based on ``nominal_diameter`` if given (a solid round), else the
        section's own nominal diameter and bore
        (``16 T d / (pi (d^4 - d_i^4))``); None when neither is known.
        """
        if nominal_diameter is not None:
            d, bore = nominal_diameter, 0.0
        elif self.nominal_diameter is not None:
            d, bore = self.nominal_diameter, self.nominal_bore or 0.0
        else:
            return None
        return self.max_shear_per_torque * math.pi * (d**4 - bore**4) / (16.0 * d)


def kts_basis_text(d: float, bore: float | None, fmt) -> str:
    """``tau_max / (16 T / (pi d^3)), d = 40 mm``: the nominal stress of a Kts in words.

    ``fmt(value_m)`` formats a length.
    """
    if bore:
        return (f"tau_max / (16 T d / (pi (d^4 - d_i^4))), d = {fmt(d)}, "
                f"d_i = {fmt(bore)}")
    return f"tau_max / (16 T / (pi d^3)), d = {fmt(d)}"


#: how far a nominal diameter may be from the section's own size (its d_tau, the round
#: bar of the same peak stress) before a Kts based on it is refused.  For a solid base
#: d / d_tau = Kts^(1/3): a keyed shaft (Kts about 2) 1.3, a Kts of 1000 only reaches 10;
#: a thin tube (d/t = 100) is 2.3 d_tau (closed forms of J and Wt).  A factor of 10 is a
#: unit slip (mm for m, in for mm) or a typing error
NOMINAL_RATIO = 10.0


def check_nominal_diameter(section: Section, d: float | None, where: str) -> None:
    """Refuse a nominal diameter that cannot be the round base of ``section`` (m).

    Kts = tau_max / (16 T / (pi d^3)) goes with the cube of ``d``: a diameter a
    thousand times too small gives a Kts of 1e-9 that prints as 0.
    """
    if d is None:
        return
    d_tau = section.equivalent_diameter_strength
    if not (d > 0 and math.isfinite(d)):
        raise InputError(f"the nominal diameter must be positive, got {d:g} m", where=where)
    if not (d_tau / NOMINAL_RATIO <= d <= d_tau * NOMINAL_RATIO):
        raise InputError(
            f"a nominal diameter of {d * 1e3:g} mm is not the size of this section (a round bar "
            f"of the same peak stress is {d_tau * 1e3:.4g} mm across): a Kts based on it would "
            "mean nothing", where=where,
            fix="give the diameter of the round bar the stress raiser is cut into, with its unit")


def round_section(diameter: float, bore: float = 0.0, name: str = "") -> Section:
    """Solid or hollow round section by the closed forms.

    ``J = pi (d^4 - d_i^4) / 32`` and ``tau_max = T (d/2) / J``, exact for
    the circle (no polygon, no mesh).  A plain round bar or tube has no
    stress raiser, so it has no nominal diameter and no Kts.

    References
    ----------
    Gere, Mechanics of Materials, torsion of circular bars (torsion formula).
    """
    if not (diameter > 0 and math.isfinite(diameter)):
        raise InputError(f"diameter must be positive, got {diameter}")
    if not (0 <= bore < diameter):
        raise InputError(f"bore {bore} must be at least 0 and less than the diameter {diameter}")
    j = math.pi * (diameter**4 - bore**4) / 32.0
    label = name or (f"round d={diameter * 1e3:g} mm" if bore == 0
                     else f"tube d={diameter * 1e3:g}/{bore * 1e3:g} mm")
    return Section(
        name=label,
        torsion_constant=j,
        max_shear_per_torque=0.5 * diameter / j,
        method="closed form",
        area=math.pi * (diameter**2 - bore**2) / 4.0,
        polar_moment=j,
        torsion_constant_bounds=(j, j),
        outside_diameter=diameter,
        warping_constant=0.0,  # omega = 0 on a circle and a concentric tube
        max_warping=0.0,
        size=diameter,
        max_warping_shear=0.0,
    )


def nominal_diameter_hint(obj) -> float | None:
    """Nominal diameter a section carries itself, in ITS length unit.

    Hook for round-based parametric kinds (keyed, splined, flats): a profile
    (or result) may carry ``nominal_diameter`` as an attribute or in a
    ``settings``/``meta`` mapping.  Returns None when it does not.
    """
    for holder in (obj, getattr(obj, "profile", None)):
        if holder is None:
            continue
        d = getattr(holder, "nominal_diameter", None)
        if d is None:
            for name in ("settings", "meta", "metadata", "parameters"):
                m = getattr(holder, name, None)
                if isinstance(m, dict) and m.get("nominal_diameter") is not None:
                    d = m["nominal_diameter"]
                    break
        if isinstance(d, int | float) and d > 0:
            return float(d)
    return None


def section_from_result(result, nominal_diameter: float | None = None, name: str = "",
                        nominal_bore: float | None = None, nominal_source: str = "",
                        outside_diameter: float | None = None) -> Section:
    """Convert a :class:`~soapfilm.result.TorsionResult` to SI.

    Parameters
    ----------
    result : TorsionResult
        In its profile's length unit.
    nominal_diameter : float, optional
        In metres; default: the section's own (see :func:`nominal_diameter_hint`).
    nominal_bore, outside_diameter : float, optional
        In metres (see :class:`Section`).
    nominal_source : str
        Where the nominal diameter comes from, in words.
    """
    from ..profile import LENGTH_UNITS

    s = LENGTH_UNITS[result.units]
    if nominal_diameter is None:
        hint = nominal_diameter_hint(result)
        nominal_diameter = None if hint is None else hint * s
        if hint is not None and not nominal_source:
            nominal_source = "the section's own"
    lo, hi = result.torsion_constant_bounds
    warping = getattr(result, "warping", None)  # section quantities of restrained warping
    return Section(
        name=name or result.profile.name or "section",
        torsion_constant=result.torsion_constant * s**4,
        max_shear_per_torque=result.max_shear_per_torque / s**3,
        method="finite elements",
        nominal_diameter=nominal_diameter,
        area=result.area * s**2,
        polar_moment=result.polar_moment * s**4,
        torsion_constant_bounds=(lo * s**4, hi * s**4),
        warnings=tuple(result.warnings),
        nominal_bore=nominal_bore if nominal_diameter is not None else None,
        nominal_source=nominal_source if nominal_diameter is not None else "",
        outside_diameter=outside_diameter,
        warping_constant=None if warping is None else warping.warping_constant * s**6,
        max_warping=None if warping is None else warping.max_warping * s**2,
        size=result.profile.diameter * s,
        max_warping_shear=None if warping is None or warping.max_warping_shear is None
        or warping.does_not_warp else warping.max_warping_shear / s**3,
    )


# --------------------------------------------------------------------------- one section
@dataclass(frozen=True)
class SectionCheck(Verdict):
    """Stress, twist and stiffness of a prismatic bar under a torque (SI).

    ``utilisation`` is the larger of the stress and the twist utilisation;
    ``passed`` means it is at most 1.  The twist utilisation follows
    ``twist_rule``: ``"spans"`` (the bar is one span between the stations at
    its ends: its twist angle against ``twist_limit * max(length,
    twist_basis)``) or ``"segments"`` (its twist per length against the
    limit, however short).
    """

    section: Section
    torque: float
    length: float
    shear_modulus: float
    allowable: Allowable
    twist_limit: float
    max_shear_stress: float
    twist_angle: float
    twist_per_length: float
    torsional_stiffness: float
    utilisation_stress: float
    utilisation_twist: float
    nominal_diameter: float | None = None
    twist_basis: float = DEFAULT_TWIST_BASIS
    twist_rule: str = "spans"

    @property
    def allowed_twist(self) -> float:
        """Twist angle the limit allows this bar (rad)."""
        if self.twist_rule == "segments":
            return self.twist_limit * self.length
        return self.twist_limit * max(self.length, self.twist_basis)

    @property
    def kts(self) -> float | None:
        return self.section.kts(self.nominal_diameter
                                if self.nominal_diameter != self.section.nominal_diameter
                                else None)


def _check_twist_rule(rule: str) -> str:
    if rule not in TWIST_RULES:
        raise InputError(f"unknown twist rule {rule!r}",
                         fix=f"use one of {', '.join(TWIST_RULES)}")
    return rule


def check_section(
    section: Section,
    torque: float,
    length: float,
    shear_modulus: float,
    allowable: Allowable,
    twist_limit: float = DEFAULT_TWIST_LIMIT,
    nominal_diameter: float | None = None,
    twist_basis: float = DEFAULT_TWIST_BASIS,
    twist_rule: str = "spans",
) -> SectionCheck:
    """Check one prismatic bar: tau = T tau_max/T, phi = T L / (G J), k = G J / L.

    Parameters
    ----------
    section : Section
    torque, length, shear_modulus : float
        N*m, m, Pa.  The sign of the torque only sets the sense of twist.
    allowable : Allowable
        Allowable shear stress.
    twist_limit : float
        Allowed twist per length, rad/m.
    nominal_diameter : float, optional
        Basis for Kts (m); default the section's own.
    twist_basis : float
        Length the limit is written per (m); see the module docstring.
    twist_rule : {"spans", "segments"}
        ``"spans"``: the bar is the span between its ends, its twist angle is
        held against ``twist_limit * max(length, twist_basis)``;
        ``"segments"``: its twist per length against ``twist_limit``.

    References
    ----------
    Gere, Mechanics of Materials: torsion of circular bars (phi = T L / (G J)).
    """
    for value, what in ((length, "length"), (shear_modulus, "shear modulus"),
                        (allowable.value, "allowable shear stress"), (twist_limit, "twist limit"),
                        (twist_basis, "twist basis length")):
        if not (value > 0 and math.isfinite(value)):
            raise InputError(f"the {what} must be positive, got {value:g}")
    _check_twist_rule(twist_rule)
    gj = shear_modulus * section.torsion_constant
    tau = abs(torque) * section.max_shear_per_torque
    rate = torque / gj
    if twist_rule == "segments":
        util_twist = abs(rate) / twist_limit
    else:
        util_twist = abs(rate * length) / (twist_limit * max(length, twist_basis))
    return SectionCheck(
        section=section,
        torque=torque,
        length=length,
        shear_modulus=shear_modulus,
        allowable=allowable,
        twist_limit=twist_limit,
        max_shear_stress=tau,
        twist_angle=rate * length,
        twist_per_length=rate,
        torsional_stiffness=gj / length,
        utilisation_stress=tau / allowable.value,
        utilisation_twist=util_twist,
        nominal_diameter=nominal_diameter if nominal_diameter is not None
        else section.nominal_diameter,
        twist_basis=twist_basis,
        twist_rule=twist_rule,
    )


# --------------------------------------------------------------------------- stepped shafts
@dataclass(frozen=True)
class Segment:
    """A prismatic length of shaft: one section, one material."""

    name: str
    length: float
    section: Section
    material: Material
    allowable: Allowable


@dataclass(frozen=True)
class Load:
    """A torque applied at a station (gear, pulley, coupling), N*m along +x."""

    name: str
    position: float
    torque: float


@dataclass(frozen=True)
class Support:
    """A station held against turning: it reacts whatever torque arrives.

    Radial bearings do not react torque and are not supports here.
    """

    name: str
    position: float


@dataclass(frozen=True)
class ShaftModel:
    """A stepped shaft: segments in order from x = 0, loads and supports."""

    name: str
    segments: tuple[Segment, ...]
    loads: tuple[Load, ...] = ()
    supports: tuple[Support, ...] = ()
    twist_limit: float = DEFAULT_TWIST_LIMIT
    twist_limit_note: str = TWIST_LIMIT_NOTE
    twist_basis: float = DEFAULT_TWIST_BASIS
    twist_rule: str = "spans"

    @property
    def length(self) -> float:
        return float(sum(s.length for s in self.segments))

    @property
    def boundaries(self) -> np.ndarray:
        """Segment end positions, shape (n_segments + 1,)."""
        return np.concatenate([[0.0], np.cumsum([s.length for s in self.segments])])


@dataclass(frozen=True)
class SegmentResult(Verdict):
    """Results for one segment (SI).

    ``utilisation_twist`` is None unless the twist rule is ``"segments"``
    (by default the twist is checked between stations, see
    :attr:`ShaftResult.twist_spans`).
    """

    index: int
    segment: Segment
    x_start: float
    x_end: float
    torque_min: float
    torque_max: float
    max_shear_stress: float
    twist_angle: float
    max_twist_per_length: float
    torsional_stiffness: float
    utilisation_stress: float
    utilisation_twist: float | None

    @property
    def governing_torque(self) -> float:
        """The internal torque of largest magnitude in the segment (signed)."""
        return self.torque_max if abs(self.torque_max) >= abs(self.torque_min) else self.torque_min

    @property
    def kts(self) -> float | None:
        return self.segment.section.kts()


@dataclass(frozen=True)
class TwistStretch:
    """The shaft between two stations, for the twist check (SI).

    Attributes
    ----------
    start, end : str
        Names of the stations at its ends.
    x_start, x_end : float
        Their positions (m).
    twist_angle : float
        Rotation of the end station relative to the start station (rad),
        sum of T_i L_i / (G_i J_i) over the pieces between them.
    internal_torque : float or None
        The internal torque between them (N*m) when it is one value (two
        neighbouring stations), else None.
    allowed_twist : float
        ``twist_limit * max(length, twist_basis)`` (rad).
    """

    start: str
    end: str
    x_start: float
    x_end: float
    twist_angle: float
    internal_torque: float | None
    allowed_twist: float

    @property
    def length(self) -> float:
        return self.x_end - self.x_start

    @property
    def twist_per_length(self) -> float:
        """Mean twist per length over the stretch (rad/m)."""
        return self.twist_angle / self.length if self.length > 0 else 0.0

    @property
    def utilisation(self) -> float:
        return abs(self.twist_angle) / self.allowed_twist


@dataclass(frozen=True)
class ShaftResult(Verdict):
    """Internal torques, twists and checks of a stepped shaft (SI).

    Attributes
    ----------
    x : ndarray (n,)
        Node positions: segment ends and stations, ascending.
    twist : ndarray (n,)
        Twist angle at the nodes (rad), zero at the support (one support),
        at both supports (two or more), or at x = 0 (no support).
    piece_torque : ndarray (n - 1,)
        Internal torque between consecutive nodes (N*m).
    piece_segment : ndarray (n - 1,)
        Segment index of each piece.
    reactions : tuple of (Support, float)
        Torque each support applies to the shaft (N*m).
    statics : str
        ``"determinate"`` or ``"indeterminate"``.
    twist_spans : tuple of TwistStretch
        The shaft between each two neighbouring stations, left to right.
    twist_governing : TwistStretch or None
        Rule ``"spans"``: the stretch between any two stations with the
        largest twist utilisation (a run of short spans can govern together);
        None with rule ``"segments"`` or fewer than two stations.
    """

    model: ShaftModel
    x: np.ndarray
    twist: np.ndarray
    piece_torque: np.ndarray
    piece_segment: np.ndarray
    reactions: tuple
    segments: tuple[SegmentResult, ...]
    statics: str
    notes: tuple[str, ...] = field(default=())
    twist_spans: tuple[TwistStretch, ...] = ()
    twist_governing: TwistStretch | None = None

    @property
    def end_to_end_twist(self) -> float:
        return float(self.twist[-1] - self.twist[0])

    @property
    def torsional_stiffness(self) -> float:
        """End-to-end stiffness of the segments in series, 1 / sum(L_i / (G_i J_i))."""
        return 1.0 / sum(1.0 / s.torsional_stiffness for s in self.segments)

    @property
    def governing(self) -> SegmentResult:
        """The segment with the largest utilisation of its own checks."""
        return max(self.segments, key=lambda s: s.utilisation)

    @property
    def utilisation_stress(self) -> float:
        return max(s.utilisation_stress for s in self.segments)

    @property
    def utilisation_twist(self) -> float:
        """The largest twist utilisation, by the model's twist rule."""
        if self.model.twist_rule == "segments":
            return max(s.utilisation_twist or 0.0 for s in self.segments)
        return self.twist_governing.utilisation if self.twist_governing else 0.0



def _merge_positions(positions: Sequence[float], tol: float) -> np.ndarray:
    x = np.sort(np.asarray(positions, dtype=float))
    keep = np.concatenate([[True], np.diff(x) > tol])
    return x[keep]


def analyse_shaft(model: ShaftModel) -> ShaftResult:
    """Internal torque, twist and checks along a stepped shaft.

    * No support: the applied torques must balance (else :class:`InputError`);
      the internal torque follows from equilibrium of the part left of each
      cut, the twist is measured from x = 0.
    * One support: statically determinate; its reaction balances the applied
      torques, then as above, with the twist measured from the support.
    * Two or more supports: statically indeterminate; the rotations of the
      nodes are found from equilibrium of every node with the twist of each
      piece ``T L / (G J)`` (compatibility: the held stations do not turn),
      i.e. the stiffness method on the chain of pieces.

    Stress is checked in every segment; twist by ``model.twist_rule`` (see
    the module docstring).

    References
    ----------
    Gere, Mechanics of Materials: nonuniform torsion; statically
    indeterminate torsional members.
    """
    segs = model.segments
    if not segs:
        raise InputError("the shaft has no segments", fix="add at least one [[segment]]")
    _check_twist_rule(model.twist_rule)
    for value, what in ((model.twist_limit, "twist limit"),
                        (model.twist_basis, "twist basis length")):
        if not (value > 0 and math.isfinite(value)):
            raise InputError(f"the {what} must be positive, got {value:g}")
    bounds = model.boundaries
    total = bounds[-1]
    tol = 1e-9 * total
    stations = [(ld.position, ld.name) for ld in model.loads]
    stations += [(sp.position, sp.name) for sp in model.supports]
    for pos, name in stations:
        if pos < -tol or pos > total + tol:
            raise InputError(
                f"station {name!r} at x = {pos * 1e3:g} mm lies outside the shaft "
                f"(0 to {total * 1e3:g} mm)", fix="check its position or the segment lengths")
    x = _merge_positions(list(bounds) + [p for p, _ in stations], tol)
    n = len(x)
    mid = 0.5 * (x[:-1] + x[1:])
    piece_seg = np.clip(np.searchsorted(bounds, mid, side="right") - 1, 0, len(segs) - 1)
    lengths = np.diff(x)
    gj = np.array([segs[i].material.shear_modulus * segs[i].section.torsion_constant
                   for i in range(len(segs))])[piece_seg]
    k = gj / lengths

    def node_of(pos):
        return int(np.argmin(np.abs(x - pos)))

    applied = np.zeros(n)
    for ld in model.loads:
        applied[node_of(ld.position)] += ld.torque
    sup_nodes = [node_of(sp.position) for sp in model.supports]
    scale = max(float(np.sum(np.abs(applied))), 1e-300)
    notes = []

    if len(model.supports) <= 1:
        statics = "determinate"
        ext = applied.copy()
        reactions = []
        if model.supports:
            r = -float(np.sum(applied))
            ext[sup_nodes[0]] += r
            reactions.append((model.supports[0], r))
            ref = sup_nodes[0]
        else:
            imbalance = float(np.sum(applied))
            if abs(imbalance) > 1e-9 * scale:
                raise InputError(
                    f"the applied torques do not balance (they add up to {imbalance:.6g} N*m) "
                    "and no support is named to react the difference",
                    fix="correct the torques so that they add up to zero, or add a [[support]] "
                        "at the station held against turning")
            ref = 0
            notes.append("no support: the torques balance; twist measured from the left end")
        # equilibrium of the part left of each cut
        torque = -np.cumsum(ext)[:-1]
        torque[np.abs(torque) <= 1e-12 * scale] = 0.0
        twist = np.concatenate([[0.0], np.cumsum(torque / k)])
        twist -= twist[ref]
    else:
        statics = "indeterminate"
        uniq = sorted(set(sup_nodes))
        if len(uniq) < len(sup_nodes):
            raise InputError("two supports are at the same station",
                             fix="give each [[support]] its own position")
        main = np.zeros(n)
        main[:-1] += k
        main[1:] += k
        # stiffness matrix of the chain (small: one row per node); the held
        # rotations are zero, the free ones follow from node equilibrium
        kfull = np.diag(main) - np.diag(k, 1) - np.diag(k, -1)
        free = np.setdiff1d(np.arange(n), uniq)
        twist = np.zeros(n)
        if free.size:
            twist[free] = np.linalg.solve(kfull[np.ix_(free, free)], applied[free])
        torque = k * np.diff(twist)
        kphi = kfull @ twist
        reactions = [(sp, float(kphi[node_of(sp.position)] - applied[node_of(sp.position)]))
                     for sp in model.supports]

    results = []
    for i, seg in enumerate(segs):
        sel = piece_seg == i
        t_i = torque[sel]
        g = seg.material.shear_modulus
        j = seg.section.torsion_constant
        tmax_abs = float(np.max(np.abs(t_i)))
        tau = tmax_abs * seg.section.max_shear_per_torque
        rate = tmax_abs / (g * j)
        results.append(SegmentResult(
            index=i,
            segment=seg,
            x_start=float(bounds[i]),
            x_end=float(bounds[i + 1]),
            torque_min=float(np.min(t_i)),
            torque_max=float(np.max(t_i)),
            max_shear_stress=tau,
            twist_angle=float(np.sum(t_i * lengths[sel]) / (g * j)),
            max_twist_per_length=rate,
            torsional_stiffness=g * j / seg.length,
            utilisation_stress=tau / seg.allowable.value,
            utilisation_twist=rate / model.twist_limit if model.twist_rule == "segments"
            else None,
        ))
    spans, governing = _twist_stretches(model, x, twist, torque, node_of)
    return ShaftResult(
        model=model,
        x=x,
        twist=twist,
        piece_torque=torque,
        piece_segment=piece_seg,
        reactions=tuple(reactions),
        segments=tuple(results),
        statics=statics,
        notes=tuple(notes),
        twist_spans=spans,
        twist_governing=governing if model.twist_rule == "spans" else None,
    )


def _twist_stretches(model: ShaftModel, x, twist, torque, node_of):
    """Neighbouring-station spans and the governing stretch between any two stations.

    The rotation between two stations is the twist accumulated between them
    (sum of T_i L_i / (G_i J_i) over the pieces), held against
    ``limit * max(distance, basis)``.  Every pair is tried (at most a few
    dozen stations): several short spans twisting the same way can together
    exceed what one basis length may twist.
    """
    named: dict[int, list[str]] = {}
    for st in (*model.loads, *model.supports):
        named.setdefault(node_of(st.position), []).append(st.name)
    nodes = sorted(named)
    if len(nodes) < 2:
        return (), None
    names = [" + ".join(named[i]) for i in nodes]

    def stretch(a, b, with_torque):
        i, k = nodes[a], nodes[b]
        length = float(x[k] - x[i])
        tq = float(torque[i]) if with_torque else None  # constant between neighbours
        return TwistStretch(names[a], names[b], float(x[i]), float(x[k]),
                            float(twist[k] - twist[i]), tq,
                            model.twist_limit * max(length, model.twist_basis))

    spans = tuple(stretch(a, a + 1, True) for a in range(len(nodes) - 1))
    best = None
    for a in range(len(nodes) - 1):
        for b in range(a + 1, len(nodes)):
            st = spans[a] if b == a + 1 else stretch(a, b, False)
            if best is None or st.utilisation > best.utilisation * (1 + 1e-12):
                best = st
    return spans, best
