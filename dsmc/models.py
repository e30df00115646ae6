"""Registries of named models: one table per kind, one interface per table.

* Collision models (``hs``, ``vhs``, ``vss``): which diameter and exponents of
  the species table the pair constants use.
* Wall models (``specular``, ``diffuse``, ``maxwell``, ``cll``, ``periodic``):
  the kernel code, the case-file keys each needs, and how a wall row
  (:mod:`dsmc.kernels.surfaces` columns) is built from them.
* Open boundaries (``inflow``, ``outflow``, ``pressure``): sides through which
  molecules leave (kernel code ``OPEN``: removed by the move kernel) and,
  for the reservoir kinds, enter (:mod:`dsmc.kernels.inject`).

Adding a model touches its kernel branch and one entry here.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from dsmc.kernels import surfaces as ks


@dataclass(frozen=True)
class CollisionModel:
    name: str
    description: str
    hard_sphere: bool  # force omega = 1/2
    soft_sphere: bool  # use the VSS diameter and alpha (else alpha = 1)


COLLISION_MODELS = {
    "hs": CollisionModel("hs", "hard sphere (omega = 1/2, isotropic scattering)", True, False),
    "vhs": CollisionModel("vhs", "variable hard sphere (Bird 1981)", False, False),
    "vss": CollisionModel("vss", "variable soft sphere (Koura and Matsumoto 1991)", False, True),
}


@dataclass(frozen=True)
class WallModel:
    name: str
    code: int
    description: str
    keys: tuple[str, ...]  # model-specific case keys (beyond temperature, velocity)
    thermal: bool  # uses the wall temperature


WALL_MODELS = {
    "specular": WallModel("specular", ks.SPECULAR, "mirror reflection", (), False),
    "diffuse": WallModel("diffuse", ks.DIFFUSE, "full accommodation at the wall temperature", (), True),
    "maxwell": WallModel("maxwell", ks.MAXWELL, "diffuse with probability alpha, else specular",
                         ("accommodation",), True),
    "cll": WallModel("cll", ks.CLL, "Cercignani-Lampis-Lord kernel",
                     ("normal_accommodation", "tangential_accommodation"), True),
    "periodic": WallModel("periodic", ks.PERIODIC, "periodic pair with the opposite side", (), False),
}


def wall_row(model: str, temperature: float, velocity, accommodation: float = 1.0,
             normal_accommodation: float = 1.0, tangential_accommodation: float = 1.0) -> np.ndarray:
    """The kernel's row of floats for one wall."""
    row = np.zeros(ks.W_NCOL)
    row[ks.W_MODEL] = WALL_MODELS[model].code
    row[ks.W_T] = temperature
    row[ks.W_UX:ks.W_UZ + 1] = velocity
    row[ks.W_ALPHA] = accommodation
    row[ks.W_ALPHA_N] = normal_accommodation
    row[ks.W_ALPHA_T] = tangential_accommodation
    return row


@dataclass(frozen=True)
class OpenBoundary:
    name: str
    description: str
    injects: bool  # molecules enter from a reservoir Maxwellian
    state_keys: tuple[str, ...]  # case keys of the reservoir state
    drift_from_gas: bool  # reservoir drift taken from the adjacent cell (else given or zero)


OPEN_BOUNDARIES = {
    "inflow": OpenBoundary("inflow", "freestream reservoir (n, T, drift): injects its one-sided "
                           "Maxwellian flux; molecules reaching the side leave", True,
                           ("temperature", "pressure", "number_density", "velocity"), False),
    "outflow": OpenBoundary("outflow", "vacuum: molecules reaching the side leave, none enter",
                            False, (), False),
    "pressure": OpenBoundary("pressure", "reservoir at (p, T) drifting with the gas of the "
                             "adjacent cell (or at rest); molecules reaching the side leave", True,
                             ("temperature", "pressure", "number_density", "drift"), True),
}

BOUNDARY_KINDS = (*WALL_MODELS, *OPEN_BOUNDARIES)


def open_row(temperature: float, velocity) -> np.ndarray:
    """The kernel's wall row of an open side (code ``OPEN``; the state is informative)."""
    row = np.zeros(ks.W_NCOL)
    row[ks.W_MODEL] = ks.OPEN
    row[ks.W_T] = temperature
    row[ks.W_UX:ks.W_UZ + 1] = velocity
    return row
