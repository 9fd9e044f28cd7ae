"""Members in non-uniform torsion: the model, the solve, the stresses and the checks.

A :class:`MemberModel` is a row of segments (section, G, E, allowable,
distributed torque), torques at stations and supports with their two
conditions (twist held or free, warping held or free).  :func:`analyse_member`
splits the segments at every station, solves E Gamma phi'''' - G J phi'' = m
with :func:`soapfilm.members.warping.solve_member`, and reads the peaks:
Saint-Venant shear ``tau = (tau_max / T) G J phi'``, warping shear
``tau_w = |T_w| (max tau_s / T_w)`` (the section's largest warping shear per
unit warping torque), warping normal stress ``sigma_w = B max|omega_n| /
Gamma``, their combination against the allowable shear, and the twist
between neighbouring stations against the twist limit.

Which segments count warping: a section with Gamma = 0 (round bars and
tubes) does not warp; a section whose decay length ``1 / lambda`` is shorter
than its own size D (``lambda D > WARPING_SIZE_RATIO``) is taken as
Saint-Venant too: restraint of its warping dies out within one section size
of the support, where Saint-Venant's principle already confines every end
effect and beam theory does not describe it (DEVELOPERS.md, "Members in
non-uniform torsion").  The output says so in a note and reports no warping
stress for such a segment.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..materials import Allowable, Material
from .shaft import DEFAULT_TWIST_BASIS, Load, Section, Verdict
from .warping import MemberSolution, Piece, Station, solve_member

__all__ = ["MemberSegment", "MemberSupport", "MemberModel", "MemberResult", "SegmentPeaks",
           "TwistSpan", "analyse_member", "WARPING_SIZE_RATIO", "SAINT_VENANT_LAMBDA_L"]

#: lambda * D above which a section's warping restraint is an end effect (see module text)
WARPING_SIZE_RATIO = 1.0
#: lambda * L above which a segment twists as in Saint-Venant torsion away from its ends
#: (the exponentials fall to e^-10 = 4.5e-5 across it)
SAINT_VENANT_LAMBDA_L = 10.0

#: a section given without its warping shear (not a finite-element result): what the
#: output says instead of the warping shear stress
WARPING_SHEAR_NOTE = (
    "warping shear stress not computed for {names} (the section carries no warping shear per "
    "unit warping torque); the warping torque -E Gamma phi''' is reported instead")


@dataclass(frozen=True)
class MemberSegment:
    """A prismatic segment (SI): section, G and E, allowable shear, distributed torque."""

    name: str
    length: float
    section: Section
    material: Material
    elastic_modulus: float
    elastic_modulus_note: str
    allowable: Allowable
    distributed_torque: float = 0.0


@dataclass(frozen=True)
class MemberSupport:
    """A support or end condition at ``position``: twist and warping, each held or free."""

    name: str
    position: float
    twist_held: bool = True
    warping_held: bool = False


@dataclass(frozen=True)
class MemberModel:
    name: str
    segments: tuple[MemberSegment, ...]
    loads: tuple[Load, ...]
    supports: tuple[MemberSupport, ...]
    twist_limit: float
    twist_limit_note: str
    twist_basis: float = DEFAULT_TWIST_BASIS

    @property
    def length(self) -> float:
        return sum(s.length for s in self.segments)


@dataclass(frozen=True)
class SegmentPeaks:
    """Peaks of one segment along its length (SI); positions x along the member."""

    index: int
    segment: MemberSegment
    x_start: float
    x_end: float
    warping_counted: bool
    warping_note: str | None
    lam: float | None          # 1/m; None where warping is not counted
    max_twist: float           # |phi| largest, rad
    max_twist_rate: float      # |phi'| largest, rad/m
    max_saint_venant_torque: float   # signed, at its largest magnitude
    max_warping_torque: float        # signed
    max_bimoment: float              # signed
    max_shear_stress: float          # Saint-Venant, Pa
    x_max_shear_stress: float
    max_warping_stress: float | None  # Pa; None where warping is not counted
    x_max_warping_stress: float | None
    equivalent_shear_stress: float    # Pa, combined (see criterion_factor)
    x_equivalent: float
    combination: str
    #: Pa, |T_w| times the section's warping shear per unit warping torque; None where
    #: warping is not counted or the section has no warping shear
    max_warping_shear_stress: float | None = None
    x_max_warping_shear_stress: float | None = None

    @property
    def utilisation(self) -> float:
        return self.equivalent_shear_stress / self.segment.allowable.value

    @property
    def passed(self) -> bool:
        return self.utilisation <= 1.0

    @property
    def lambda_length(self) -> float | None:
        return None if self.lam is None else self.lam * self.segment.length


@dataclass(frozen=True)
class TwistSpan:
    """The member between two neighbouring loaded or supported stations (or ends)."""

    start: str
    end: str
    x_start: float
    x_end: float
    twist_range: float    # max(phi) - min(phi) over the span, rad
    allowed: float        # rad

    @property
    def length(self) -> float:
        return self.x_end - self.x_start

    @property
    def utilisation(self) -> float:
        return self.twist_range / self.allowed


@dataclass(frozen=True)
class StationResult:
    name: str
    x: float
    torque: float
    twist_held: bool
    warping_held: bool
    twist: float
    reaction_torque: float | None    # None where twist is free
    bimoment: float | None           # the bimoment there (largest side), None without warping


@dataclass(frozen=True)
class MemberResult(Verdict):
    model: MemberModel
    solution: MemberSolution
    segments: tuple[SegmentPeaks, ...]
    stations: tuple[StationResult, ...]
    spans: tuple[TwistSpan, ...]
    notes: tuple[str, ...]

    @property
    def governing(self) -> SegmentPeaks:
        return max(self.segments, key=lambda s: s.utilisation)

    @property
    def twist_governing(self) -> TwistSpan | None:
        return max(self.spans, key=lambda s: s.utilisation) if self.spans else None

    @property
    def utilisation_stress(self) -> float:
        return self.governing.utilisation

    @property
    def utilisation_twist(self) -> float:
        g = self.twist_governing
        return 0.0 if g is None else g.utilisation



def criterion_factor(allowable: Allowable, warping_shear: bool = False) -> tuple[float, str]:
    """k in tau_eq = sqrt(tau^2 + (sigma / k)^2): the criterion behind the allowable.

    ``warping_shear``: tau is the Saint-Venant plus the warping shear (the words
    say so).

    Distortion energy: sigma_eq = sqrt(sigma^2 + 3 tau^2) <= Sy/n and
    tau_allow = Sy/(sqrt 3 n), so tau_eq = sqrt(tau^2 + sigma^2/3); maximum
    shear: tau_max = sqrt(tau^2 + (sigma/2)^2) <= Sy/(2n).  An allowable given
    as such is read with distortion energy (Shigley, Mechanical Engineering
    Design, ch. 5).
    """
    tau = "(tau + tau_w)" if warping_shear else "tau"
    if allowable.criterion == "tresca":
        return 2.0, f"tau_eq = sqrt({tau}^2 + (sigma_w/2)^2) (maximum shear)"
    return math.sqrt(3.0), f"tau_eq = sqrt({tau}^2 + sigma_w^2/3) (distortion energy)"


def _warping_status(seg: MemberSegment) -> tuple[bool, str | None, float | None]:
    """(counted, note, lambda) of a segment's warping."""
    sec = seg.section
    gamma = sec.warping_constant
    if gamma is None:
        raise InputError(f"the section {sec.name!r} has no warping constant",
                         where=f"segment {seg.name!r}",
                         fix="this version's section results do not carry the warping "
                             "quantities; use a round section or update soapfilm")
    if gamma <= 0 or not sec.max_warping:
        return False, (f"segment {seg.name!r}: the section does not warp (Gamma = 0): "
                       "Saint-Venant torsion, no warping stress"), None
    lam = math.sqrt(seg.material.shear_modulus * sec.torsion_constant
                    / (seg.elastic_modulus * gamma))
    if sec.size is not None and lam * sec.size > WARPING_SIZE_RATIO:
        return False, (f"segment {seg.name!r}: warping restraint decays within "
                       f"1/lambda = {1e3 / lam:.3g} mm, less than the section's size "
                       f"{sec.size * 1e3:.3g} mm (a compact or closed section): taken as "
                       "Saint-Venant torsion, no warping stress"), None
    return True, None, lam


def analyse_member(model: MemberModel) -> MemberResult:
    """Solve the member and check it (see the module text)."""
    segs = model.segments
    total = model.length
    tol = 1e-9 * total
    seg_x = np.concatenate([[0.0], np.cumsum([s.length for s in segs])])
    status = [_warping_status(s) for s in segs]
    notes = [n for _, n, _ in status if n]

    # stations: segment ends, loads, supports (merged within tol)
    xs = sorted({*seg_x.tolist(), *(ld.position for ld in model.loads),
                 *(sp.position for sp in model.supports)})
    merged: list[float] = []
    for x in xs:
        if not merged or x - merged[-1] > tol:
            merged.append(x)
    merged[0], merged[-1] = 0.0, total
    st_x = np.array(merged)

    def station_of(x):
        return int(np.abs(st_x - x).argmin())

    torque = np.zeros(st_x.size)
    for ld in model.loads:
        torque[station_of(ld.position)] += ld.torque
    twist_held = np.zeros(st_x.size, bool)
    warping_held = np.zeros(st_x.size, bool)
    for sp in model.supports:
        j = station_of(sp.position)
        twist_held[j] |= sp.twist_held
        warping_held[j] |= sp.warping_held

    pieces, owner = [], []
    for j in range(st_x.size - 1):
        mid = 0.5 * (st_x[j] + st_x[j + 1])
        k = min(int(np.searchsorted(seg_x, mid) - 1), len(segs) - 1)
        s = segs[k]
        counted = status[k][0]
        gj = s.material.shear_modulus * s.section.torsion_constant
        eg = s.elastic_modulus * s.section.warping_constant if counted else 0.0
        pieces.append(Piece(st_x[j + 1] - st_x[j], gj, eg, s.distributed_torque))
        owner.append(k)

    # warping held where nothing warps: a bimoment the sections cannot carry
    for sp in model.supports:
        if not sp.warping_held:
            continue
        j = station_of(sp.position)
        near = {owner[i] for i in (j - 1, j) if 0 <= i < len(owner)}
        if all(segs[k].section.warping_constant == 0 for k in near):
            raise InputError(
                "warping is held here, but the section there does not warp (Gamma = 0, a round "
                "bar or tube): holding it would ask for a bimoment the section cannot carry",
                where=f"support {sp.name!r}", fix='write warping = "free"')
        if not any(status[k][0] for k in near):
            notes.append(f"support {sp.name!r}: warping held, but the section there is taken "
                         "as Saint-Venant (see above): no effect")

    sol = solve_member(pieces, [Station(float(torque[j]), bool(twist_held[j]),
                                        bool(warping_held[j])) for j in range(st_x.size)])

    seg_peaks = []
    for k, s in enumerate(segs):
        counted, note, lam = status[k]
        mask = np.isin(sol.piece_index, [i for i, o in enumerate(owner) if o == k])
        x = sol.x[mask]
        tsv, tw, b = sol.saint_venant_torque[mask], sol.warping_torque[mask], sol.bimoment[mask]
        sec = s.section
        tau = np.abs(tsv) * sec.max_shear_per_torque
        # warping shear: |T_w| times the section's peak per unit warping torque
        with_shear = counted and sec.max_warping_shear is not None
        kf, words = criterion_factor(s.allowable, with_shear)
        if counted:
            sig = np.abs(b) * sec.max_warping / sec.warping_constant
        else:
            sig = np.zeros_like(tau)
        tau_w = np.abs(tw) * sec.max_warping_shear if with_shear else np.zeros_like(tau)
        # both shears and sigma_w as if they met at one point of the section (safe side)
        eq = np.sqrt((tau + tau_w) ** 2 + (sig / kf) ** 2)

        def at_max(v, x=x):
            i = int(np.abs(v).argmax())
            return float(v[i]), float(x[i])

        seg_peaks.append(SegmentPeaks(
            index=k, segment=s, x_start=float(seg_x[k]), x_end=float(seg_x[k + 1]),
            warping_counted=counted, warping_note=note, lam=lam,
            max_twist=float(np.abs(sol.twist[mask]).max()),
            max_twist_rate=float(np.abs(sol.rate[mask]).max()),
            max_saint_venant_torque=at_max(tsv)[0], max_warping_torque=at_max(tw)[0],
            max_bimoment=at_max(b)[0],
            max_shear_stress=float(tau.max()), x_max_shear_stress=at_max(tau)[1],
            max_warping_stress=float(sig.max()) if counted else None,
            x_max_warping_stress=at_max(sig)[1] if counted else None,
            equivalent_shear_stress=float(eq.max()), x_equivalent=at_max(eq)[1],
            combination=words,
            max_warping_shear_stress=float(tau_w.max()) if with_shear else None,
            x_max_warping_shear_stress=at_max(tau_w)[1] if with_shear else None))
        if counted and lam * s.length > SAINT_VENANT_LAMBDA_L:
            notes.append(f"segment {s.name!r}: lambda L = {lam * s.length:.3g}: it twists as in "
                         "Saint-Venant torsion except within a few 1/lambda = "
                         f"{1e3 / lam:.3g} mm of held warping and of loads")

    # stations for the output: every load and support, by position
    names: dict[int, list[str]] = {}
    for ld in model.loads:
        names.setdefault(station_of(ld.position), []).append(ld.name)
    for sp in model.supports:
        names.setdefault(station_of(sp.position), []).append(sp.name)
    stations = []
    for j in sorted(names):
        lv, rv = sol.end_values[j]
        side = rv or lv
        bims = [v["bimoment"] for v in (lv, rv) if v is not None]
        warping_sides = [v for v, k in ((lv, j - 1), (rv, j)) if v is not None and pieces[k].warps]
        warps = bool(warping_sides)
        # warping free with one warping side (an end, a joint to a section that does not
        # warp): B = 0 is that side's condition, as a held twist's zero is (not the
        # round-off of the solve)
        b_zero = not warping_held[j] and len(warping_sides) == 1
        stations.append(StationResult(
            name=" + ".join(names[j]), x=float(st_x[j]), torque=float(torque[j]),
            twist_held=bool(twist_held[j]), warping_held=bool(warping_held[j]),
            twist=0.0 if twist_held[j] else side["phi"],  # held: zero by its condition
            reaction_torque=sol.reactions[j] if twist_held[j] else None,
            bimoment=None if not warps else 0.0 if b_zero else max(bims, key=abs)))

    # twist: between neighbouring stations that carry a load or a support, and the ends
    marks = sorted({0, st_x.size - 1, *names})
    label = {j: " + ".join(names[j]) if j in names else ("left end" if j == 0 else "right end")
             for j in marks}
    spans = []
    for a, b_ in zip(marks[:-1], marks[1:], strict=True):
        m = (sol.x >= st_x[a] - tol) & (sol.x <= st_x[b_] + tol)
        phi = sol.twist[m]
        length = float(st_x[b_] - st_x[a])
        spans.append(TwistSpan(label[a], label[b_], float(st_x[a]), float(st_x[b_]),
                               float(phi.max() - phi.min()),
                               model.twist_limit * max(length, model.twist_basis)))
    counted = [sp for sp in seg_peaks if sp.warping_counted]
    without = [sp.segment.name for sp in counted if sp.max_warping_shear_stress is None]
    if without:
        notes.append(WARPING_SHEAR_NOTE.format(names=", ".join(repr(n) for n in without)))
    if counted:
        what = ("Saint-Venant shear, warping shear and warping normal stress"
                if len(without) < len(counted) else "Saint-Venant shear and warping normal stress")
        notes.append(f"stress check: the peaks of {what} are combined at each place along the "
                     "member as if they acted at one point of the section "
                     f"({counted[0].combination}), which is on the safe side")
    return MemberResult(model=model, solution=sol, segments=tuple(seg_peaks),
                        stations=tuple(stations), spans=tuple(spans), notes=tuple(notes))
