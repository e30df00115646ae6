"""Macroscopic fields from sampled moments, and batch-means standard errors.

Moments (per cell and species, see :mod:`dsmc.kernels.sample`) summed over
``n_samples`` samples of particles of weight ``W`` in cells of volume ``V``
give (standard kinetic-theory definitions, e.g. Bird 1994 ch. 1;
``c = v - u`` is the thermal velocity relative to the mass-average ``u``):

* number density ``n_s = N_s W / (V n_samples)``, ``rho = sum_s m_s n_s``
* velocity ``u = sum_s m_s S[v] / sum_s m_s N_s``
* pressure tensor ``P_ij = sum_s m_s n_s <c_i c_j>_s``
  ``= W/(V n_samples) sum_s m_s S[v_i v_j] - rho u_i u_j``
* translational temperatures ``T_i = P_ii / (n k)``, ``T = (T_x+T_y+T_z)/3``,
  scalar pressure ``p = tr(P)/3 = n k T``
* heat flux ``q_i = 1/2 sum_s m_s n_s <c^2 c_i>_s`` with
  ``sum c^2 c_i = S[v^2 v_i] - 2 u_j S[v_j v_i] - u_i S[v^2] + 2 u_i u_j S[v_j]
  + u^2 S[v_i] - u^2 u_i N``.

Standard errors come from batch means: the sampling phase is cut into ``B``
consecutive batches, every field is formed from each batch alone, and the
standard error is the standard deviation of the batch values over ``sqrt(B)``
(e.g. Fishman 1996, Monte Carlo: Concepts, Algorithms and Applications, ch. 6).
Batches much longer than the correlation time make the batch values nearly
independent; the reported error is then honest without modelling the
correlation.
"""

from __future__ import annotations

import numpy as np

K_B = 1.380649e-23  # J/K, exact (SI 2019)

# (name, unit, shape suffix) of every cell field
FIELD_UNITS = {
    "number_density": "1/m^3",
    "mass_density": "kg/m^3",
    "velocity": "m/s",
    "temperature": "K",
    "temperature_components": "K",
    "pressure": "Pa",
    "pressure_tensor": "Pa",
    "heat_flux": "W/m^2",
    "particles_per_cell": "1",
}

WALL_UNITS = {
    "number_flux": "1/(m^2 s)",
    "pressure": "Pa",
    "shear_stress": "Pa",
    "heat_flux": "W/m^2",
}

_PAIRS = ((0, 4), (1, 5), (2, 6))  # diagonal (component, moment index)
_OFF = {(0, 1): 7, (0, 2): 8, (1, 2): 9}


def _second(S, i, j):
    if i == j:
        return S[..., 4 + i]
    return S[..., _OFF[(min(i, j), max(i, j))]]


def cell_fields(S: np.ndarray, n_samples: float, weight: float, volume: np.ndarray,
                mass: np.ndarray) -> dict[str, np.ndarray]:
    """Fields from summed moments ``S`` of shape (..., n_cells, n_species, 13).

    Leading axes (e.g. batches) are kept.  Empty cells give NaN.
    """
    S = np.asarray(S, dtype=float)
    m = np.asarray(mass, dtype=float)
    scale = weight / (np.asarray(volume)[:, None] * n_samples)  # (cells, 1)
    N = S[..., 0]  # (..., cells, species)
    n_s = N * scale
    n = n_s.sum(-1)
    rho = (m * n_s).sum(-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        mN = (m * N).sum(-1)
        u = np.stack([(m * S[..., 1 + k]).sum(-1) / mN for k in range(3)], axis=-1)
        P = np.empty(u.shape[:-1] + (3, 3))
        for i in range(3):
            for j in range(3):
                P[..., i, j] = (m * _second(S, i, j)).sum(-1) * scale[:, 0] - rho * u[..., i] * u[..., j]
        Tc = np.stack([P[..., k, k] for k in range(3)], axis=-1) / (n[..., None] * K_B)
        u2 = (u * u).sum(-1)
        Sv2 = S[..., 4] + S[..., 5] + S[..., 6]
        q = np.empty_like(u)
        for i in range(3):
            ui = u[..., i][..., None]
            acc = S[..., 10 + i] - ui * Sv2 + u2[..., None] * S[..., 1 + i] - u2[..., None] * ui * N
            for j in range(3):
                uj = u[..., j][..., None]
                acc = acc - 2.0 * uj * _second(S, i, j) + 2.0 * ui * uj * S[..., 1 + j]
            q[..., i] = 0.5 * (m * acc).sum(-1) * scale[:, 0]
    return {
        "number_density": n,
        "mass_density": rho,
        "velocity": u,
        "temperature": Tc.mean(-1),
        "temperature_components": Tc,
        "pressure": (P[..., 0, 0] + P[..., 1, 1] + P[..., 2, 2]) / 3.0,
        "pressure_tensor": P,
        "heat_flux": q,
        "particles_per_cell": N.sum(-1) / n_samples,
    }


def wall_fields(acc: np.ndarray, duration: float, weight: float, area: float,
                normal: np.ndarray, wall_velocity: np.ndarray) -> dict[str, np.ndarray]:
    """Surface quantities from summed wall accumulators (..., 5) over ``duration`` s.

    ``acc`` holds hits, momentum given to the wall (3) and energy given to the
    wall (lab frame).  ``normal`` points into the gas.  The heat flux into the
    wall is the energy received in the wall's own frame,
    ``dE - u_w . dp`` (the rest is the work of the shear force).
    """
    acc = np.asarray(acc, dtype=float)
    f = weight / (area * duration)
    dp = acc[..., 1:4] * f  # force per area on the wall, by the gas
    nvec = np.array([normal[0], normal[1], 0.0])
    p = -(dp @ nvec)
    shear = dp + p[..., None] * nvec
    return {
        "number_flux": acc[..., 0] * f,
        "pressure": p,
        "shear_stress": shear,
        "heat_flux": acc[..., 4] * f - dp @ np.asarray(wall_velocity, dtype=float),
    }


FLUX_UNITS = {
    "number_flux": "1/(m^2 s)",
    "momentum_flux": "Pa",
    "energy_flux": "W/m^2",
}


def flux_fields(acc: np.ndarray, duration: float, weight: float, area: float) -> dict[str, np.ndarray]:
    """Number, momentum (3) and kinetic-energy fluxes per area and time of molecules crossing an
    open side, from summed accumulators (..., 5): count, momentum m v (3), energy m |v|^2 / 2
    (laboratory frame, signs of the velocities as they cross)."""
    acc = np.asarray(acc, dtype=float)
    f = weight / (area * duration)
    return {"number_flux": acc[..., 0] * f, "momentum_flux": acc[..., 1:4] * f,
            "energy_flux": acc[..., 4] * f}


def batch_error(values: np.ndarray) -> np.ndarray:
    """Standard error of the mean of batch values (first axis = batches)."""
    values = np.asarray(values, dtype=float)
    b = values.shape[0]
    if b < 2:
        return np.full(values.shape[1:], np.nan)
    return values.std(axis=0, ddof=1) / np.sqrt(b)
