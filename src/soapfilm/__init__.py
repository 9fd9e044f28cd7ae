"""soapfilm: torsion properties of non-circular bar sections by finite elements.

The public API::

    from soapfilm import Profile, analyse, read_section
    r = analyse(read_section("shapes/hex-drive.txt"))
    r.torsion_constant, r.torsion_constant_bounds, r.max_shear_per_torque
"""

from .errors import GeometryError, InputError, SoapfilmError, SolveError
from .mesh import Mesh, mesh_profile
from .profile import LENGTH_UNITS, Profile
from .readers import read_section
from .result import CAUTION, TorsionResult
from .solve import analyse, result_from_mesh

__version__ = "0.1.0"

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
