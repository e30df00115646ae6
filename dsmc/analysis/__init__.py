"""Post-processing and reference solutions (pure numpy; no engine imports).

``dsmc.analysis.free_molecular`` is the module of free-molecular surface
fluxes, bodies and channels.  The exact free-molecular Couette-Fourier
solution between two plates is :func:`dsmc.analysis.limits.free_molecular`;
it is no longer re-exported here under that name, because importing the
module of the same name would silently replace it.
"""

from dsmc.analysis import free_molecular
from dsmc.analysis.free_molecular import (
    MAX_LENGTH_OVER_HEIGHT,
    ChannelSolution,
    Cylinder,
    CylinderSurface,
    FlatPlate,
    SurfaceCoefficients,
    SurfaceElement,
    channel_transmission,
    clausing_channel,
    coefficients,
    cylinder,
    cylinder_surface,
    flat_plate,
    free_molecular_channel_mass_flow,
    half_range_moments,
    no_slip_channel_mass_flow,
    scaled_bessel_i,
    slip_channel_mass_flow,
    slip_channel_pressure,
    surface_element,
)
from dsmc.analysis.limits import (
    DIFFUSE_COEFFICIENTS,
    K_B,
    MODELS,
    FreeMolecular,
    LinearLimits,
    NSFSolution,
    PowerLawTransport,
    equivalent_free_path,
    jump_coefficient,
    kn_from,
    linear_limits,
    maxwell_free_path,
    maxwell_slip_coefficient,
    navier_stokes_fourier,
    no_slip,
    slip,
    slip_coefficient,
    smoluchowski_jump_coefficient,
)

__all__ = [
    "DIFFUSE_COEFFICIENTS", "K_B", "MODELS", "FreeMolecular", "LinearLimits",
    "NSFSolution", "PowerLawTransport", "equivalent_free_path",
    "jump_coefficient", "kn_from", "linear_limits",
    "maxwell_free_path", "maxwell_slip_coefficient", "navier_stokes_fourier",
    "no_slip", "slip", "slip_coefficient", "smoluchowski_jump_coefficient",
    # dsmc.analysis.free_molecular
    "free_molecular", "MAX_LENGTH_OVER_HEIGHT", "ChannelSolution", "Cylinder",
    "CylinderSurface", "FlatPlate", "SurfaceCoefficients", "SurfaceElement",
    "channel_transmission", "clausing_channel", "coefficients", "cylinder",
    "cylinder_surface", "flat_plate", "free_molecular_channel_mass_flow",
    "half_range_moments", "no_slip_channel_mass_flow", "scaled_bessel_i",
    "slip_channel_mass_flow", "slip_channel_pressure", "surface_element",
]
