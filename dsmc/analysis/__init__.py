"""Post-processing and reference solutions (pure numpy; no engine imports)."""

from dsmc.analysis.limits import (
    DIFFUSE_COEFFICIENTS,
    K_B,
    MODELS,
    FreeMolecular,
    LinearLimits,
    NSFSolution,
    PowerLawTransport,
    equivalent_free_path,
    free_molecular,
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
    "free_molecular", "jump_coefficient", "kn_from", "linear_limits",
    "maxwell_free_path", "maxwell_slip_coefficient", "navier_stokes_fourier",
    "no_slip", "slip", "slip_coefficient", "smoluchowski_jump_coefficient",
]
