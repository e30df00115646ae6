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
* internal energy (molecular gases): rotational temperature
  ``T_rot = 2 sum_s S[e_r]_s / (k sum_s zeta_r,s N_s)``; vibrational
  temperature of species s from its mean level, ``T_v,s = theta_s / ln(1 +
  1/<i>_s)`` (harmonic oscillator), the mixture value the dof-weighted mean
  ``sum_s N_s zeta_v,s T_v,s / sum_s N_s zeta_v,s`` with
  ``zeta_v = 2 (theta/T_v) / (exp(theta/T_v) - 1)``; overall temperature
  ``T_ov = (3 T + zeta_r T_rot + zeta_v T_vib) / (3 + zeta_r + zeta_v)`` with
  the mean dof per molecule ``zeta_r = sum_s zeta_r,s N_s / N`` (likewise
  zeta_v): the temperature of the equilibrium state of the same energy
  (Bird 1994 eq. 1.35 and sec. 5.5, from memory); the heat flux below is the
  translational part only;
* per species (mixtures): ``n_s``, mean velocity ``u_s = S[v]_s / N_s``,
  translational temperature about ``u_s``,
  ``T_s = m_s (S[v^2]_s / N_s - |u_s|^2) / (3 k)``, mass fraction
  ``rho_s / rho``; the mixture temperature ``T`` above uses the thermal
  velocities about the mass-average ``u``;
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
    "rotational_temperature": "K",
    "vibrational_temperature": "K",
    "overall_temperature": "K",
    "species_number_density": "1/m^3",
    "species_mass_fraction": "1",
    "species_velocity": "m/s",
    "species_temperature": "K",
    "species_rotational_temperature": "K",
    "species_vibrational_temperature": "K",
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
                mass: np.ndarray, rot_dof=None, theta_vib=None) -> dict[str, np.ndarray]:
    """Fields from summed moments ``S`` of shape (..., n_cells, n_species, 15).

    Leading axes (e.g. batches) are kept.  Empty cells and cells of zero volume give NaN.  With
    molecular species (``rot_dof`` per species, ``theta_vib`` per species in
    K, 0 = vibration off) the internal temperatures are added; with several
    species the per-species fields (shape (..., n_cells, n_species[, 3])).
    """
    S = np.asarray(S, dtype=float)
    m = np.asarray(mass, dtype=float)
    vol = np.asarray(volume, dtype=float)
    # (cells, 1); a cell a body covers (volume 0) has no gas: NaN fields
    scale = weight / (np.where(vol > 0.0, vol, np.nan)[:, None] * n_samples)
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
    out = {
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
    ns = m.size
    zr = np.zeros(ns) if rot_dof is None else np.asarray(rot_dof, dtype=float)
    th = np.zeros(ns) if theta_vib is None else np.asarray(theta_vib, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        if zr.any() or th.any():
            Ntot = N.sum(-1)
            zeta_r = (N * zr).sum(-1) / Ntot
            T_rot = 2.0 * S[..., 13].sum(-1) / (K_B * (N * zr).sum(-1))
            Tv_s = np.where(th > 0, th / np.log1p(N / S[..., 14]), np.nan)
            Tv_s = np.where((th > 0) & (S[..., 14] == 0) & (N > 0), 0.0, Tv_s)
            zv_s = np.where((th > 0) & (Tv_s > 0), 2.0 * (th / Tv_s) / np.expm1(th / Tv_s), 0.0)
            zv_sum = np.nansum(N * zv_s, -1)
            T_vib = np.nansum(N * zv_s * np.nan_to_num(Tv_s), -1) / zv_sum
            zeta_v = zv_sum / Ntot
            tot = 3.0 * out["temperature"]
            dof = 3.0 + 0.0 * tot
            if zr.any():
                out["rotational_temperature"] = T_rot
                tot = tot + zeta_r * T_rot
                dof = dof + zeta_r
            if th.any():
                out["vibrational_temperature"] = np.where(zv_sum > 0, T_vib, 0.0)
                tot = tot + np.where(zv_sum > 0, zeta_v * T_vib, 0.0)
                dof = dof + zeta_v
            out["overall_temperature"] = tot / dof
        if ns > 1:
            us = np.stack([S[..., 1 + k] / N for k in range(3)], axis=-1)
            out["species_number_density"] = n_s
            out["species_mass_fraction"] = m * n_s / rho[..., None]
            out["species_velocity"] = us
            out["species_temperature"] = m * ((S[..., 4] + S[..., 5] + S[..., 6]) / N
                                              - (us * us).sum(-1)) / (3.0 * K_B)
            if zr.any():
                out["species_rotational_temperature"] = np.where(
                    zr > 0, 2.0 * S[..., 13] / (K_B * zr * N), np.nan)
            if th.any():
                out["species_vibrational_temperature"] = Tv_s
    return out


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


PANEL_UNITS = {
    "number_flux": "1/(m^2 s)",
    "pressure": "Pa",
    "shear_stress": "Pa",
    "heat_flux": "W/m^2",
}


def panel_fields(acc: np.ndarray, duration: float, weight: float, length: np.ndarray,
                 normal: np.ndarray, depth: float = 1.0) -> dict[str, np.ndarray]:
    """Surface quantities of the panels of bodies at rest from summed accumulators (..., P, 5).

    ``acc`` is laid out as for walls (hits, momentum given to the panel (3),
    energy given to it); ``length`` (P,) and ``normal`` (P, 2, out of the
    body) are the panels' geometry (:class:`dsmc.geometry.Panels`).  Per
    panel: ``pressure`` = -(force per area) . n, ``shear_stress`` = (force per
    area) . t along the panel tangent ``t = (-n_y, n_x)``, ``heat_flux`` = the
    energy received per area and time (the body is at rest, so it is all
    heat), ``number_flux`` = hits per area and time.
    """
    acc = np.asarray(acc, dtype=float)
    f = weight / (np.asarray(length) * depth * duration)  # (P,)
    fx = acc[..., 1] * f
    fy = acc[..., 2] * f
    nx, ny = normal[:, 0], normal[:, 1]
    return {
        "number_flux": acc[..., 0] * f,
        "pressure": -(fx * nx + fy * ny),
        "shear_stress": -fx * ny + fy * nx,
        "heat_flux": acc[..., 4] * f,
    }


def body_loads(acc: np.ndarray, duration: float, weight: float, depth: float = 1.0
               ) -> dict[str, np.ndarray]:
    """Force (3,) in N per metre of depth and heat rate in W per metre on one body, from the
    summed accumulators (..., P, 5) of its panels."""
    acc = np.asarray(acc, dtype=float)
    f = weight / (depth * duration)
    return {"force": acc[..., 1:4].sum(-2) * f, "heat_transfer_rate": acc[..., 4].sum(-1) * f}


def surface_coefficients(panel: dict, loads: dict, rho: float, speed: float, p_inf: float,
                         direction, reference_length: float) -> dict[str, np.ndarray]:
    """Coefficients against the freestream (density ``rho``, speed ``speed``, pressure
    ``p_inf``, in-plane unit ``direction`` of its velocity), with the dynamic pressure
    ``q = rho U^2 / 2`` (aerodynamic conventions, e.g. Anderson, Fundamentals of
    Aerodynamics; Bird 1994 ch. 7 for their free-molecular values):

    * per panel ``pressure_coefficient = (p - p_inf) / q``,
      ``skin_friction_coefficient = tau / q``,
      ``heat_transfer_coefficient = q_heat / (rho U^3 / 2)``;
    * per body (per unit depth, reference length ``L``): ``drag`` = force along
      the freestream direction, ``lift`` = force along that direction turned
      +90 degrees (N/m), ``drag_coefficient = drag / (q L)``,
      ``lift_coefficient = lift / (q L)``.
    """
    q = 0.5 * rho * speed * speed
    ex, ey = float(direction[0]), float(direction[1])
    F = loads["force"]
    drag = F[..., 0] * ex + F[..., 1] * ey
    lift = -F[..., 0] * ey + F[..., 1] * ex
    return {
        "pressure_coefficient": (panel["pressure"] - p_inf) / q,
        "skin_friction_coefficient": panel["shear_stress"] / q,
        "heat_transfer_coefficient": panel["heat_flux"] / (q * speed),
        "drag": drag,
        "lift": lift,
        "drag_coefficient": drag / (q * reference_length),
        "lift_coefficient": lift / (q * reference_length),
    }
