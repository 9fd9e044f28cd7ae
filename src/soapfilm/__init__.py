"""soapfilm: torsion properties of non-circular bar sections by finite elements.

The public API::

    from soapfilm import Profile, analyse, read_section
    r = analyse(read_section("shapes/hex-drive.txt"))
    r.torsion_constant, r.torsion_constant_bounds, r.max_shear_per_torque

The names below are imported on first use (PEP 562), so that ``import
soapfilm`` and the command line's ``--help`` do not pay for numpy, scipy,
shapely and the mesher until a section is actually read or solved.
"""

from __future__ import annotations

from ._lazy import lazy_names
from .defaults import LENGTH_UNITS, VERSION
from .errors import GeometryError, InputError, SoapfilmError, SolveError

__version__ = VERSION

#: public name -> module that defines it
_LAZY = {
    "Mesh": "mesh",
    "mesh_profile": "mesh",
    "Profile": "profile",
    "read_section": "readers",
    "CAUTION": "result",
    "TorsionResult": "result",
    "analyse": "solve",
    "result_from_mesh": "solve",
}

__all__ = [
    "CAUTION",
    "GeometryError",
    "InputError",
    "LENGTH_UNITS",
    "Mesh",
    "Profile",
    "SoapfilmError",
    "SolveError",
    "TorsionResult",
    "analyse",
    "mesh_profile",
    "read_section",
    "result_from_mesh",
]


__getattr__, __dir__ = lazy_names(__name__, _LAZY, __all__, globals())
