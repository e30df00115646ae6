"""The comparison report: slip/jump extraction, table, plots, CLI, no numba needed.

Most checks use synthetic result files written with
:func:`dsmc.io.results.write_results`, whose profiles are exact
Navier-Stokes-Fourier solutions with an imposed slip or jump, so the
extraction must return the imposed values to rounding (or, where the viscous
coordinate is integrated by trapezoids over the cells, to O(dx^2)).
"""

from __future__ import annotations

import math
import subprocess
import sys
import textwrap

import numpy as np
import pytest

from dsmc.analysis import limits
from dsmc.analysis.report import compare, transport_for, write_plots
from dsmc.cli import main
from dsmc.gas.species import get_species
from dsmc.io.results import Data, write_results

from conftest import CASES, ROOT

K_B = limits.K_B
AR = get_species("Ar")
PNG = b"\x89PNG\r\n\x1a\n"


def synthetic_tree(x, L, u, T, p, u_se=0.5, T_se=0.2, walls=((273.15, 0.0), (273.15, 0.0)),
                   pxy=0.0, qx=0.0, model="vhs", batches=None):
    """A result tree with the given profiles (uniform pressure p), like result_tree's."""
    N = x.size
    n = p / (K_B * T)
    vel = np.zeros((N, 3))
    vel[:, 1] = u
    P = np.zeros((N, 3, 3))
    for k in range(3):
        P[:, k, k] = p
    P[:, 0, 1] = P[:, 1, 0] = pxy
    q = np.zeros((N, 3))
    q[:, 0] = qx
    full = lambda a, v: np.full(np.shape(a), v, dtype=float)  # noqa: E731
    fields = {
        "number_density": Data(n, "1/m^3"), "number_density_stderr": Data(full(n, 0), "1/m^3"),
        "velocity": Data(vel, "m/s"), "velocity_stderr": Data(full(vel, u_se), "m/s"),
        "temperature": Data(T, "K"), "temperature_stderr": Data(full(T, T_se), "K"),
        "pressure": Data(full(T, p), "Pa"), "pressure_stderr": Data(full(T, 1.0), "Pa"),
        "pressure_tensor": Data(P, "Pa"), "pressure_tensor_stderr": Data(full(P, 1.0), "Pa"),
        "heat_flux": Data(q, "W/m^2"), "heat_flux_stderr": Data(full(q, 10.0), "W/m^2"),
    }
    edges = np.linspace(0.0, L, N + 1)
    tree = {
        "@attrs": {"title": "synthetic", "dimension": 1},
        "gas": {"@attrs": {"species": "Ar", "collision_model": model},
                "mass": Data(np.array([AR.mass]), "kg")},
        "adequacy": {"@attrs": {"warnings": ""}},
        "grid": {"x": Data(x, "m"), "x_edges": Data(edges, "m"),
                 "cell_volume": Data(np.diff(edges), "m^3")},
        "fields": fields,
        "walls": {},
    }
    q_end = np.broadcast_to(np.asarray(qx, dtype=float), (N,))[[0, -1]]
    for side, (Tw, uw), sign, qw in zip(("xmin", "xmax"), walls, (-1.0, 1.0), q_end):
        tree["walls"][side] = {
            "@attrs": {"model": "diffuse", "accommodation": 1.0},
            "temperature": Data(Tw, "K"), "velocity": Data(np.array([0.0, uw, 0.0]), "m/s"),
            "shear_stress": Data(np.array([0.0, sign * float(np.mean(pxy)), 0.0]), "Pa"),
            "shear_stress_stderr": Data(np.array([0.0, 1.0, 0.0]), "Pa"),
            "heat_flux": Data(sign * qw, "W/m^2"), "heat_flux_stderr": Data(10.0, "W/m^2"),
            "pressure": Data(p, "Pa"), "pressure_stderr": Data(1.0, "Pa"),
        }
    if batches is not None:
        tree["batches"] = {k: Data(v, "1") for k, v in batches.items()}
    return tree


def couette_file(path, sigma=1.1, cells=100, T=273.15, p=2.0e4, L=5e-6, du=200.0,
                 noise=None, seed=0):
    """Isothermal Couette: exact straight line with slip sigma ell du/dn at both walls."""
    tr = transport_for("Ar", "vhs")
    mu = float(tr.mu(T))
    ell = float(limits.equivalent_free_path(mu, p, T, AR.mass))
    G = du / (L + 2.0 * sigma * ell)          # slope of the gas profile
    x = (np.arange(cells) + 0.5) * L / cells
    u = -0.5 * du + sigma * ell * G + G * x
    if noise is not None:
        u = u + np.random.default_rng(seed).normal(0.0, noise, cells)
    tree = synthetic_tree(x, L, u, np.full(cells, T), p, u_se=noise or 0.5,
                          walls=((T, -0.5 * du), (T, 0.5 * du)), pxy=-mu * G)
    write_results(path, tree, overwrite=True)
    return {"slip1": sigma * ell * G, "slip2": -sigma * ell * G, "ell": ell, "G": G}


def fourier_file(path, zeta=1.9, cells=200, T1=350.0, T2=300.0, p=2.0e4, L=5e-6):
    """Pure conduction with K ~ T^omega: T^(omega+1) is linear in x; imposed jump zeta."""
    tr = transport_for("Ar", "vhs")
    e = tr.omega + 1.0
    x = (np.arange(cells) + 0.5) * L / cells

    def profile(Tg1, Tg2):
        return (Tg1**e + (Tg2**e - Tg1**e) * x / L) ** (1.0 / e)

    def slopes(Tg1, Tg2):  # dT/dx at the two walls
        c = (Tg2**e - Tg1**e) / (L * e)
        return c / Tg1 ** tr.omega, c / Tg2 ** tr.omega

    def ell(T):
        return float(limits.equivalent_free_path(tr.mu(T), p, T, AR.mass))

    Tg1, Tg2 = T1, T2  # solve T_gas for given wall temperatures by fixed point
    for _ in range(200):
        g1, g2 = slopes(Tg1, Tg2)
        Tg1, Tg2 = T1 + zeta * ell(Tg1) * g1, T2 - zeta * ell(Tg2) * g2
    q = -float(tr.K(Tg1)) * slopes(Tg1, Tg2)[0]
    write_results(path, synthetic_tree(x, L, np.zeros(cells), profile(Tg1, Tg2), p,
                                       walls=((T1, 0.0), (T2, 0.0)), qx=q), overwrite=True)
    return {"jump1": Tg1 - T1, "jump2": Tg2 - T2}


def test_exact_linear_couette_profile_returns_imposed_slip(tmp_path):
    """Uniform T and a straight line: the fit in s = x is exact.

    The temperature fit assumes NSF viscous heating, T = ... - mu a1^2 s^2/(2K);
    a uniform T is consistent with it only for a small velocity difference, so
    du = 2 m/s here (heating 6e-4 K, i.e. 1e-6 relative in ell).
    """
    f = tmp_path / "couette.h5"
    ref = couette_file(f, sigma=1.1, du=2.0)
    c = compare(f)
    fit = c.fit
    assert fit is not None and fit.mask.sum() < fit.mask.size  # Knudsen layers left out
    w1, w2 = fit.walls
    assert w1.values["slip"] == pytest.approx(ref["slip1"], rel=1e-9)
    assert w2.values["slip"] == pytest.approx(ref["slip2"], rel=1e-9)
    assert w1.values["sigma"] == pytest.approx(1.1, rel=1e-5)
    assert w2.values["sigma"] == pytest.approx(1.1, rel=1e-5)
    # the shear stress written is -mu G, so the viscosity-free coefficient agrees too
    assert w1.values["sigma_measured_mu"] == pytest.approx(1.1, rel=1e-5)
    # the excluded cells are those within 2 ell of a wall
    assert np.all((c.data.x[fit.mask] > 2 * c.ell) & (c.data.x[fit.mask] < c.data.L - 2 * c.ell))
    text = c.format()
    for word in ("tau wall xmin", "tau bulk mean", "q wall xmax", "sigma = 1.1", "ell/L"):
        assert word in text


def test_exact_nsf_couette_fourier_profile_returns_imposed_slip_and_jump(tmp_path):
    """Shear, viscous heating and conduction at once: profiles from
    limits.navier_stokes_fourier with imposed coefficients (exact to rounding)."""
    tr = transport_for("Ar", "vhs")
    L, cells, p0, T1, T2 = 5e-6, 200, 2.0e4, 350.0, 300.0
    n_avg = p0 / (K_B * 325.0)
    x = (np.arange(cells) + 0.5) * L / cells
    sol = limits.navier_stokes_fourier(AR.mass, n_avg, L, T1, T2, -150.0, 150.0, tr,
                                       sigma=(1.1, 0.9), zeta=(1.8, 2.1), x=x)
    f = tmp_path / "nsf.h5"
    write_results(f, synthetic_tree(x, L, sol.u, sol.T, sol.p, walls=((T1, -150.0), (T2, 150.0)),
                                    pxy=sol.tau, qx=sol.q))
    c = compare(f)
    w1, w2 = c.fit.walls
    # s(x) is integrated by trapezoids over the cells: O(dx^2) errors
    for w, slip, jump, sg, zt in ((w1, sol.slip1, sol.jump1, 1.1, 1.8),
                                  (w2, sol.slip2, sol.jump2, 0.9, 2.1)):
        assert w.values["slip"] == pytest.approx(slip, rel=1e-3)
        assert w.values["jump"] == pytest.approx(jump, rel=1e-3)
        assert w.values["sigma"] == pytest.approx(sg, rel=1e-3)
        assert w.values["zeta"] == pytest.approx(zt, rel=1e-3)
        assert w.values["sigma_measured_mu"] == pytest.approx(sg, rel=1e-3)


def test_exact_power_law_conduction_profile_returns_imposed_jump(tmp_path):
    f = tmp_path / "fourier.h5"
    ref = fourier_file(f, zeta=1.9)
    c = compare(f)
    w1, w2 = c.fit.walls
    # s(x) is integrated by trapezoids over 200 cells: O(dx^2) ~ 1e-5 relative
    assert w1.values["jump"] == pytest.approx(ref["jump1"], rel=2e-3)
    assert w2.values["jump"] == pytest.approx(ref["jump2"], rel=2e-3)
    assert w1.values["zeta"] == pytest.approx(1.9, rel=2e-3)
    assert w2.values["zeta"] == pytest.approx(1.9, rel=2e-3)
    assert "tau wall" not in c.format()  # no shear rows without wall motion


def test_slip_error_estimate_matches_scatter(tmp_path):
    """Noisy straight lines: the reported fit error matches the scatter of the fits.

    60 noise realisations; the standard deviation of (fitted - imposed)/error
    must be 1 within its sampling uncertainty (about 1/sqrt(2*60) = 0.09;
    we allow 0.7..1.3, more than 3 of those).
    """
    pulls = []
    for seed in range(60):
        f = tmp_path / f"noisy{seed}.h5"
        ref = couette_file(f, noise=1.0, seed=seed, cells=60)
        w = compare(f).fit.walls[0]
        pulls.append((w.values["slip"] - ref["slip1"]) / w.errors["slip"])
    pulls = np.array(pulls)
    assert 0.7 < pulls.std(ddof=1) < 1.3
    assert abs(pulls.mean()) < 4.0 / math.sqrt(pulls.size)


def test_batch_profiles_give_jackknife_errors(tmp_path):
    """With a batches group the errors are jackknife errors over the batches."""
    rng = np.random.default_rng(5)
    L, cells, B, p, T = 5e-6, 60, 20, 2.0e4, 273.15
    x = (np.arange(cells) + 0.5) * L / cells
    truth = -80.0 + 32e6 * x
    ub = truth + rng.normal(0.0, 2.0, (B, cells))
    Tb = T + rng.normal(0.0, 0.5, (B, cells))
    pxy = -1.0e-2 * np.ones((B, cells)) + rng.normal(0.0, 1e-3, (B, cells))
    tree = synthetic_tree(x, L, ub.mean(0), Tb.mean(0), p, u_se=2.0 / math.sqrt(B),
                          T_se=0.5 / math.sqrt(B), walls=((T, -100.0), (T, 100.0)),
                          pxy=pxy.mean(0),
                          batches={"velocity_y": ub, "temperature": Tb, "shear_stress": pxy,
                                   "heat_flux_x": np.zeros((B, cells))})
    f = tmp_path / "batches.h5"
    write_results(f, tree)
    c = compare(f)
    assert c.fit.method.startswith("jackknife")
    assert "batch-means error" in c.bulk_error_method
    # bulk shear error: batch means of the cell average, sigma 1e-3/sqrt(cells B)
    assert c.row("tau bulk mean").stderr == pytest.approx(1e-3 / math.sqrt(cells * B), rel=0.4)
    # jackknife slip error of a straight-line fit to independent noise: roughly the WLS value
    w = c.fit.walls[0]
    assert 0.5 < w.errors["slip"] / (2.0 / math.sqrt(B) * 2.0 / math.sqrt(c.fit.mask.sum())) < 2.0


def test_plots_are_written(tmp_path):
    f = tmp_path / "couette.h5"
    couette_file(f)
    paths = write_plots(compare(f), tmp_path / "plots")
    names = sorted(p.name for p in paths)
    assert names == ["couette-temperature.pdf", "couette-temperature.png",
                     "couette-velocity.pdf", "couette-velocity.png"]
    for p in paths:
        data = p.read_bytes()
        assert len(data) > 5000
        assert data.startswith(PNG if p.suffix == ".png" else b"%PDF")


def test_report_runs_without_numba(tmp_path):
    f = tmp_path / "couette.h5"
    couette_file(f)
    script = textwrap.dedent(f"""
        import sys
        sys.modules["numba"] = None          # any 'import numba' now fails
        import dsmc.io.results
        import dsmc.analysis.report as report
        c = report.compare({str(f)!r})
        print(c.format())
        report.write_plots(c, {str(tmp_path / 'np')!r})
        assert "dsmc.simulation" not in sys.modules and "dsmc.kernels" not in sys.modules
        try:
            import numba
        except ImportError:
            print("numba blocked")
    """)
    res = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                         cwd=ROOT, timeout=120)
    assert res.returncode == 0, res.stderr
    assert "numba blocked" in res.stdout and "sigma" in res.stdout
    assert (tmp_path / "np" / "couette-velocity.png").read_bytes().startswith(PNG)


def test_cli_compare_on_a_tiny_run(tmp_path, capsys):
    """A tiny real run (Kn ~ 0.1, a few seconds) through `dsmc run` and `dsmc compare`."""
    text = (CASES / "shuttle-gap-couette-transitional.toml").read_text()
    text = (text.replace("pressure = 4.0e3", "pressure = 2.4e4")
                .replace("transient_steps = 1000", "transient_steps = 500")
                .replace("sample_steps = 20000", "sample_steps = 3000")
                .replace("particles_per_cell = 60", "particles_per_cell = 30"))
    case = tmp_path / "tiny.toml"
    case.write_text(text)
    out = tmp_path / "tiny.h5"
    assert main(["run", str(case), "-o", str(out), "--quiet", "--threads", "1"]) == 0
    capsys.readouterr()
    assert main(["compare", str(out), "--plots", str(tmp_path / "pl")]) == 0
    printed = capsys.readouterr().out
    # every result file carries per-batch profiles: the bulk error is a batch-means error
    assert "tau bulk mean" in printed and "batch-means error of the cell average" in printed
    assert (tmp_path / "pl" / "tiny-velocity.png").read_bytes().startswith(PNG)
    c = compare(out)
    wall, bulk = c.row("tau wall xmax"), c.row("tau bulk mean")
    # momentum balance gas <-> wall
    assert abs(wall.dsmc - bulk.dsmc) < 4 * math.hypot(wall.stderr, bulk.stderr)
    # Kn ~ 0.1: DSMC lies between the continuum and free-molecular shear stress
    assert abs(bulk.dsmc) < abs(bulk.no_slip) and abs(bulk.dsmc) < abs(bulk.free_molecular)


def test_cli_compare_user_errors(tmp_path, capsys):
    assert main(["compare", str(tmp_path / "missing.h5")]) == 2
    bad = tmp_path / "bad.h5"
    bad.write_bytes(b"not hdf5")
    assert main(["compare", str(bad)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 2 and all(e.startswith("dsmc: error:") for e in err)
