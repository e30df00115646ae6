"""Validation table: the engine against its outside references, with measured deviations.

    python tools/validate.py [--threads 2] [--long]

Runs the checks the test suite makes (equilibrium collision rate, free-molecular gaps,
near-continuum gaps from the shipped cases) and prints each DSMC value with its standard error,
the reference value and the relative deviation.  ``--long`` doubles the sampling of every run.
References: Bird (1994) eq. 4.64 for the collision rate; the exact two-stream free-molecular
solution and Navier-Stokes-Fourier with slip/jump of :mod:`dsmc.analysis.limits`; for the argon
normal shock the Rankine-Hugoniot states and the inverse density thickness measured by Alsmeyer
(1976), values from memory (``tests/test_shock.py``), on finer cells and longer runs than the
tests.

2-D planar box (``--only planar``): plane Couette flow in a box periodic in x against the 1-D
slab of the same gap; free-molecular drag of a cylinder at three speed ratios (Bird 1994 ch. 7);
the mass flow of a pressure-driven micro-channel over a rarefaction sweep, against the
free-molecular (Clausing) value at Kn = 100 and 10 and against first-order slip flow at
ell/H = 0.1 and 0.05.

Molecular gases and mixtures (``--only internal`` runs these alone): rotational relaxation
against the Jeans equation with the case's Z_rot; nitrogen conductivity from the shipped
near-continuum Fourier gap against the Eucken relation and CoolProp; nitrogen viscosity from a
near-continuum Couette gap against CoolProp; helium-argon viscosity from a Couette gap against
the Chapman-Enskog mixture result (Hirschfelder, Curtiss and Bird 1954) and CoolProp.
Transport coefficients are taken in the bulk (the middle half of the gap, more than 10 mean
free paths from the walls): the gradient of a straight-line fit, the flux averaged (the heat
flux from the two walls, which includes the internal energy; the shear stress from the cells).
"""

from __future__ import annotations

import argparse
import math
import sys
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))

from conftest import bulk_mean  # noqa: E402
from test_collisions import BOX, _temperature  # noqa: E402
from test_gap_limits import FM_CASE, FM_SETS, _slip_solution  # noqa: E402
from test_shock import ALSMEYER_FROM_MEMORY, shock_text  # noqa: E402
from test_internal_energy import parker_ratios, relaxation_numbers  # noqa: E402

from dsmc.analysis import limits  # noqa: E402
from dsmc.case import load_case, parse_case  # noqa: E402
from dsmc.gas import kinetic  # noqa: E402
from dsmc.gas.species import get_species  # noqa: E402
from dsmc.parallel import sweep_cases  # noqa: E402
from dsmc.simulation import Simulation, set_threads  # noqa: E402


def row(name, value, se, ref):
    dev = (value - ref) / abs(ref)
    print(f"{name:58s} {value:12.5g} +- {se:9.2g}   ref {ref:12.5g}   {dev:+7.2%}")


def collision_rates(scale):
    for gas, model in (("Ar", "hs"), ("Ar", "vhs"), ("Ar", "vss"), ("He", "vss"), ("Xe", "vhs")):
        sim = Simulation(parse_case(BOX.format(gas=gas, model=model, seed=3)))
        sim.advance(100)
        sim.reset_samples()
        sim.advance(1000 * scale, sample=True)
        sim.close_batch()
        c = sim.collision_summary()
        n = sim.n_particles * sim.weight / sim.grid.length
        theory = kinetic.collision_rate(sim.species[0], _temperature(sim), n, model)
        row(f"collision rate {gas} {model} (Bird 1994 eq. 4.64)", c["collision_rate"],
            c["collision_rate"] / math.sqrt(c["collisions"]), theory)


def free_molecular(scale):
    for T1, T2, u1, u2, a1, a2 in FM_SETS:
        sim = Simulation(parse_case(FM_CASE.format(T0=0.5 * (T1 + T2), T1=T1, T2=T2, u1=u1, u2=u2,
                                                   a1=a1, a2=a2, seed=101, steps=24000 * scale)))
        sim.run()
        n_avg = sim.n_particles * sim.weight / sim.grid.length
        fm = limits.free_molecular(sim.mass[0], n_avg, T1, T2, u1, u2, a1, a2)
        w = sim.wall_fields()
        tag = f"FM T {T1:g}/{T2:g} K, u {u1:g}/{u2:g} m/s, alpha {a1:g}/{a2:g}"
        if u1 != u2:
            row(f"{tag}: shear xmax", w[1]["shear_stress"][0][1], w[1]["shear_stress"][1][1], fm.tau)
        if T1 != T2 or u1 != u2:
            row(f"{tag}: heat into xmax", w[1]["heat_flux"][0], w[1]["heat_flux"][1], fm.q_wall2)
            row(f"{tag}: heat from xmin", -w[0]["heat_flux"][0], w[0]["heat_flux"][1], fm.q_wall1)


def near_continuum(scale):
    for name, label in (("shuttle-gap-couette-continuum", "shear"),
                        ("sensor-gap-fourier-continuum", "heat")):
        case = load_case(ROOT / "cases" / f"{name}.toml")
        case = case.with_run(sample_steps=case.run.sample_steps * scale)
        sim = Simulation(case)
        sim.run()
        ref = _slip_solution(sim)
        if label == "shear":
            v, se = bulk_mean(sim, "pressure_tensor", lambda P: P[:, 0, 1])
            row(f"{name}: bulk P_xy vs NSF slip", v, se, ref.tau)
        else:
            v, se = bulk_mean(sim, "heat_flux", lambda h: h[:, 0])
            row(f"{name}: bulk q_x vs NSF jump", v, se, ref.q_wall1)


def fourier_kn001(scale, steps=1_200_000):
    """The sensor gap (473/273 K, argon VHS) at Kn = ell/L = 0.01, the continuum end of the sweep,
    against NSF with temperature jump.  Its heat flux needs batches much longer than the
    diffusion time across the gap, L^2 rho c_p/(pi^2 k) (about 12 000 steps here): 20 batches of
    60 000 steps, 2e10 particle-steps, which is why the sweep test cannot check it in CI."""
    base = (ROOT / "cases" / "sensor-gap-fourier-continuum.toml").read_text()
    T = 0.5 * (473.15 + 273.15)
    sp = get_species("Ar")
    mu = float(kinetic.viscosity(sp, T, "vhs"))
    p = mu * math.sqrt(2.0 * kinetic.K_B * T / sp.mass) / (0.01 * 2.0e-6)  # ell/L = 0.01
    point = sweep_cases(base, "sensor-gap-fourier-continuum.toml", pressures=[p])[0]
    case = parse_case(point.text, "sensor-gap-fourier-kn001")
    case = case.with_run(sample_steps=steps * scale, batches=20)
    sim = Simulation(case)
    sim.run()
    ref = _slip_solution(sim)
    v, se = bulk_mean(sim, "heat_flux", lambda h: h[:, 0])
    row(f"Fourier Kn_ell {point.kn_ell:.4f} ({point.cells} cells): bulk q_x vs NSF jump",
        v, se, ref.q_wall1)


def shock_structure(scale):
    for mach in sorted(ALSMEYER_FROM_MEMORY):
        lengths = 60.0 if mach < 2 else 40.0
        cells = int(8 * lengths)  # lambda1/8: below a third of the downstream mean free path
        sim = Simulation(parse_case(shock_text(mach, lengths, cells, steps=6000 * scale, ppc=60)))
        sim.run()
        st = sim.shock
        k = cells // 5
        per = sim.batch_fields()
        for name, cut, ref in (("n1", slice(0, k), st.n1), ("n2", slice(-k, None), st.n2),
                               ("T2", slice(-k, None), st.T2)):
            field = "number_density" if name[0] == "n" else "temperature"
            vals = np.array([np.mean(f[field][cut]) for f in per])
            row(f"shock M {mach:g}: {name} vs Rankine-Hugoniot", vals.mean(),
                vals.std(ddof=1) / math.sqrt(vals.size), ref)
        v, se = sim.shock_profile()["inverse_density_thickness"]
        row(f"shock M {mach:g}: lambda1/delta vs Alsmeyer 1976 (from memory)", v, se,
            ALSMEYER_FROM_MEMORY[mach])


COUETTE = """
title = "validation Couette gap"
[gas]
species = {species}
{extra}
collision_model = "{model}"
temperature = {T}
pressure = {p}
[domain]
length = {L}
cells = {cells}
[boundary.xmin]
model = "diffuse"
velocity = [0.0, {u_neg}, 0.0]
[boundary.xmax]
model = "diffuse"
velocity = [0.0, {u}, 0.0]
[initial]
profile = "linear"
[numerics]
particles_per_cell = 40
[run]
seed = {seed}
transient_steps = {transient}
sample_steps = {steps}
batches = 20
"""


def _bulk_fit(sim, gradient_of, flux_of):
    """Flux / gradient in the middle half of the gap, per batch (for the error) and overall."""
    x = sim.grid.centers
    mid = (x > 0.25 * sim.grid.length) & (x < 0.75 * sim.grid.length)

    def one(f):
        slope = np.polyfit(x[mid], gradient_of(f)[mid], 1)[0]
        return flux_of(f, mid) / slope

    per = np.array([one(f) for f in sim.batch_fields()])
    total = one({k: v[0] for k, v in sim.fields().items()})
    return total, per.std(ddof=1) / math.sqrt(per.size)


def _coolprop(prop, T, p, fluid):
    try:
        import CoolProp.CoolProp as CP
    except ImportError:
        return float("nan")
    return CP.PropsSI(prop, "T", T, "P", p, fluid)


def internal_energy(scale):
    for species, model, extra, Z in (("N2", "vhs", "", 5.0), ("N2", "vss",
                                     "rotational_collision_number = 10", 10.0),
                                     ("CH4", "hs", "", 15.0)):
        fits = relaxation_numbers(species, model, extra, seeds=range(1, 1 + 16 * scale))
        row(f"rotational relaxation {species} {model}: Z_rot fit (Jeans 1904)", fits.mean(),
            fits.std(ddof=1) / math.sqrt(fits.size), Z)

    r = parker_ratios(range(1, 1 + 24 * scale))
    row("rotational relaxation N2 Parker Z(T): slope / Jeans slope", r.mean(),
        r.std(ddof=1) / math.sqrt(r.size), 1.0)

    # nitrogen conductivity: the shipped near-continuum Fourier gap
    case = load_case(ROOT / "cases" / "nitrogen-gap-fourier-continuum.toml")
    case = case.with_run(sample_steps=case.run.sample_steps * 4 * scale)
    sim = Simulation(case)
    sim.run()
    w = sim.wall_fields()
    q = 0.5 * (w[1]["heat_flux"][0] - w[0]["heat_flux"][0])  # heat through the gap, W/m^2
    q_rel_se = math.hypot(w[0]["heat_flux"][1], w[1]["heat_flux"][1]) / 2.0 / abs(q)
    K, se = _bulk_fit(sim, lambda f: f["overall_temperature"], lambda f, mid: -q)
    se = math.hypot(se, q_rel_se * K)
    Tc = float(np.mean(sim.fields()["overall_temperature"][0][sim.grid.cells // 2 - 5:
                                                             sim.grid.cells // 2 + 5]))
    p = case.gas.pressure
    sp = sim.species[0]
    row(f"N2 conductivity at {Tc:.1f} K vs Eucken (model mu)", K, se,
        float(kinetic.conductivity(sp, Tc, "vhs")))
    row(f"N2 conductivity at {Tc:.1f} K vs CoolProp", K, se, _coolprop("L", Tc, p, "Nitrogen"))

    # nitrogen viscosity: near-continuum Couette (2 um, 100 kPa, +-200 m/s)
    sim = Simulation(parse_case(COUETTE.format(species='"N2"', extra="", model="vhs", T=300.0,
                                               p=100e3, L=2.0e-6, cells=120, u=200.0,
                                               u_neg=-200.0, seed=11, transient=3000,
                                               steps=200000 * scale)))
    sim.run()
    mu, se = _bulk_fit(sim, lambda f: f["velocity"][:, 1],
                       lambda f, mid: -np.mean(f["pressure_tensor"][mid, 0, 1]))
    Tc = float(np.mean(sim.fields()["overall_temperature"][0][55:65]))
    row(f"N2 viscosity at {Tc:.1f} K vs CoolProp", mu, se,
        _coolprop("V", Tc, 100e3, "Nitrogen"))
    row(f"N2 viscosity at {Tc:.1f} K vs VHS model mu", mu, se,
        float(kinetic.viscosity(sim.species[0], Tc, "vhs")))

    # helium-argon viscosity: near-continuum Couette (4 um, 100 kPa, +-200 m/s)
    for model in ("vhs", "vss"):
        sim = Simulation(parse_case(COUETTE.format(
            species='["He", "Ar"]', extra="mole_fractions = [0.5, 0.5]", model=model, T=300.0,
            p=100e3, L=4.0e-6, cells=150, u=200.0, u_neg=-200.0, seed=12, transient=4000,
            steps=200000 * scale)))
        sim.run()
        mu, se = _bulk_fit(sim, lambda f: f["velocity"][:, 1],
                           lambda f, mid: -np.mean(f["pressure_tensor"][mid, 0, 1]))
        Tc = float(np.mean(sim.fields()["temperature"][0][70:80]))
        x = float(np.mean(sim.species_index == 0))
        row(f"He-Ar {model} x_He={x:.3f} viscosity vs Chapman-Enskog", mu, se,
            kinetic.mixture_viscosity(sim.species, [x, 1 - x], Tc, model))
        row(f"He-Ar {model} viscosity at {Tc:.1f} K vs CoolProp", mu, se,
            _coolprop("V", Tc, 100e3, f"HEOS::Helium[{x:.6f}]&Argon[{1 - x:.6f}]"))


def planar_2d(scale):
    """2-D box periodic in x between y walls: wall shear against the 1-D slab of the same gap
    (``tests/test_planar_2d.py``, here with 4x the particles and samples)."""
    from test_planar_2d import GAP, _couette_1d, _couette_2d, _profile_and_error, _wall_shear

    one = _couette_1d(samples=12000 * scale, ppc=800)
    two = _couette_2d(samples=12000 * scale, ppc=200)
    t1, _ = _profile_and_error([0.5 * (a - b) for a, b in zip(*_wall_shear(one, 0, 1, 1))])
    t2, s2 = _profile_and_error([0.5 * (a - b) for a, b in zip(*_wall_shear(two, 2, 3, 0))])
    row(f"2-D Couette wall shear, gap {GAP * 1e3:g} mm, vs 1-D slab", t2, s2, t1)


def bodies_free_molecular(scale):
    """Free-molecular loads on bodies (``tests/test_bodies.py``, here at more speed ratios):
    cylinder drag (Bird 1994 ch. 7) and flat-plate drag and lift at incidence."""
    from test_bodies import case_text

    from dsmc.analysis import free_molecular as fm

    for speed, Tw in ((300.0, 300.0), (800.0, 500.0), (2000.0, 300.0)):
        body = f"""
[[body]]
shape = "circle"
center = [0.01, 0.01]
radius = 0.002
model = "diffuse"
temperature = {Tw!r}
"""
        sim = Simulation(parse_case(case_text(body, velocity=(speed, 0.0, 0.0),
                                              samples=4000 * scale, batches=20)))
        sim.run()
        cd, err = sim.body_fields()[0]["drag_coefficient"]
        s = speed / math.sqrt(2 * kinetic.K_B * 300.0 / sim.mass[0])
        row(f"FM cylinder CD, s = {s:.2f}, Tw/T = {Tw / 300:g} (Bird 1994 ch. 7)", cd, err,
            fm.cylinder(s, 300.0, Tw).CD)


def microchannel(scale):
    """Pressure-driven micro-channel over a rarefaction sweep (``tests/test_microchannel.py``):
    free-molecular (Clausing) flow rate at Kn = 100 and 10, slip flow between two stations at
    ell/H = 0.1 and 0.05 (cells of a third of the mean free path)."""
    from test_microchannel import free_molecular_run, slip_channel_run, slip_ratio

    for kn in (100.0, 10.0):
        _, (mdot, err), _, exact = free_molecular_run(kn, samples=12000 * scale)
        row(f"channel L/H = 2, Kn {kn:g}: mass flow vs free-molecular (Clausing)", mdot, err, exact)
    for ell, cells in ((0.1, 36), (0.05, 72)):
        sim = slip_channel_run(ell, cells, aspect=4, samples=10000 * scale,
                               transient=2500 if ell >= 0.1 else 5000)
        ratio, got = slip_ratio(sim, 1.25)
        row(f"channel L/H = 4, ell/H = {got:.3f}: mass flow / first-order slip flow", ratio.mean(),
            ratio.std(ddof=1) / math.sqrt(len(ratio)), 1.0)


def main():
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--threads", type=int, default=None)
    p.add_argument("--long", action="store_true", help="twice the sampling of every run")
    p.add_argument("--only", choices=("internal", "planar"),
                   help="run only the molecular-gas and mixture checks, or the 2-D checks")
    args = p.parse_args()
    set_threads(args.threads)
    scale = 2 if args.long else 1
    print(f"{'check':58s} {'DSMC':>12s}    {'stderr':>9s}   {'reference':>16s}   {'dev':>7s}")
    if args.only is None:
        collision_rates(scale)
        free_molecular(scale)
        near_continuum(scale)
        fourier_kn001(scale)
        shock_structure(scale)
    if args.only in (None, "internal"):
        internal_energy(scale)
    if args.only in (None, "planar"):
        planar_2d(scale)
        bodies_free_molecular(scale)
        microchannel(scale)


if __name__ == "__main__":
    main()
