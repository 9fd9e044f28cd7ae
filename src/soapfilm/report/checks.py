"""Shaft checks in words and units: one source for the terminal, the HTML report and tests.

A check is shown as a headline (PASS or FAIL with the governing criterion)
and a table whose rows say *what* is checked, its *value*, the *limit*, the
*utilisation* (value / limit) and the *basis* of the limit, followed by the
inputs with their sources.  :func:`section_check_view` builds it for one bar
(``soapfilm check``), :func:`shaft_check_view` for a stepped shaft
(``soapfilm shaft``); the command line prints the rows with rich, the report
writes them as HTML tables.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from ..materials import CRITERIA, Allowable
from ..members.shaft import TWIST_RULES, SectionCheck, ShaftResult, kts_basis_text
from ..units import UnitSystem

__all__ = ["CheckRow", "CheckView", "ShaftView", "section_check_view", "shaft_check_view",
           "allowable_text", "length_basis_text", "held_label"]

#: column heads of the check table
CHECK_COLUMNS = ("what", "value", "limit", "utilisation", "basis")
#: column heads of the inputs table
INPUT_COLUMNS = ("input", "value", "source")


@dataclass(frozen=True)
class CheckRow:
    """One line of a check table; ``limit`` and ``utilisation`` empty for a figure shown
    for information only."""

    what: str
    value: str
    limit: str = ""
    utilisation: str = ""
    basis: str = ""
    over: bool = False  # utilisation above 1

    def cells(self) -> tuple[str, str, str, str, str]:
        return (self.what, self.value, self.limit, self.utilisation, self.basis)


def _headline(passed: bool, utilisation: float, governs: str) -> str:
    """``PASS: utilisation 0.454 (1 or less passes), governed by ...``"""
    return (f"{'PASS' if passed else 'FAIL'}: utilisation {utilisation:.3f} (1 or less passes), "
            f"{governs}")


@dataclass(frozen=True)
class CheckView:
    """A check ready to show: headline, check rows, inputs with sources."""

    title: str
    passed: bool
    headline: str
    rows: tuple[CheckRow, ...]
    inputs: tuple[tuple[str, str, str], ...]
    notes: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()

    @property
    def verdict(self) -> str:
        return "PASS" if self.passed else "FAIL"


@dataclass(frozen=True)
class ShaftView(CheckView):
    """A stepped shaft's check: the :class:`CheckView` plus its tables.

    Each table is (title, column heads, rows of text cells, indices of rows
    over their limit).
    """

    tables: tuple[tuple[str, tuple[str, ...], tuple[tuple[str, ...], ...], tuple[int, ...]],
                  ...] = field(default=())


# ----------------------------------------------------------------- words for the bases
def allowable_text(a: Allowable, sys: UnitSystem) -> str:
    """How the allowable shear stress was obtained, with numbers."""
    if a.criterion is None:
        return a.basis
    factor, name, _ = CRITERIA[a.criterion]
    return (f"{factor:.3f} Sy / n = {factor:.3f} x {sys.fmt(a.yield_strength, 'stress')} / "
            f"{a.safety_factor:g} ({name.split(' (', 1)[0]})")


def length_basis_text(metres: float) -> str:
    """``1 m``, ``1 ft``, ``0.8 m``: the length a twist limit is written per."""
    feet = metres / 0.3048
    if abs(feet - round(feet)) < 1e-9 and abs(metres - round(metres)) > 1e-9:
        return f"{round(feet):g} ft"
    return f"{metres:.4g} m"


def held_label(name: str) -> str:
    """A support's name marked as held, once (a name may say so itself)."""
    return name if "held" in name.lower() else f"{name} (held)"


def _util(u: float | None) -> str:
    return "" if u is None else f"{u:.3f}"


def _twist_rule_text(rule: str, limit: float, basis: float, sys: UnitSystem) -> str:
    if rule == "segments":
        return "twist rule 'segments': " + TWIST_RULES["segments"]
    b = length_basis_text(basis)
    return (f"{sys.fmt(limit, 'twist_rate')} x max(distance, {b}): a stretch shorter than {b} "
            f"may twist what {b} may")


# ----------------------------------------------------------------- one bar
def section_check_view(res: SectionCheck, mat, sys: UnitSystem, *, twist_note: str,
                       sources: dict | None = None, section_file: str = "") -> CheckView:
    """The check of one bar (``soapfilm check``) in words and units.

    Parameters
    ----------
    res : SectionCheck
    mat : Material
    sys : UnitSystem
        Display units.
    twist_note : str
        Where the twist limit comes from.
    sources : dict, optional
        Where the inputs come from, by key: ``torque``, ``length``,
        ``material``, ``criterion``, ``safety_factor``, ``twist_rule``.
    section_file : str
        The section file as given.
    """
    src = {"torque": "--torque", "length": "--length", "material": "--material",
           "criterion": "default (distortion energy)", "safety_factor": "default: 1 (none)",
           "twist_rule": "default"}
    src.update(sources or {})
    f = sys.fmt
    a = res.allowable
    sec = res.section
    stress = CheckRow("Peak shear stress tau_max", f(res.max_shear_stress, "stress"),
                      f(a.value, "stress"), _util(res.utilisation_stress),
                      f"allowable {allowable_text(a, sys)}", res.utilisation_stress > 1)
    if res.twist_rule == "segments":
        twist = CheckRow("Twist per length of the bar", f(abs(res.twist_per_length), "twist_rate"),
                         f(res.twist_limit, "twist_rate"), _util(res.utilisation_twist),
                         "T / (G J) against the limit, however short the bar (twist rule "
                         "'segments')", res.utilisation_twist > 1)
        extra = CheckRow("Twist of the bar", f(abs(res.twist_angle), "angle"), "", "",
                         "T L / (G J)")
    else:
        b = length_basis_text(res.twist_basis)
        lim = sys.fmt(res.twist_limit, "twist_rate")
        span = (f"{lim} x {b}: a bar shorter than {b} may twist what {b} of shaft may"
                if res.length < res.twist_basis else f"{lim} x {f(res.length, 'length')}")
        twist = CheckRow(f"Twist of the bar over its {f(res.length, 'length')}",
                         f(abs(res.twist_angle), "angle"), f(res.allowed_twist, "angle"),
                         _util(res.utilisation_twist), f"T L / (G J) against {span}",
                         res.utilisation_twist > 1)
        extra = CheckRow("Twist per length", f(abs(res.twist_per_length), "twist_rate"), "", "",
                         "T / (G J)")
    rows = [stress, twist, extra,
            CheckRow("Torsional stiffness G J / L", f(res.torsional_stiffness, "stiffness"), "",
                     "", f"= {res.torsional_stiffness:.4g} N*m/rad" if sys.name == "SI" else "")]
    kts = res.kts
    if kts is not None:
        d = res.nominal_diameter
        bore = sec.nominal_bore if d == sec.nominal_diameter else None
        rows.append(CheckRow("Stress concentration Kts", f"{kts:.3f}", "", "",
                             kts_basis_text(d, bore, lambda v: f(v, "length"))))
    if res.governs == "stress":
        gov = (f"governed by the peak shear stress, {f(res.max_shear_stress, 'stress')} against "
               f"the allowable {f(a.value, 'stress')}")
    else:
        gov = f"governed by the twist, {twist.value} against {twist.limit}"
    headline = _headline(res.passed, res.utilisation, gov)
    inputs = [
        ("Section file", section_file or sec.name, ""),
        ("Torque T", f(res.torque, "torque"), src["torque"]),
        ("Length L", f(res.length, "length"), src["length"]),
        ("Material", mat.label, src["material"] if mat.key != "user" else "--shear-modulus"),
        ("Shear modulus G", f(res.shear_modulus, "modulus"), mat.shear_modulus_note),
    ]
    inputs += _allowable_inputs(a, sys, src)
    inputs += [
        ("Twist limit", f(res.twist_limit, "twist_rate"), twist_note),
        ("Twist limit written per", length_basis_text(res.twist_basis),
         "the limit's own unit: a bar shorter than this may twist what this length may"),
        ("Twist rule", res.twist_rule, src["twist_rule"]),
    ]
    if res.nominal_diameter is not None:
        inputs.append(("Nominal diameter for Kts", f(res.nominal_diameter, "length"),
                       sec.nominal_source if res.nominal_diameter == sec.nominal_diameter
                       and sec.nominal_source else src.get("nominal_diameter", "given")))
    else:
        inputs.append(("Nominal diameter for Kts", "none",
                       "no stress raiser on a round base is known (plain round bars and tubes "
                       "have no Kts); give --nominal-diameter for one"))
    return CheckView(title=f"Torsion check: {sec.name}", passed=res.passed, headline=headline,
                     rows=tuple(rows), inputs=tuple(inputs), warnings=tuple(sec.warnings))


def _allowable_inputs(a: Allowable, sys: UnitSystem, src: dict) -> list[tuple[str, str, str]]:
    if a.criterion is None:
        return [("Allowable shear stress", sys.fmt(a.value, "stress"), a.basis),
                ("Safety factor", "none (allowable given)", ""),
                ("Criterion", "none (allowable given)", "")]
    factor, name, source = CRITERIA[a.criterion]
    sy_note = a.basis.split("; Sy from ", 1)[1] if "; Sy from " in a.basis else ""
    return [
        ("Yield strength Sy", sys.fmt(a.yield_strength, "stress"), sy_note),
        ("Criterion", name, f"{src['criterion']}; {source}"),
        ("Safety factor n", f"{a.safety_factor:g}", src["safety_factor"]),
        ("Allowable shear stress", sys.fmt(a.value, "stress"),
         f"{factor:.3f} x Sy / n"),
    ]


# ----------------------------------------------------------------- a stepped shaft
def shaft_check_view(res: ShaftResult, sys: UnitSystem, *, sources: dict | None = None,
                     shaft_file: str = "") -> ShaftView:
    """The checks of a stepped shaft (``soapfilm shaft``) in words and units.

    Tables: segments and sections; stress in every segment; twist between
    stations (or per segment with the ``segments`` rule); stations.
    """
    src = {"criterion": "default (distortion energy) or the shaft file's [check]",
           "safety_factor": "the shaft file's [check], else 1 (none)", "twist_rule": "default"}
    src.update(sources or {})
    f = sys.fmt
    m = res.model
    lu = sys.unit("position")

    seg_rows, stress_rows, over_stress = [], [], []
    for s in res.segments:
        seg = s.segment
        sec = seg.section
        kts = s.kts
        j_lo, j_hi = sec.torsion_constant_bounds or (sec.torsion_constant,) * 2
        seg_rows.append((
            str(s.index + 1), seg.name,
            f"{sys.value(s.x_start, 'position'):.4g} to {sys.value(s.x_end, 'position'):.4g}",
            sec.name, "finite elements" if sec.method != "closed form" else "closed form (exact)",
            f(sec.torsion_constant, "J", 6),
            "exact" if sec.method == "closed form" else
            f"{(j_hi - j_lo) / (j_hi + j_lo):.1e}",
            "-" if kts is None else f"{kts:.2f}",
            f"{seg.material.label}, G {f(seg.material.shear_modulus, 'modulus', 3)}"))
        if s.utilisation_stress > 1:
            over_stress.append(s.index)
        stress_rows.append((
            str(s.index + 1), seg.name, f(s.governing_torque, "torque"),
            f(s.max_shear_stress, "stress"), f(seg.allowable.value, "stress"),
            _util(s.utilisation_stress), allowable_text(seg.allowable, sys)))
    tables = [
        ("Segments and sections",
         ("#", "segment", f"x [{lu}]", "section", "method", "torsion constant J",
          "J bracket half-width / J", "Kts", "material"), tuple(seg_rows), ()),
        ("Stress in every segment",
         ("#", "segment", "internal torque (largest)", "peak shear stress tau_max",
          "allowable", "utilisation", "basis of the allowable"), tuple(stress_rows),
         tuple(over_stress)),
    ]

    rows = []
    gs = max(res.segments, key=lambda s: s.utilisation_stress)
    rows.append(CheckRow(f"Peak shear stress, segment {gs.index + 1} ({gs.segment.name})",
                         f(gs.max_shear_stress, "stress"), f(gs.segment.allowable.value, "stress"),
                         _util(gs.utilisation_stress),
                         f"the largest utilisation of the {len(res.segments)} segments; "
                         f"{allowable_text(gs.segment.allowable, sys)}",
                         gs.utilisation_stress > 1))
    if m.twist_rule == "segments":
        tw_rows, over = [], []
        for s in res.segments:
            if (s.utilisation_twist or 0.0) > 1:
                over.append(s.index)
            tw_rows.append((str(s.index + 1), s.segment.name, f(s.twist_angle, "angle", 3),
                            f(s.max_twist_per_length, "twist_rate", 3),
                            f(m.twist_limit, "twist_rate", 3), _util(s.utilisation_twist),
                            f(s.torsional_stiffness, "stiffness", 3)))
        tables.append(("Twist per segment (twist rule 'segments')",
                       ("#", "segment", "twist angle", "twist per length (largest)",
                        "limit", "utilisation", "stiffness G J / L"), tuple(tw_rows),
                       tuple(over)))
        gt = max(res.segments, key=lambda s: s.utilisation_twist or 0.0)
        rows.append(CheckRow(f"Twist per length, segment {gt.index + 1} ({gt.segment.name})",
                             f(gt.max_twist_per_length, "twist_rate"),
                             f(m.twist_limit, "twist_rate"), _util(gt.utilisation_twist),
                             "T / (G J), largest of the segments, against the limit however "
                             "short (twist rule 'segments')", (gt.utilisation_twist or 0.0) > 1))
        twist_gov = (f"the twist per length of segment {gt.index + 1} ({gt.segment.name}), "
                     f"{f(gt.max_twist_per_length, 'twist_rate')} against "
                     f"{f(m.twist_limit, 'twist_rate')}")
    else:
        tw_rows, over = [], []
        for k, sp in enumerate(res.twist_spans):
            if sp.utilisation > 1:
                over.append(k)
            tw_rows.append((f"{sp.start} to {sp.end}",
                            f"{sys.value(sp.x_start, 'position'):.4g} to "
                            f"{sys.value(sp.x_end, 'position'):.4g}",
                            "-" if sp.internal_torque is None else f(sp.internal_torque, "torque"),
                            f(abs(sp.twist_angle), "angle", 3),
                            f(abs(sp.twist_per_length), "twist_rate", 3),
                            f(sp.allowed_twist, "angle", 3), _util(sp.utilisation)))
        tables.append(("Twist between neighbouring stations",
                       ("stations", f"x [{lu}]", "internal torque", "twist angle",
                        "twist per length (mean)", "allowed twist", "utilisation"),
                       tuple(tw_rows), tuple(over)))
        g = res.twist_governing
        if g is not None:
            rows.append(CheckRow(
                f"Twist from {g.start} to {g.end} ({f(g.length, 'length')})",
                f(abs(g.twist_angle), "angle"), f(g.allowed_twist, "angle"),
                _util(g.utilisation),
                "sum of T_i L_i / (G_i J_i) between them (of every two stations, the largest "
                f"utilisation) against {f(m.twist_limit, 'twist_rate')} x max(distance, "
                f"{length_basis_text(m.twist_basis)})", g.utilisation > 1))
            twist_gov = (f"the twist from {g.start} to {g.end}, {f(abs(g.twist_angle), 'angle')} "
                         f"against {f(g.allowed_twist, 'angle')} allowed")
        else:
            rows.append(CheckRow("Twist between stations", "-", "", "",
                                 "fewer than two stations: no torque is carried"))
            twist_gov = "the twist"
    rows.append(CheckRow("End-to-end twist", f(res.end_to_end_twist, "angle"), "", "",
                         "rotation of the right end relative to the left end"))
    rows.append(CheckRow("Shaft stiffness (segments in series)",
                         f(res.torsional_stiffness, "stiffness"), "", "",
                         "1 / sum(L_i / (G_i J_i))"
                         + (f" = {res.torsional_stiffness:.4g} N*m/rad" if sys.name == "SI"
                            else "")))

    st_rows = []
    entries = [(ld.position, ld.name, "load", ld.torque, "applied") for ld in m.loads]
    entries += [(sp.position, held_label(sp.name), "held", r, "reaction")
                for sp, r in res.reactions]
    for x, name, kind, tq, how in sorted(entries, key=lambda e: e[0]):
        i = int(abs(res.x - x).argmin())
        st_rows.append((name, kind, f(x, "position"), f"{f(tq, 'torque')} ({how})",
                        f(res.twist[i], "angle")))
    tables.append(("Stations", ("station", "kind", "x", "torque on the shaft", "twist angle"),
                   tuple(st_rows), ()))

    if res.governs == "stress":
        gov = (f"governed by the stress in segment {gs.index + 1} ({gs.segment.name}), "
               f"{f(gs.max_shear_stress, 'stress')} against {f(gs.segment.allowable.value, 'stress')}")
    else:
        gov = f"governed by {twist_gov}"
    headline = _headline(res.passed, res.utilisation, gov)

    inputs = [("Shaft file", shaft_file or m.name, ""),
              ("Segments", str(len(m.segments)), f"length {f(m.length, 'length')}"),
              ("Statics", res.statics, "held stations: " + (
                  ", ".join(sp.name for sp in m.supports) or "none (the torques balance)"))]
    seen = set()
    for s in res.segments:
        mat = s.segment.material
        if mat.label not in seen:
            seen.add(mat.label)
            inputs.append((f"Shear modulus G, {mat.label}", f(mat.shear_modulus, "modulus"),
                           mat.shear_modulus_note))
    bases = []
    for s in res.segments:
        a = s.segment.allowable
        if (a.basis, a.value) not in [(b.basis, b.value) for b in bases]:
            bases.append(a)
    for a in bases:
        inputs += _allowable_inputs(a, sys, src)
    inputs += [
        ("Twist limit", f(m.twist_limit, "twist_rate"), m.twist_limit_note),
        ("Twist limit written per", length_basis_text(m.twist_basis),
         "the limit's own unit: a stretch shorter than this may twist what this length may"),
        ("Twist rule", m.twist_rule, src["twist_rule"]),
    ]
    for s in res.segments:
        sec = s.segment.section
        if sec.nominal_diameter is not None:
            inputs.append((f"Nominal diameter for Kts, segment {s.index + 1}",
                           f(sec.nominal_diameter, "length")
                           + (f", bore {f(sec.nominal_bore, 'length')}" if sec.nominal_bore
                              else ""), sec.nominal_source or "given"))
    warnings = tuple(f"segment {s.index + 1} ({s.segment.name}): {w}"
                     for s in res.segments for w in s.segment.section.warnings)
    return ShaftView(title=f"Shaft check: {m.name}", passed=res.passed, headline=headline,
                     rows=tuple(rows), inputs=tuple(inputs), notes=tuple(res.notes),
                     warnings=warnings, tables=tuple(tables))


def finite_or_dash(v, spec: str = ".6g") -> str:
    """A number for a table, or ``-`` where it is missing or not finite."""
    if v is None or isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v):
        return "-"
    return format(v, spec)
