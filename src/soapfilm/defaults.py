"""Constants that the command line needs before any heavy import.

Kept free of numpy, scipy and the rest so that ``soapfilm --help`` and
``--version`` answer at once; the modules that use these values import them
from here (``soapfilm.adapt``, ``soapfilm.solve``, ``soapfilm.profile``).
"""

from __future__ import annotations

__all__ = ["CAUTION", "MEMBER_CAUTION", "LENGTH_UNITS", "DEFAULT_TOL", "DEFAULT_MAX_ELEMENTS",
           "DEFAULT_ORDER", "DEFAULT_MEMORY", "MEMORY_ENV", "VERSION"]

#: Length units a section may be given in, with their size in metres.
LENGTH_UNITS = {"mm": 1e-3, "cm": 1e-2, "m": 1.0, "in": 0.0254, "ft": 0.3048}

#: default relative accuracy of the adaptive loop (J bracket and peak shear)
DEFAULT_TOL = 1e-3
#: the adaptive loop stops refining at this many elements
DEFAULT_MAX_ELEMENTS = 1_000_000
#: memory budget of one section's analysis, bytes (4 GB: fits a laptop; soapfilm.resources)
DEFAULT_MEMORY = 4_000_000_000
#: environment variable that sets another default budget ("8 GB")
MEMORY_ENV = "SOAPFILM_MEMORY"
#: default element order (2: quadratic, isoparametric on curved edges)
DEFAULT_ORDER = 2

VERSION = "0.1.0"

#: The caution every report and check output carries.
CAUTION = (
    "Linear-elastic Saint-Venant torsion of a prismatic bar: no fatigue, no stress raisers "
    "outside this section (keyway ends, shoulders, holes across the bar). Verify against the "
    "governing design code and licensed engineering practice before use."
)

#: The caution of a member in non-uniform torsion (``member``): the same, plus what the
#: restrained-warping theory leaves out.
MEMBER_CAUTION = (
    "Linear-elastic torsion of a prismatic member: Saint-Venant torsion plus restrained warping "
    "by thin-walled bar theory (no distortion of the section, no interaction with bending or "
    "buckling, no local effects at the supports or load points), no fatigue, no stress raisers "
    "outside the section. Verify against the governing design code and licensed engineering "
    "practice before use."
)
