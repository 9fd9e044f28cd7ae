"""Exact boundary geometry: curves, and which outline edge lies on which curve.

The section outline (:class:`soapfilm.profile.Profile`) is a polygon whose
curved edges are tagged with the exact curve they lie on; this package holds
the curves (:mod:`.curves`) and the tagging, snapping and resampling of
outline edges (:mod:`.edges`).  Geometry -> mesh (:mod:`soapfilm.mesh`, which
puts new boundary nodes on the curves) -> solve (:mod:`soapfilm.fem`).
"""

from .curves import Circle, Curve, Ellipse, Involute, Moved, unwrapped
from .edges import (
    curve_runs,
    find_arcs,
    junction_corners,
    resampled_loop,
    tag_edges,
)
from .moments import OutlineMoments, outline_moments
from .spline import SplineCurve

__all__ = ["Circle", "Curve", "Ellipse", "Involute", "Moved", "unwrapped", "curve_runs",
           "find_arcs", "junction_corners", "resampled_loop", "tag_edges",
           "OutlineMoments", "outline_moments", "SplineCurve"]
