"""Compare a finished result file with the analytic limits; extract slip and jump.

Pure numpy + h5py + matplotlib: the result file is read with
:mod:`dsmc.io.results` and the gas data come from :mod:`dsmc.gas`; nothing
here imports numba or the engine, so a report runs wherever the file is.

What :func:`compare` does
-------------------------
1. Reads the gap width ``L``, the wall states, the gas and its collision
   model, the cell profiles and the wall fluxes.  The mean number density
   ``n_avg`` is the volume average of ``fields/number_density``.
2. Builds the three limits of :mod:`dsmc.analysis.limits` for that gap:
   continuum Navier-Stokes-Fourier without slip, with first-order slip and
   jump (coefficients of the chosen kinetic model, hard spheres by default,
   Maxwell accommodation of each wall), and the exact free-molecular
   solution.  Transport is the Chapman-Enskog viscosity of the file's gas
   model with K = (15/4)(k/m) mu and mu, K ~ T^omega.
3. Tabulates, with the signs of :mod:`dsmc.analysis.limits` (``tau`` =
   P_xy; heat fluxes positive along +x):

   * ``tau`` from each wall (``-shear_stress[1]`` at xmin,
     ``+shear_stress[1]`` at xmax) and the bulk average of P_xy,
   * ``q_wall1`` (heat leaving the xmin wall, ``-heat_flux`` of xmin) and
     ``q_wall2`` (heat into the xmax wall), the bulk average of the gas heat
     flux q_x and of the energy flux E = q_x + u_y P_xy.

   Relative deviations are (DSMC - limit)/|limit|.
4. Extracts the slip velocity and temperature jump at each wall (see
   :func:`extract_slip_jump`).

Standard errors
---------------
Wall values carry the batch-means standard errors of the file.  A bulk
average over cells needs the covariance of the cells, which the per-cell
``_stderr`` datasets do not hold (cells are correlated: a batch's global
fluctuation moves them together).  If the file holds a ``batches`` group
(per-batch profiles, written by ``dsmc sweep``), bulk averages get their
exact batch-means error and the fits a jackknife error over the batches.
Otherwise the bulk error is the **upper bound** mean(stderr_i) (the
standard deviation of a sum is at most the sum of the standard deviations),
which can be pessimistic by up to sqrt(cells), and the fit errors come from
weighted least squares with the per-cell errors treated as independent,
inflated by sqrt(chi^2/dof) when that exceeds one; they are then
indicative only.

Knudsen numbers
---------------
``kn_ell`` = ell/L with the equivalent free path ell = mu sqrt(2kT/m)/p at
the mean wall temperature and p = n_avg k T (the length the slip and jump
coefficients multiply); ``kn_lambda`` = lambda/L with the equilibrium mean
free path of the collision model at the same state (what ``dsmc check``
reports).  For VHS argon ell = 1.46 lambda, for hard spheres 1.11 lambda.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from dsmc.analysis import limits
from dsmc.errors import UserError
from dsmc.gas import kinetic
from dsmc.gas.species import get_species
from dsmc.io.results import read_results, value

K_B = limits.K_B

#: default Knudsen-layer exclusion, in equivalent free paths from each wall
EXCLUDE_ELL = 2.0


# --------------------------------------------------------------------- reading

@dataclass
class ResultData:
    """What a comparison needs from a result file, SI units."""

    path: str
    title: str
    species: str
    model: str
    mass: float
    L: float
    x: np.ndarray
    volume: np.ndarray
    n: np.ndarray
    u: np.ndarray           #: u_y per cell
    u_se: np.ndarray
    T: np.ndarray
    T_se: np.ndarray
    p: np.ndarray           #: scalar pressure per cell
    pxy: np.ndarray
    pxy_se: np.ndarray
    qx: np.ndarray
    qx_se: np.ndarray
    walls: list             #: two dicts: model, alpha, T, u, tau, tau_se, q, q_se (limits' signs)
    warnings: str
    batches: dict | None    #: per-batch profiles (B, N) or None
    batch_duration: float = math.nan  #: s, sampled time of one batch


def _alpha(attrs: dict, side: str, path) -> tuple[float, str]:
    model = attrs.get("model", "diffuse")
    if model == "diffuse":
        return 1.0, ""
    if model == "maxwell":
        a = float(attrs.get("accommodation", 1.0))
        if a <= 0.0:
            raise UserError(f"{path}: wall {side} is specular (accommodation 0): the limits "
                            "need some diffuse re-emission")
        return a, ""
    if model == "cll":
        a = float(attrs.get("tangential_accommodation", 1.0))
        return a, (f"wall {side} is CLL: the limits treat it as a Maxwell wall with "
                   f"alpha = tangential accommodation {a:g}")
    raise UserError(f"{path}: wall {side} is '{model}': the analytic limits need two walls with "
                    "diffuse re-emission (diffuse, maxwell, cll)")


def load(path) -> ResultData:
    """Read a result file into :class:`ResultData` (raises UserError on a bad file)."""
    tree = read_results(path)
    if int(tree.get("@attrs", {}).get("dimension", 1)) != 1:
        raise UserError(f"{path}: a 2-D result file; the gap limits are for a 1-D slab")
    try:
        gas = tree["gas"]["@attrs"]
        species = str(gas["species"]).split(";")
        if len(species) != 1:
            raise UserError(f"{path}: {len(species)} species; the limits are for a simple gas")
        if "rotational_dof" in tree["gas"] and np.any(np.asarray(value(tree, "gas/rotational_dof"))):
            # the slip/jump limits and the cell heat flux are those of a monatomic gas
            raise UserError(f"{path}: molecular gas '{species[0]}'; the limits are for a "
                            "monatomic gas")
        edges = np.asarray(value(tree, "grid/x_edges"), dtype=float)
        P = np.asarray(value(tree, "fields/pressure_tensor"), dtype=float)
        P_se = np.asarray(value(tree, "fields/pressure_tensor_stderr"), dtype=float)
        q = np.asarray(value(tree, "fields/heat_flux"), dtype=float)
        q_se = np.asarray(value(tree, "fields/heat_flux_stderr"), dtype=float)
        vel = np.asarray(value(tree, "fields/velocity"), dtype=float)
        vel_se = np.asarray(value(tree, "fields/velocity_stderr"), dtype=float)
        walls = []
        notes = []
        for side, sign in (("xmin", -1.0), ("xmax", 1.0)):  # to the limits' signs
            g = tree["walls"][side]
            if g.get("@attrs", {}).get("open"):
                raise UserError(f"{path}: {side} is an open side ('{g['@attrs'].get('model')}'): "
                                "the gap limits need two walls")
            a, note = _alpha(g.get("@attrs", {}), side, path)
            if note:
                notes.append(note)
            walls.append({
                "side": side, "model": g.get("@attrs", {}).get("model", ""), "alpha": a,
                "T": float(value(g, "temperature")),
                "u": float(np.asarray(value(g, "velocity"))[1]),
                # the gas pushes xmax along y with P_xy and xmin with -P_xy
                "tau": float(sign * np.asarray(value(g, "shear_stress"))[1]),
                "tau_se": float(np.asarray(value(g, "shear_stress_stderr"))[1]),
                "q": float(sign * value(g, "heat_flux")),
                "q_se": float(value(g, "heat_flux_stderr")),
            })
        batches = None
        if "batches" in tree:
            batches = {k: np.asarray(v.value, dtype=float) for k, v in tree["batches"].items()
                       if k != "@attrs"}
        try:
            batch_duration = (float(value(tree, "run/time_step")) * float(value(tree, "run/sampled_steps"))
                              / float(value(tree, "run/batches")))
        except (KeyError, TypeError, ZeroDivisionError):
            batch_duration = math.nan
        warnings = str(tree.get("adequacy", {}).get("@attrs", {}).get("warnings", ""))
        if notes:
            warnings = "\n".join([w for w in (warnings,) if w] + notes)
        return ResultData(
            path=str(path), title=str(tree.get("@attrs", {}).get("title", "")),
            species=species[0], model=str(gas["collision_model"]),
            mass=float(np.atleast_1d(value(tree, "gas/mass"))[0]),
            L=float(edges[-1] - edges[0]),
            x=np.asarray(value(tree, "grid/x"), dtype=float) - edges[0],
            volume=np.asarray(value(tree, "grid/cell_volume"), dtype=float),
            n=np.asarray(value(tree, "fields/number_density"), dtype=float),
            u=vel[:, 1], u_se=vel_se[:, 1],
            T=np.asarray(value(tree, "fields/temperature"), dtype=float),
            T_se=np.asarray(value(tree, "fields/temperature_stderr"), dtype=float),
            p=np.asarray(value(tree, "fields/pressure"), dtype=float),
            pxy=P[:, 0, 1], pxy_se=P_se[:, 0, 1], qx=q[:, 0], qx_se=q_se[:, 0],
            walls=walls, warnings=warnings, batches=batches, batch_duration=batch_duration,
        )
    except (KeyError, IndexError, TypeError) as err:
        raise UserError(f"{path}: result file lacks {err} needed for the comparison") from None


def transport_for(species: str, model: str) -> limits.PowerLawTransport:
    """Chapman-Enskog power-law transport of the species table (same as the tests)."""
    sp = get_species(species)
    omega = sp.parameters(model)[1]
    return limits.PowerLawTransport(float(kinetic.viscosity(sp, sp.T_ref, model)),
                                    float(kinetic.conductivity(sp, sp.T_ref, model)),
                                    sp.T_ref, omega)


# ------------------------------------------------------------------ slip fits

def viscous_coordinate(x, T, L, transport):
    """s(x) = int_0^x mu_ref/mu(T) dx' at the cell centres and at x = L.

    Trapezoids between cell centres on the measured T; from the walls to the
    first and last centre the end cell's value is used.  With uniform T,
    s = x exactly.
    """
    w = transport.mu_ref / transport.mu(T)
    s = np.empty_like(x)
    s[0] = w[0] * x[0]
    s[1:] = s[0] + np.cumsum(0.5 * (w[1:] + w[:-1]) * np.diff(x))
    return s, float(s[-1] + w[-1] * (L - x[-1]))


def _wls(X, y, se):
    w = 1.0 / se**2
    A = X * w[:, None]
    cov = np.linalg.inv(X.T @ A)
    beta = cov @ (A.T @ y)
    r = (y - X @ beta) / se
    dof = max(len(y) - X.shape[1], 1)
    return beta, cov, float(r @ r) / dof


def _fit_profiles(s, u, T, u_se, T_se, mask, transport):
    """u = a0 + a1 s and T = b0 + b1 s - (mu_ref a1^2 / (2 K_ref)) s^2 on ``mask``."""
    X = np.column_stack([np.ones(mask.sum()), s[mask]])
    a, cov_a, chi_a = _wls(X, u[mask], u_se[mask])
    b2 = -transport.mu_ref * a[1] ** 2 / (2.0 * transport.K_ref)
    b, cov_b, chi_b = _wls(X, T[mask] - b2 * s[mask] ** 2, T_se[mask])
    return np.array([a[0], a[1], b[0], b[1]]), (cov_a, cov_b), (chi_a, chi_b)


def _derived(beta, S, walls, p, m, transport, tau):
    """Slip, jump and coefficients at both walls from the fit parameters."""
    a0, a1, b0, b1 = beta
    b2 = -transport.mu_ref * a1**2 / (2.0 * transport.K_ref)
    ug = (a0, a0 + a1 * S)
    Tg = (b0, b0 + b1 * S + b2 * S * S)
    out = {}
    for i, (sgn, sv) in enumerate(((1.0, 0.0), (-1.0, S))):
        w = transport.mu_ref / float(transport.mu(Tg[i]))
        dudn = sgn * a1 * w
        dTdn = sgn * (b1 + 2.0 * b2 * sv) * w
        ell = float(limits.equivalent_free_path(transport.mu(Tg[i]), p, Tg[i], m))
        slip = ug[i] - walls[i]["u"]
        jump = Tg[i] - walls[i]["T"]
        v0 = math.sqrt(2.0 * K_B * Tg[i] / m)
        mudn = -sgn * tau  # mu du/dn from the measured shear stress: -tau at xmin, +tau at xmax
        with np.errstate(divide="ignore", invalid="ignore"):
            out[i] = {
                "u_gas": ug[i], "T_gas": Tg[i], "slip": slip, "jump": jump,
                "dudn": dudn, "dTdn": dTdn, "ell": ell,
                "sigma": slip / (ell * dudn) if dudn != 0 else math.nan,
                "zeta": jump / (ell * dTdn) if dTdn != 0 else math.nan,
                "sigma_measured_mu": slip * p / (mudn * v0) if mudn != 0 else math.nan,
            }
    # mean of the two walls: a common offset of the whole profile (the centre-of-mass
    # velocity of the simulated gas fluctuates) raises one wall's slip and lowers the other's
    out[2] = {k: 0.5 * (out[0][k] + out[1][k]) for k in ("sigma", "zeta", "sigma_measured_mu")}
    return out


_DERIVED_KEYS = ("u_gas", "T_gas", "slip", "jump", "dudn", "dTdn", "sigma", "zeta",
                 "sigma_measured_mu")
_MEAN_KEYS = ("sigma", "zeta", "sigma_measured_mu")


@dataclass
class WallFit:
    """Slip and jump at one wall from the bulk fit, with standard errors."""

    side: str
    values: dict            #: key -> value (keys of _DERIVED_KEYS, plus ell)
    errors: dict            #: key -> standard error
    predicted_sigma: float  #: coefficient the slip model uses at this wall
    predicted_zeta: float


@dataclass
class SlipFit:
    """Result of :func:`extract_slip_jump`."""

    exclude_ell: float
    mask: np.ndarray
    s: np.ndarray
    S: float
    beta: np.ndarray
    chi2: tuple
    method: str             #: how the errors were obtained
    walls: list             #: two WallFit
    mean: dict              #: mean of the two walls' coefficients: key -> (value, error)
    u_line: np.ndarray      #: fitted u at the cell centres
    T_line: np.ndarray


def extract_slip_jump(d: ResultData, transport, p, tau, tau_se, exclude_ell=EXCLUDE_ELL,
                      ell=None, sigma_pred=(math.nan, math.nan), zeta_pred=(math.nan, math.nan)):
    """Fit the bulk profiles outside the Knudsen layers and extrapolate to the walls.

    Cells whose centre lies within ``exclude_ell`` equivalent free paths
    (``ell``, the mean-state value) of either wall are left out.  In the
    viscous coordinate s = int mu_ref/mu(T) dx the Navier-Stokes-Fourier
    profiles with mu, K ~ T^omega are exactly u = a0 + a1 s and
    T = b0 + b1 s + b2 s^2 with b2 = -mu_ref a1^2/(2 K_ref) fixed by the
    fitted a1 (viscous heating; derivation in
    :func:`dsmc.analysis.limits.navier_stokes_fourier`), so both fits are
    straight lines: u against s, T - b2 s^2 against s, weighted by
    1/stderr^2.  For uniform T and no shear this is the plain straight-line
    fit in x.  The wall gas values are the fits at s = 0 and s(L); gradients
    along the normal into the gas follow with ds/dx = mu_ref/mu(T_gas).

    Coefficients: ``sigma`` = slip/(ell du/dn), ``zeta`` = jump/(ell dT/dn)
    with ell = mu(T_gas) sqrt(2kT_gas/m)/p from the model viscosity; and
    ``sigma_measured_mu`` = slip p/(mu du/dn v0) with mu du/dn taken from the
    measured shear stress (independent of the viscosity model, which is what
    a published coefficient in terms of the true viscosity needs).

    Returns :class:`SlipFit`, or None if fewer than 4 cells remain.
    """
    x = d.x
    mask = (x > exclude_ell * ell) & (x < d.L - exclude_ell * ell)
    mask &= np.isfinite(d.u) & np.isfinite(d.T) & (d.u_se > 0) & (d.T_se > 0)
    if mask.sum() < 4:
        return None
    s, S = viscous_coordinate(x, d.T, d.L, transport)
    beta, covs, chi2 = _fit_profiles(s, d.u, d.T, d.u_se, d.T_se, mask, transport)
    central = _derived(beta, S, d.walls, p, d.mass, transport, tau)

    errors = {0: {}, 1: {}, 2: {}}
    B = d.batches
    if B is not None and {"velocity_y", "temperature"} <= set(B) and B["velocity_y"].shape[0] >= 3:
        # jackknife over batches: leave one batch out, refit (same weights)
        ub, Tb = B["velocity_y"], B["temperature"]
        nb = ub.shape[0]
        taub = B["shear_stress"].mean(axis=1) if "shear_stress" in B else np.full(nb, tau)
        reps = []
        for k in range(nb):
            keep = np.arange(nb) != k
            uj, Tj, tj = ub[keep].mean(0), Tb[keep].mean(0), taub[keep].mean()
            sj, Sj = viscous_coordinate(x, Tj, d.L, transport)
            bj, _, _ = _fit_profiles(sj, uj, Tj, d.u_se, d.T_se, mask, transport)
            reps.append(_derived(bj, Sj, d.walls, p, d.mass, transport, tj))
        for i in (0, 1, 2):
            for key in (_DERIVED_KEYS if i < 2 else _MEAN_KEYS):
                vals = np.array([r[i][key] for r in reps])
                errors[i][key] = float(np.sqrt((nb - 1) / nb * np.sum((vals - vals.mean()) ** 2)))
        method = f"jackknife over {nb} batches"
    else:
        # linear propagation of the WLS covariance (inflated by chi^2/dof > 1) and of tau_se
        cov = np.zeros((5, 5))
        cov[:2, :2] = covs[0] * max(1.0, chi2[0])
        cov[2:4, 2:4] = covs[1] * max(1.0, chi2[1])
        cov[4, 4] = tau_se**2
        theta = np.append(beta, tau)
        scale = np.append(np.sqrt(np.diag(cov[:4, :4])), max(tau_se, 1e-30 + 1e-12 * abs(tau)))
        keys = {0: _DERIVED_KEYS, 1: _DERIVED_KEYS, 2: _MEAN_KEYS}
        jac = {i: {k: np.zeros(5) for k in keys[i]} for i in (0, 1, 2)}
        for j in range(5):
            h = 1e-3 * scale[j] if scale[j] > 0 else 1e-9
            up, dn = theta.copy(), theta.copy()
            up[j] += h
            dn[j] -= h
            rp = _derived(up[:4], S, d.walls, p, d.mass, transport, up[4])
            rm = _derived(dn[:4], S, d.walls, p, d.mass, transport, dn[4])
            for i in (0, 1, 2):
                for k in keys[i]:
                    jac[i][k][j] = (rp[i][k] - rm[i][k]) / (2 * h)
        for i in (0, 1, 2):
            for k in keys[i]:
                g = jac[i][k]
                errors[i][k] = float(math.sqrt(max(g @ cov @ g, 0.0))) if np.all(np.isfinite(g)) else math.nan
        method = ("weighted least squares, per-cell errors taken as independent"
                  + (f", inflated by chi2/dof = {max(chi2):.2f}" if max(chi2) > 1 else ""))
    walls = [WallFit(d.walls[i]["side"], central[i], errors[i], sigma_pred[i], zeta_pred[i])
             for i in (0, 1)]
    b2 = -transport.mu_ref * beta[1] ** 2 / (2.0 * transport.K_ref)
    mean = {k: (central[2][k], errors[2][k]) for k in _MEAN_KEYS}
    return SlipFit(exclude_ell, mask, s, S, beta, chi2, method, walls, mean,
                   beta[0] + beta[1] * s, beta[2] + beta[3] * s + b2 * s * s)


# ------------------------------------------------------------------ comparison

@dataclass
class Row:
    """One quantity of the comparison table (SI units, limits' signs)."""

    name: str
    units: str
    dsmc: float
    stderr: float
    no_slip: float
    slip: float
    free_molecular: float
    scale: float = 0.0      #: size of this kind of quantity in the run (for "is it zero?")

    def deviation(self, ref: float) -> float:
        """(DSMC - ref)/|ref|; NaN where the reference vanishes (|ref| < 1e-6 scale)."""
        if not np.isfinite(ref) or abs(ref) <= 1e-6 * self.scale or ref == 0:
            return math.nan
        return (self.dsmc - ref) / abs(ref)


@dataclass
class Comparison:
    """Everything :func:`compare` found; :meth:`format` prints it."""

    data: ResultData
    transport: limits.PowerLawTransport
    slip_model: str
    n_avg: float
    T_mean: float
    p_mean: float           #: n_avg k T_mean, Pa
    p_bulk: float           #: mean DSMC scalar pressure, Pa
    ell: float              #: equivalent free path at (T_mean, p_mean), m
    kn_ell: float
    kn_lambda: float
    no_slip: limits.NSFSolution
    slip: limits.NSFSolution
    free_molecular: limits.FreeMolecular
    rows: list
    bulk_error_method: str
    fit: SlipFit | None
    notes: list = field(default_factory=list)

    def row(self, name: str) -> Row:
        for r in self.rows:
            if r.name == name:
                return r
        raise KeyError(name)

    def format(self) -> str:
        """The comparison as plain text (what ``dsmc compare`` prints)."""
        d = self.data
        out = [f"result {d.path}: {d.title}",
               f"gas {d.species} ({d.model}), gap L = {d.L:.4g} m, n_avg = {self.n_avg:.4g} 1/m^3, "
               f"T_mean = {self.T_mean:.5g} K, p = n_avg k T_mean = {self.p_mean:.5g} Pa "
               f"(DSMC bulk {self.p_bulk:.5g} Pa)",
               f"Knudsen number: ell/L = {self.kn_ell:.4g} (equivalent free path ell = "
               f"mu sqrt(2kT/m)/p = {self.ell:.4g} m), lambda/L = {self.kn_lambda:.4g} "
               f"({d.model} mean free path)",
               f"walls: xmin {d.walls[0]['model']} alpha {d.walls[0]['alpha']:g}, "
               f"T {d.walls[0]['T']:g} K, u {d.walls[0]['u']:g} m/s; xmax {d.walls[1]['model']} "
               f"alpha {d.walls[1]['alpha']:g}, T {d.walls[1]['T']:g} K, u {d.walls[1]['u']:g} m/s",
               f"slip/jump model: {self.slip_model} coefficients sigma = "
               f"({self.slip.sigma[0]:.4g}, {self.slip.sigma[1]:.4g}), zeta = "
               f"({self.slip.zeta[0]:.4g}, {self.slip.zeta[1]:.4g}) in units of ell",
               "",
               "signs: tau = P_xy (flux of y momentum along +x); heat fluxes positive along +x; "
               "deviation = (DSMC - limit)/|limit|",
               f"{'quantity':22s} {'units':6s} {'DSMC':>11s} {'+-stderr':>9s} {'no-slip':>11s} "
               f"{'slip/jump':>11s} {'free-mol.':>11s} {'dev NS':>8s} {'dev slip':>8s} {'dev FM':>8s}"]
        for r in self.rows:
            devs = " ".join(f"{100 * v:+7.2f}%" if np.isfinite(v) else f"{'-':>8s}"
                            for v in (r.deviation(r.no_slip), r.deviation(r.slip),
                                      r.deviation(r.free_molecular)))
            out.append(f"{r.name:22s} {r.units:6s} {r.dsmc:11.5g} {r.stderr:9.2g} {r.no_slip:11.5g} "
                       f"{r.slip:11.5g} {r.free_molecular:11.5g} {devs}")
        out.append(f"bulk standard errors: {self.bulk_error_method}")
        f = self.fit
        out.append("")
        if f is None:
            out.append(f"slip/jump extraction: skipped, fewer than 4 cells lie more than "
                       f"{EXCLUDE_ELL:g} ell from both walls (the gap is Knudsen layer throughout)")
        else:
            out.append(f"slip and jump from the bulk fit ({int(f.mask.sum())} of {f.mask.size} cells, "
                       f"excluding {f.exclude_ell:g} ell = {f.exclude_ell * self.ell:.3g} m at each wall; "
                       f"fit u ~ s, T + mu_ref a1^2 s^2/(2 K_ref) ~ s in s = int mu_ref/mu dx; "
                       f"chi2/dof = {f.chi2[0]:.2f} (u), {f.chi2[1]:.2f} (T))")
            out.append(f"errors: {f.method}")
            for i, w in enumerate(f.walls):
                v, e = w.values, w.errors
                pred_slip = (self.slip.slip1, self.slip.slip2)[i]
                pred_jump = (self.slip.jump1, self.slip.jump2)[i]
                out.append(f"  {w.side}: slip {v['slip']:.4g} +- {e['slip']:.2g} m/s "
                           f"(slip model {pred_slip:.4g}); jump {v['jump']:.4g} +- {e['jump']:.2g} K "
                           f"(jump model {pred_jump:.4g})")
                out.append(f"        sigma = {v['sigma']:.4g} +- {e['sigma']:.2g} (model mu), "
                           f"{v['sigma_measured_mu']:.4g} +- {e['sigma_measured_mu']:.2g} "
                           f"(measured mu); zeta = {v['zeta']:.4g} +- {e['zeta']:.2g}; "
                           f"slip model sigma {w.predicted_sigma:.4g}, zeta {w.predicted_zeta:.4g}")
            mn = f.mean
            out.append(f"  mean of both walls: sigma = {mn['sigma'][0]:.4g} +- {mn['sigma'][1]:.2g} "
                       f"(model mu), {mn['sigma_measured_mu'][0]:.4g} +- "
                       f"{mn['sigma_measured_mu'][1]:.2g} (measured mu); zeta = "
                       f"{mn['zeta'][0]:.4g} +- {mn['zeta'][1]:.2g} (insensitive to a common "
                       "offset of the profile)")
        if d.warnings:
            out.append("")
            out.extend(f"warning: {w}" for w in d.warnings.splitlines() if w)
        out.extend(f"note: {n}" for n in self.notes)
        return "\n".join(out)


def _bulk(d: ResultData, name: str, values: np.ndarray, se: np.ndarray, per_batch):
    """Mean over cells and its standard error (batch-means if available, else bound)."""
    ok = np.isfinite(values)
    mean = float(np.mean(values[ok]))
    if per_batch is not None:
        b = per_batch[:, ok].mean(axis=1)
        return mean, float(b.std(ddof=1) / math.sqrt(b.size)), True
    return mean, float(np.mean(se[ok])), False


def compare(result_path, slip_model: str = "hard_sphere", exclude_ell: float = EXCLUDE_ELL) -> Comparison:
    """Compare a result file with the no-slip, slip/jump and free-molecular limits."""
    d = load(result_path)
    if not np.all(np.isfinite(d.n)):
        raise UserError(f"{result_path}: some cells are empty (NaN density): no comparison")
    tr = transport_for(d.species, d.model)
    w1, w2 = d.walls
    n_avg = float(np.sum(d.n * d.volume) / np.sum(d.volume))
    m, L = d.mass, d.L
    args = (m, n_avg, L, w1["T"], w2["T"], w1["u"], w2["u"], tr)
    ns = limits.no_slip(*args, x=d.x)
    sl = limits.slip(*args, alpha1=w1["alpha"], alpha2=w2["alpha"], model=slip_model, x=d.x)
    fm = limits.free_molecular(m, n_avg, w1["T"], w2["T"], w1["u"], w2["u"], w1["alpha"], w2["alpha"])
    T_mean = 0.5 * (w1["T"] + w2["T"])
    p_mean = n_avg * K_B * T_mean
    ell = float(limits.equivalent_free_path(tr.mu(T_mean), p_mean, T_mean, m))
    sp = get_species(d.species)
    lam = float(kinetic.mean_free_path(sp, T_mean, n_avg, d.model))

    B = d.batches or {}
    pxy_b = B.get("shear_stress")
    qx_b = B.get("heat_flux_x")
    energy_b = None
    if pxy_b is not None and qx_b is not None and "velocity_y" in B:
        energy_b = qx_b + B["velocity_y"] * pxy_b
    tau, tau_se, exact = _bulk(d, "pxy", d.pxy, d.pxy_se, pxy_b)
    qx, qx_se, _ = _bulk(d, "qx", d.qx, d.qx_se, qx_b)
    energy_cells = d.qx + d.u * d.pxy
    # without batches: |dE| <= |dq| + |u| |dP| + |P| |du| per cell, then the bound over cells
    energy_se_cells = d.qx_se + np.abs(d.u) * d.pxy_se + np.abs(d.pxy) * d.u_se
    energy, energy_se, _ = _bulk(d, "E", energy_cells, energy_se_cells, energy_b)

    def avg(a):
        return float(np.mean(a))

    rows = []
    tau_scale = max(abs(ns.tau), abs(sl.tau), abs(fm.tau))
    q_scale = max(abs(v) for v in (ns.q_wall1, ns.q_wall2, sl.q_wall1, sl.q_wall2,
                                   fm.q_wall1, fm.q_wall2))
    has_shear = abs(fm.tau) > 0.0
    if has_shear:
        rows += [
            Row("tau wall xmin", "Pa", w1["tau"], w1["tau_se"], ns.tau, sl.tau, fm.tau, tau_scale),
            Row("tau wall xmax", "Pa", w2["tau"], w2["tau_se"], ns.tau, sl.tau, fm.tau, tau_scale),
            Row("tau bulk mean", "Pa", tau, tau_se, ns.tau, sl.tau, fm.tau, tau_scale),
        ]
    rows += [
        Row("q wall xmin (out)", "W/m^2", w1["q"], w1["q_se"], ns.q_wall1, sl.q_wall1, fm.q_wall1, q_scale),
        Row("q wall xmax (in)", "W/m^2", w2["q"], w2["q_se"], ns.q_wall2, sl.q_wall2, fm.q_wall2, q_scale),
        Row("q_x bulk mean", "W/m^2", qx, qx_se, avg(ns.q), avg(sl.q), fm.q_x, q_scale),
        Row("energy flux E bulk", "W/m^2", energy, energy_se, ns.energy_flux, sl.energy_flux,
            fm.energy_flux, q_scale),
    ]
    method = ("batch-means error of the cell average, from the per-batch profiles in the file"
              if exact else
              "upper bound mean(stderr_i) over cells (cells are correlated; the file holds no "
              "per-batch profiles)")
    notes = []
    if abs(w1["T"] - w2["T"]) == 0 and abs(w1["u"] - w2["u"]) == 0:
        notes.append("walls identical: the gap is in equilibrium, every flux limit is zero")
    # slow modes: the profile's lowest diffusion mode decays in t_d = L^2 rho/(pi^2 mu); batches
    # shorter than that are correlated and the errors of profile fits come out too small
    rho = n_avg * m
    t_d = L * L * rho / (math.pi**2 * float(tr.mu(T_mean)))
    if np.isfinite(d.batch_duration) and d.batch_duration < 2.0 * t_d:
        notes.append(f"batches last {d.batch_duration:.3g} s, less than twice the viscous diffusion "
                     f"time L^2 rho/(pi^2 mu) = {t_d:.3g} s: slow fluctuations of the whole profile "
                     "are not averaged out, so the slip/jump errors are underestimated (bulk "
                     "averages of P_xy and q_x are not affected to first order); sample longer")
    fit = None
    if exclude_ell is not None:
        fit = extract_slip_jump(d, tr, float(np.mean(d.p)), tau, tau_se, exclude_ell, ell,
                                sl.sigma, sl.zeta)
    return Comparison(d, tr, slip_model, n_avg, T_mean, p_mean, float(np.mean(d.p)), ell,
                      ell / L, lam / L, ns, sl, fm, rows, method, fit, notes)


# ------------------------------------------------------------------------ plots

def _length_scale(L: float) -> tuple[float, str]:
    for factor, prefix in ((1.0, "m"), (1e3, "mm"), (1e6, "\u00b5m"), (1e9, "nm")):
        if L * factor >= 1.0:
            return factor, prefix
    return 1e9, "nm"


def write_plots(c: Comparison, directory, stem: str | None = None) -> list[Path]:
    """Velocity and temperature profiles against the limits, PNG and PDF.

    Returns the written paths: ``STEM-velocity.png/.pdf`` and
    ``STEM-temperature.png/.pdf`` in ``directory`` (created if missing);
    STEM defaults to the result file's name without extension.
    """
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    directory = Path(directory)
    directory.mkdir(parents=True, exist_ok=True)
    d = c.data
    stem = stem or Path(d.path).stem
    f, unit = _length_scale(d.L)
    xs = d.x * f
    xw = np.array([0.0, d.L]) * f
    dense = np.linspace(0.0, d.L, 201)
    w1, w2 = d.walls
    args = (d.mass, c.n_avg, d.L, w1["T"], w2["T"], w1["u"], w2["u"], c.transport)
    ns = limits.no_slip(*args, x=dense)
    sl = limits.slip(*args, alpha1=w1["alpha"], alpha2=w2["alpha"], model=c.slip_model, x=dense)
    paths = []
    panels = (("velocity", "velocity $u_y$ (m/s)", d.u, d.u_se, ns.u, sl.u,
               (w1["u"], w2["u"]), c.free_molecular.u, None if c.fit is None else c.fit.u_line),
              ("temperature", "temperature $T$ (K)", d.T, d.T_se, ns.T, sl.T,
               (w1["T"], w2["T"]), c.free_molecular.T, None if c.fit is None else c.fit.T_line))
    for name, ylabel, y, yse, y_ns, y_sl, yw, y_fm, line in panels:
        fig, ax = plt.subplots(figsize=(7.0, 4.8), dpi=120)
        ax.errorbar(xs, y, yerr=yse, fmt="o", ms=3, color="k", ecolor="0.4", capsize=2,
                    label="DSMC (±1 standard error)", zorder=3)
        ax.plot(dense * f, y_ns, "-", color="tab:blue", label="Navier-Stokes-Fourier, no slip")
        ax.plot(dense * f, y_sl, "--", color="tab:red", label="NSF with slip and jump")
        ax.axhline(y_fm, color="tab:green", ls=":", label="free-molecular (uniform)")
        ax.plot(xw, yw, "s", mfc="none", mec="tab:purple", ms=8, label="wall values")
        if line is not None:
            m = c.fit.mask
            ax.plot(xs[m], line[m], "-", color="tab:orange", lw=1, label="bulk fit")
            edge = c.fit.exclude_ell * c.ell * f
            for lo, hi in ((0.0, edge), (d.L * f - edge, d.L * f)):
                ax.axvspan(lo, hi, color="0.9", zorder=0)
        ax.set_xlabel(f"distance from the xmin wall $x$ ({unit})")
        ax.set_ylabel(ylabel)
        title = d.title or stem
        ax.set_title(f"{title}\n{name}: Kn = ell/L = {c.kn_ell:.3g}"
                     + ("" if c.fit is None else f", shaded: {c.fit.exclude_ell:g} ell Knudsen layers"),
                     fontsize=10)
        ax.grid(alpha=0.3)
        ax.legend(fontsize=8, loc="best")
        fig.tight_layout()
        for ext in ("png", "pdf"):
            p = directory / f"{stem}-{name}.{ext}"
            fig.savefig(p)
            paths.append(p)
        plt.close(fig)
    return paths
