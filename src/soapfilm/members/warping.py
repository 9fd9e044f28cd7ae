"""Non-uniform torsion of a member: E Gamma phi'''' - G J phi'' = m, piece by piece.

A member is a row of *pieces* (prismatic stretches with G J, E Gamma and a
uniform distributed torque m) between *stations* (the member's ends, the
joints between segments, torques, supports).  On each piece the general
solution is written in a local coordinate ``0 <= s <= L``::

    phi(s) = C1 + C2 s + (C3 exp(-lam s) + C4 exp(-lam (L - s))) / lam - m s^2 / (2 G J)

with ``lam^2 = G J / (E Gamma)``: both exponentials decay away from the
piece's own ends, so nothing overflows at large ``lam L`` and the terms
vanish smoothly as ``lam`` grows (Saint-Venant torsion).  A piece with
``E Gamma = 0`` keeps ``C1, C2`` only.  The stations give one linear system
in the constants (continuity of phi, of phi' and of the bimoment, the
torque balance, or the support conditions); it is solved once.  The
derivation and the joining conditions are in DEVELOPERS.md ("Members in
non-uniform torsion").

Sign conventions: phi is the twist about +x (right-hand rule), the internal
torque ``T = G J phi' - E Gamma phi'''`` acts on the face whose outward
normal is +x, a distributed torque m and a station torque are positive
about +x, and the bimoment is ``B = -E Gamma phi''``, so that the warping
normal stress is ``sigma_w = B omega_n / Gamma`` (omega_n the normalised
warping function, u = -omega_n phi').

References
----------
Timoshenko & Gere, Theory of Elastic Stability, 2nd ed. (1961), ch. 5
(non-uniform torsion of thin-walled open bars).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ..errors import InputError

__all__ = ["Piece", "Station", "MemberSolution", "solve_member", "SAMPLES_PER_PIECE"]

#: points sampled along each piece (plus the exact extremum points, see ``_extra_points``)
SAMPLES_PER_PIECE = 81


@dataclass(frozen=True)
class Piece:
    """A prismatic stretch of the member between two stations (SI).

    Attributes
    ----------
    length : float
        L in m.
    shear_stiffness : float
        G J in N m^2.
    warping_stiffness : float
        E Gamma in N m^4; 0 for a section that does not warp (Saint-Venant).
    distributed_torque : float
        m in N m/m, positive about +x.
    """

    length: float
    shear_stiffness: float
    warping_stiffness: float = 0.0
    distributed_torque: float = 0.0

    @property
    def lam(self) -> float:
        """lambda = sqrt(G J / (E Gamma)) in 1/m; inf for E Gamma = 0."""
        if self.warping_stiffness <= 0:
            return math.inf
        return math.sqrt(self.shear_stiffness / self.warping_stiffness)

    @property
    def warps(self) -> bool:
        return self.warping_stiffness > 0

    @property
    def unknowns(self) -> int:
        return 4 if self.warps else 2


@dataclass(frozen=True)
class Station:
    """Conditions at a station: a torque and the support conditions.

    ``torque`` acts about +x; ``twist_held`` fixes phi = 0 (the reaction is
    the unknown torque), ``warping_held`` fixes phi' = 0 on both sides
    (the bimoment is then a reaction).  Free conditions mean continuity of
    phi and of phi' and the bimoment (at an end: torque balance and B = 0).
    """

    torque: float = 0.0
    twist_held: bool = False
    warping_held: bool = False


def _basis(p: Piece, s: np.ndarray) -> dict[str, np.ndarray]:
    """Rows of phi, phi', B, T at local ``s`` as coefficients of (C1..C4) and the load part.

    Returns arrays of shape (len(s), unknowns) and (len(s),) per quantity.
    """
    s = np.asarray(s, dtype=float)
    gj, m, L = p.shear_stiffness, p.distributed_torque, p.length
    one, zero = np.ones_like(s), np.zeros_like(s)
    load_phi = -m * s**2 / (2 * gj)
    load_rate = -m * s / gj
    if not p.warps:
        return {
            "phi": (np.stack([one, s], axis=1), load_phi),
            "rate": (np.stack([zero, one], axis=1), load_rate),
            "bimoment": (np.stack([zero, zero], axis=1), zero),
            "warping_torque": (np.stack([zero, zero], axis=1), zero),
            "torque": (np.stack([zero, gj * one], axis=1), -m * s),
        }
    lam, eg = p.lam, p.warping_stiffness
    e0 = np.exp(-lam * s)           # decays from the piece's start
    e1 = np.exp(-lam * (L - s))     # decays from the piece's end
    curv_load = -m / gj             # phi'' of the load part
    return {
        "phi": (np.stack([one, s, e0 / lam, e1 / lam], axis=1), load_phi),
        "rate": (np.stack([zero, one, -e0, e1], axis=1), load_rate),
        # B = -E Gamma phi'' = -(E Gamma lam) (C3 e0 + C4 e1) + E Gamma m / (G J)
        "bimoment": (np.stack([zero, zero, -eg * lam * e0, -eg * lam * e1], axis=1),
                     -eg * curv_load * one),
        # T_w = -E Gamma phi''' = -G J (-C3 e0 + C4 e1)
        "warping_torque": (np.stack([zero, zero, gj * e0, -gj * e1], axis=1), zero),
        "torque": (np.stack([zero, gj * one, zero, zero], axis=1), -m * s),
    }


@dataclass(frozen=True)
class MemberSolution:
    """The solved member: constants per piece and values along it (SI).

    Attributes
    ----------
    pieces, stations : tuple
        As given; ``x_stations`` their positions (len(pieces) + 1).
    constants : tuple of numpy arrays
        C1..C4 (or C1, C2) per piece.
    x : ndarray
        Sample positions (m), every piece's ends included (a station appears
        twice, once per side, so jumps show).
    piece_index : ndarray
        The piece each sample belongs to.
    twist, rate, saint_venant_torque, warping_torque, bimoment : ndarray
        phi (rad), phi' (rad/m), G J phi' (N m), -E Gamma phi''' (N m) and
        B = -E Gamma phi'' (N m^2) at the samples.
    reactions : tuple of float
        Torque each station takes from the member (N m; 0 where twist is free),
        positive about +x acting on the support.
    end_values : tuple of dict
        Per station, (left side, right side) values of every quantity
        (None where the side has no piece).
    """

    pieces: tuple
    stations: tuple
    x_stations: np.ndarray
    constants: tuple
    x: np.ndarray
    piece_index: np.ndarray
    twist: np.ndarray
    rate: np.ndarray
    saint_venant_torque: np.ndarray
    warping_torque: np.ndarray
    bimoment: np.ndarray
    reactions: tuple
    end_values: tuple

    def values(self, k: int, s) -> dict[str, np.ndarray]:
        """Every quantity on piece ``k`` at local positions ``s``."""
        return _evaluate(self.pieces[k], self.constants[k], np.atleast_1d(s))


def _evaluate(p: Piece, c: np.ndarray, s: np.ndarray) -> dict[str, np.ndarray]:
    rows = _basis(p, s)
    out = {key: a @ c + b for key, (a, b) in rows.items()}
    out["saint_venant_torque"] = p.shear_stiffness * out["rate"]
    return out


def solve_member(pieces: Sequence[Piece], stations: Sequence[Station]) -> MemberSolution:
    """Solve the member; ``stations`` has one entry per piece end (len(pieces) + 1).

    Raises
    ------
    InputError
        No station holds the twist (the member would turn freely).
    """
    pieces, stations = tuple(pieces), tuple(stations)
    n = len(pieces)
    if n == 0 or len(stations) != n + 1:
        raise ValueError("need one station more than pieces")
    if not any(st.twist_held for st in stations):
        raise InputError("no support holds the twist: the member would turn freely",
                         fix='give at least one [[support]] with twist = "held"')
    offset = np.cumsum([0] + [p.unknowns for p in pieces])
    size = int(offset[-1])
    rows: list[np.ndarray] = []
    rhs: list[float] = []

    def side(k: int, at_end: bool, key: str):
        """(row over all unknowns, constant) of quantity ``key`` at piece k's end or start."""
        p = pieces[k]
        a, b = _basis(p, np.array([p.length if at_end else 0.0]))[key]
        row = np.zeros(size)
        row[offset[k]:offset[k + 1]] = a[0]
        return row, float(b[0])

    def equation(terms, value=0.0):
        """sum(sign * quantity) = value; terms: (sign, (row, const))."""
        row = np.zeros(size)
        const = 0.0
        for sign, (r, c) in terms:
            row += sign * r
            const += sign * c
        rows.append(row)
        rhs.append(value - const)

    for j, st in enumerate(stations):
        left = j - 1 if j > 0 else None
        right = j if j < n else None
        sides = [(k, k == left) for k in (left, right) if k is not None]
        # twist: held -> phi = 0 on each side; free -> continuity and torque balance
        if st.twist_held:
            for k, at_end in sides:
                equation([(1, side(k, at_end, "phi"))])
        else:
            if left is not None and right is not None:
                equation([(1, side(left, True, "phi")), (-1, side(right, False, "phi"))])
            # T_right(0) - T_left(L) + T_station = 0
            terms = []
            if right is not None:
                terms.append((1, side(right, False, "torque")))
            if left is not None:
                terms.append((-1, side(left, True, "torque")))
            equation(terms, -st.torque)
        # warping: only the sides whose section warps carry phi' and B conditions
        warping_sides = [(k, e) for k, e in sides if pieces[k].warps]
        if st.warping_held:
            for k, at_end in warping_sides:
                equation([(1, side(k, at_end, "rate"))])
        elif len(warping_sides) == 2:
            equation([(1, side(left, True, "rate")), (-1, side(right, False, "rate"))])
            equation([(1, side(left, True, "bimoment")), (-1, side(right, False, "bimoment"))])
        elif len(warping_sides) == 1:
            # a free end, or a joint to a section that carries no bimoment: B = 0
            k, at_end = warping_sides[0]
            equation([(1, side(k, at_end, "bimoment"))])
    a = np.array(rows)
    b = np.array(rhs)
    if a.shape != (size, size):  # the counting in DEVELOPERS.md: cannot happen
        raise AssertionError(f"{a.shape[0]} conditions for {size} constants")
    # equilibrate rows and columns: the entries mix rad, rad/m, N m and N m^2
    r = np.abs(a).max(axis=1)
    r[r == 0] = 1.0
    a, b = a / r[:, None], b / r
    col = np.abs(a).max(axis=0)
    col[col == 0] = 1.0
    a = a / col
    # each row touches at most two pieces: a sparse LU, linear in the number of pieces
    from scipy.sparse import csc_matrix
    from scipy.sparse.linalg import spsolve

    with np.errstate(all="ignore"):
        c = spsolve(csc_matrix(a), b)
    # with the twist held somewhere the system is regular (DEVELOPERS.md: the energy
    # argument); the residual says so for the numbers at hand
    if not (np.all(np.isfinite(c)) and np.abs(a @ c - b).max() <= 1e-8 * max(np.abs(b).max(), 1e-300)):
        raise InputError("the supports do not fix the member (singular conditions)",
                         fix="hold the twist at one station at least")
    c = c / col
    consts = tuple(c[offset[k]:offset[k + 1]] for k in range(n))
    x_st = np.concatenate([[0.0], np.cumsum([p.length for p in pieces])])

    xs, idx, vals = [], [], []
    for k, p in enumerate(pieces):
        s = _sample_points(p, consts[k])
        v = _evaluate(p, consts[k], s)
        xs.append(x_st[k] + s)
        idx.append(np.full(s.size, k))
        vals.append(v)
    cat = {key: np.concatenate([v[key] for v in vals]) for key in vals[0]}

    ends = []
    reactions = []
    for j, st in enumerate(stations):
        lv = _evaluate(pieces[j - 1], consts[j - 1], np.array([pieces[j - 1].length])) \
            if j > 0 else None
        rv = _evaluate(pieces[j], consts[j], np.array([0.0])) if j < n else None
        lv = None if lv is None else {k: float(v[0]) for k, v in lv.items()}
        rv = None if rv is None else {k: float(v[0]) for k, v in rv.items()}
        ends.append((lv, rv))
        if st.twist_held:
            # on the station: T_right - T_left + T_station + R_on_station = 0;
            # the support takes -R_on_station
            t_r = rv["torque"] if rv else 0.0
            t_l = lv["torque"] if lv else 0.0
            reactions.append(t_r - t_l + st.torque)
        else:
            reactions.append(0.0)
    return MemberSolution(
        pieces=pieces, stations=stations, x_stations=x_st, constants=consts,
        x=np.concatenate(xs), piece_index=np.concatenate(idx),
        twist=cat["phi"], rate=cat["rate"], saint_venant_torque=cat["saint_venant_torque"],
        warping_torque=cat["warping_torque"], bimoment=cat["bimoment"],
        reactions=tuple(reactions), end_values=tuple(ends))


def _sample_points(p: Piece, c: np.ndarray) -> np.ndarray:
    """Uniform points, points packed within a few 1/lam of each end, and the extrema."""
    L = p.length
    s = list(np.linspace(0.0, L, SAMPLES_PER_PIECE))
    if p.warps and p.lam * L > 4:
        near = np.geomspace(1e-3, 8.0, 24) / p.lam
        near = near[near < L]
        s += list(near) + list(L - near)
    s += _extra_points(p, c)
    return np.unique(np.clip(np.array(s), 0.0, L))


def _extra_points(p: Piece, c: np.ndarray) -> list[float]:
    """Where |B| and |phi'| have interior extrema (exactly).

    ``B' = 0``: ``C3 e^{-lam s} = C4 e^{-lam (L - s)}``, so
    ``s = (lam L + ln(C3 / C4)) / (2 lam)`` when C3 C4 > 0.  ``phi'' = 0``:
    with ``z = e^{-lam s}``, ``C3 z^2 - (m / (lam G J)) z + C4 e^{-lam L} = 0``.
    """
    if not p.warps:
        return []
    L, lam = p.length, p.lam
    c3, c4 = float(c[2]), float(c[3])
    out = []
    if c3 * c4 > 0:
        out.append((lam * L + math.log(c3 / c4)) / (2 * lam))
    q = p.distributed_torque / (lam * p.shear_stiffness)
    e = math.exp(-lam * L)
    if c3 != 0:
        disc = q * q - 4 * c3 * c4 * e
        if disc >= 0:
            for z in ((q + math.sqrt(disc)) / (2 * c3), (q - math.sqrt(disc)) / (2 * c3)):
                if e <= z <= 1 and z > 0:
                    out.append(-math.log(z) / lam)
    elif q != 0 and c4 != 0:
        z = c4 * e / q
        if e <= z <= 1 and z > 0:
            out.append(-math.log(z) / lam)
    return [v for v in out if 0 < v < L]
