"""Planar gaps against their analytic limits.

* Free-molecular (Kn ~ 200): shear stress and heat flux between plates with
  Maxwell walls, exact two-stream solution (derived in
  :func:`dsmc.analysis.limits.free_molecular`), within 2 %.
* Near-continuum (Kn ~ 0.02, the shipped cases): Navier-Stokes-Fourier with
  first-order velocity slip and temperature jump (hard-sphere coefficients of
  Ohwada, Sone and Aoki 1989 and Sone, Ohwada and Aoki 1989, via
  :func:`dsmc.analysis.limits.slip`) and the Chapman-Enskog VHS viscosity and
  conductivity (Bird 1994 eq. 4.62, 15/4 k/m mu), within 3 %.

Signs: the gas pushes the xmax wall along y with the shear stress P_xy and
the xmin wall with -P_xy; ``q_wall1`` of the limits is the heat leaving
wall 1 (xmin), i.e. minus the heat into that wall that the engine reports.
"""

from __future__ import annotations

import numpy as np
import pytest

from dsmc.analysis import limits
from dsmc.case import load_case, parse_case
from dsmc.gas import kinetic
from dsmc.simulation import Simulation

from conftest import CASES, bulk_mean, relative

FM_CASE = """
[gas]
species = "Ar"
temperature = {T0}
pressure = 0.025          # Pa: mean free path ~ 0.2 m, Kn ~ 200 over 1 mm
[domain]
length = 1.0e-3
cells = 10
[boundary.xmin]
model = "maxwell"
accommodation = {a1}
temperature = {T1}
velocity = [0.0, {u1}, 0.0]
[boundary.xmax]
model = "maxwell"
accommodation = {a2}
temperature = {T2}
velocity = [0.0, {u2}, 0.0]
[numerics]
particles_per_cell = 200
[run]
seed = {seed}
transient_steps = 400
sample_steps = {steps}
batches = 20
"""


def _run(text):
    sim = Simulation(parse_case(text))
    sim.run()
    return sim


def _wall(sim, side, name, k=None):
    mean, se = sim.wall_fields()[side][name]
    return (float(mean[k]), float(se[k])) if k is not None else (float(mean), float(se))


FM_SETS = [
    # T1, T2, u1, u2, alpha1, alpha2
    (273.15, 273.15, -150.0, 150.0, 1.0, 1.0),
    (350.0, 250.0, 0.0, 0.0, 1.0, 1.0),
    (400.0, 250.0, -100.0, 200.0, 0.8, 0.5),
]


@pytest.mark.parametrize("T1,T2,u1,u2,a1,a2", FM_SETS)
def test_free_molecular_shear_and_heat_flux(T1, T2, u1, u2, a1, a2):
    text = FM_CASE.format(T0=0.5 * (T1 + T2), T1=T1, T2=T2, u1=u1, u2=u2, a1=a1, a2=a2,
                          seed=101, steps=32000)
    sim = _run(text)
    n_avg = sim.n_particles * sim.weight / sim.grid.length
    fm = limits.free_molecular(sim.mass[0], n_avg, T1, T2, u1, u2, a1, a2)
    q_in_1, se1 = _wall(sim, 0, "heat_flux")
    q_in_2, se2 = _wall(sim, 1, "heat_flux")
    if T1 != T2 or u1 != u2:
        # relative to the larger of the two wall heat fluxes: with moving walls one
        # of them can nearly vanish (frictional heating cancels conduction)
        scale = max(abs(fm.q_wall1), abs(fm.q_wall2))
        for dsmc, se, exact in ((-q_in_1, se1, fm.q_wall1), (q_in_2, se2, fm.q_wall2)):
            assert se < 0.005 * scale
            assert abs(dsmc - exact) < 0.02 * scale
    if u1 != u2:
        tau2, se = _wall(sim, 1, "shear_stress", 1)
        tau1, _ = _wall(sim, 0, "shear_stress", 1)
        assert se < 0.005 * abs(fm.tau)
        assert abs(relative(tau2, fm.tau)) < 0.02
        assert abs(relative(-tau1, fm.tau)) < 0.02
        pxy, se_f = bulk_mean(sim, "pressure_tensor", lambda P: P[:, 0, 1])
        assert abs(relative(pxy, fm.tau)) < 0.02
    p_wall, se_p = _wall(sim, 0, "pressure")
    assert abs(relative(p_wall, fm.p_xx)) < 0.02


def test_specular_walls_transmit_no_shear():
    # Maxwell walls with alpha = 0 reflect specularly: no tangential momentum
    # reaches the gas, whatever the wall speed (Maxwell 1879).
    text = FM_CASE.format(T0=300, T1=300, T2=300, u1=-200, u2=200, a1=0.0, a2=0.0,
                          seed=7, steps=2000).replace("0.025 ", "10.0 ")
    sim = Simulation(parse_case(text))
    p_y = sim.velocities[:, 1].sum()
    sim.run()
    for side in (0, 1):
        tau, se = _wall(sim, side, "shear_stress", 1)
        assert abs(tau) < 1e-12 * _wall(sim, side, "pressure")[0]  # zero but for round-off
    # the gas keeps its initial y momentum exactly: the walls' motion never reaches it
    assert abs(sim.velocities[:, 1].sum() - p_y) < 1e-9 * np.abs(sim.velocities[:, 1]).sum()


def _transport(sim):
    sp = sim.species[0]
    model = sim.model
    omega = sp.parameters(model)[1]
    return limits.PowerLawTransport(float(kinetic.viscosity(sp, sp.T_ref, model)),
                                    float(kinetic.conductivity(sp, sp.T_ref, model)),
                                    sp.T_ref, omega)


def _slip_solution(sim):
    w1, w2 = sim.case.walls
    n_avg = sim.n_particles * sim.weight / sim.grid.length
    return limits.slip(sim.mass[0], n_avg, sim.grid.length, w1.temperature, w2.temperature,
                       w1.velocity[1], w2.velocity[1], _transport(sim))


@pytest.fixture(scope="module")
def continuum_couette():
    sim = Simulation(load_case(CASES / "shuttle-gap-couette-continuum.toml"))
    sim.run()
    return sim


@pytest.fixture(scope="module")
def continuum_fourier():
    sim = Simulation(load_case(CASES / "sensor-gap-fourier-continuum.toml"))
    sim.run()
    return sim


def test_near_continuum_couette_shear_stress_vs_slip_flow(continuum_couette):
    sim = continuum_couette
    assert 0.015 < sim.adequacy()["knudsen_number"] < 0.03
    ref = _slip_solution(sim)
    tau, se = bulk_mean(sim, "pressure_tensor", lambda P: P[:, 0, 1])
    assert se < 0.01 * abs(ref.tau)
    assert abs(relative(tau, ref.tau)) < 0.03
    tau_wall, se_w = _wall(sim, 1, "shear_stress", 1)
    assert abs(tau_wall - tau) < 4 * np.hypot(se_w, se)  # momentum balance gas <-> wall


def test_near_continuum_fourier_heat_flux_vs_jump_theory(continuum_fourier):
    sim = continuum_fourier
    assert 0.015 < sim.adequacy()["knudsen_number"] < 0.03
    ref = _slip_solution(sim)
    q, se = bulk_mean(sim, "heat_flux", lambda h: h[:, 0])
    assert se < 0.01 * abs(ref.q_wall1)
    assert abs(relative(q, ref.q_wall1)) < 0.03
    q_in_2, se2 = _wall(sim, 1, "heat_flux")
    assert abs(q_in_2 - q) < 4 * np.hypot(se2, se)  # energy balance gas <-> wall

