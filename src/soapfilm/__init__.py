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

import importlib

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


def __getattr__(name: str):
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'soapfilm' has no attribute {name!r}")
    value = getattr(importlib.import_module(f".{module}", __name__), name)
    globals()[name] = value
    return value


def __dir__():
    return sorted(set(globals()) | set(__all__))
