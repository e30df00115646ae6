"""The 1-D normal shock in argon between Rankine-Hugoniot inflow reservoirs.

Outside references:

* Rankine-Hugoniot jump conditions for gamma = 5/3 (Anderson 2003, Modern
  Compressible Flow, ch. 3; Landau and Lifshitz, Fluid Mechanics, sec. 89);
  checked here against the textbook numbers at M = 3 (rho2/rho1 = 3,
  p2/p1 = 11, T2/T1 = 11/3, M2 = 0.5222: direct evaluation of those relations);
* conservation of mass, momentum and energy flux through a steady shock (the
  moments of the Boltzmann equation, e.g. Bird 1994 ch. 12);
* inverse density thickness lambda1/delta of argon shocks, Alsmeyer 1976,
  J. Fluid Mech. 74, 497 (electron-beam measurements), values read from his
  figure/table FROM MEMORY and good to roughly +-10 %: about 0.14 at M 1.5,
  0.27 at M 3 and 0.21 at M 8, with the maximum (about 0.28-0.30) near M 3-4
  in the convention lambda1 = (16/5) mu1/(rho1 sqrt(2 pi R T1)).  Bird 1994
  ch. 12 reports DSMC (VHS, omega = 0.81) on the same curve (from memory).

The runs are short (dx = lambda1/4, 40 or 60 lambda1, 60 particles per cell,
a few thousand steps); tolerances are 3 batch-means or jackknife standard
errors, with the errors asserted small enough to resolve the checks.
"""

from __future__ import annotations

import functools
import math

import numpy as np
import pytest

from dsmc.case import load_case, parse_case
from dsmc.errors import CaseError
from dsmc.gas import kinetic
from dsmc.gas.shock import fluxes, jump_ratios, upstream_mean_free_path
from dsmc.gas.species import get_species
from dsmc.simulation import Simulation, result_tree

from conftest import CASES as CASES_DIR, ROOT

AR = get_species("Ar")
T1, N1 = 300.0, 1.0e21
LAM1 = upstream_mean_free_path(float(kinetic.viscosity(AR, T1, "vhs")), N1, T1, AR.mass)

# Alsmeyer 1976 argon lambda1/delta, from memory (see the module docstring)
ALSMEYER_FROM_MEMORY = {1.5: 0.14, 3.0: 0.27, 8.0: 0.21}
MEMORY_TOLERANCE = 0.15  # relative: +-10 % recall of the figure, several % scatter of the data


def shock_text(mach, lengths=40.0, cells=160, steps=3000, ppc=60, extra=""):
    return f"""
title = "argon shock M {mach}"
[gas]
species = "Ar"
temperature = {T1}
number_density = {N1}
[domain]
length = {lengths * LAM1}
cells = {cells}
[shock]
mach = {mach}
{extra}
[numerics]
particles_per_cell = {ppc}
[run]
seed = 5
transient_steps = {steps}
sample_steps = {2 * steps}
batches = 10
"""


@functools.lru_cache(maxsize=None)
def run(mach):
    # M 1.5 is about 7 lambda1 thick: a longer slab keeps the boundaries in uniform gas
    lengths, cells, steps = (60.0, 240, 4000) if mach < 2 else (40.0, 160, 4000)
    sim = Simulation(parse_case(shock_text(mach, lengths, cells, steps), f"shock-M{mach}.toml"))
    sim.run()
    return sim


def test_jump_relations_give_the_textbook_numbers_at_mach_3():
    r = jump_ratios(3.0)
    assert r["density"] == pytest.approx(3.0, rel=1e-12)
    assert r["pressure"] == pytest.approx(11.0, rel=1e-12)
    assert r["temperature"] == pytest.approx(11.0 / 3.0, rel=1e-12)
    assert r["mach2"] == pytest.approx(0.5222, abs=1e-4)
    # the strong-shock limit (gamma + 1)/(gamma - 1) = 4 (Anderson 2003 ch. 3)
    assert jump_ratios(1e4)["density"] == pytest.approx(4.0, rel=1e-6)


def test_far_states_match_rankine_hugoniot():
    """Mean of the first and last fifth of the cells (8 lambda1 each, from 12 lambda1 = 3
    thicknesses off the shock centre) vs the RH states, within 1 % and 3 s.e."""
    sim = run(3.0)
    st = sim.shock
    per = sim.batch_fields()
    k = sim.grid.cells // 5
    for region, cells, want in (("upstream", slice(0, k), (st.n1, st.T1, st.u1)),
                                ("downstream", slice(-k, None), (st.n2, st.T2, st.u2))):
        for name, w in zip(("number_density", "temperature", "velocity"), want):
            vals = np.array([np.mean((f[name][:, 0] if name == "velocity" else f[name])[cells])
                             for f in per]) / w
            m, se = vals.mean(), vals.std(ddof=1) / math.sqrt(vals.size)
            assert se < 0.0033, (region, name, se)
            assert abs(m - 1) < min(0.01, 3 * se + 0.002), (region, name, m, se)
            print(f"{region} {name}: {m - 1:+.4%} (se {se:.4%})")


def _cell_fluxes(f):
    """Mass, x-momentum and energy flux per cell from the sampled fields (moments of the
    Boltzmann equation: rho u, P_xx + rho u^2, rho u (u^2/2 + e) + P_xx u + q_x, e = 3p/(2 rho))."""
    rho = f["mass_density"]
    u = f["velocity"][:, 0]
    pxx = f["pressure_tensor"][:, 0, 0]
    e = 1.5 * f["pressure"] / rho
    return np.array([rho * u, pxx + rho * u * u, rho * u * (0.5 * u * u + e) + pxx * u
                     + f["heat_flux"][:, 0]])


def test_mass_momentum_and_energy_fluxes_are_conserved_through_the_shock():
    """Upstream fifth, the middle fifth (the shock) and the downstream fifth carry the RH
    fluxes of the upstream state, within 3 batch-means standard errors (and 1 %)."""
    sim = run(3.0)
    st = sim.shock
    exact = np.array(fluxes(st.n1, st.T1, st.u1, AR.mass))
    assert np.allclose(fluxes(st.n2, st.T2, st.u2, AR.mass), exact, rtol=1e-12)
    per = np.array([_cell_fluxes(f) for f in sim.batch_fields()])  # (B, 3, N)
    n = sim.grid.cells
    for region in (slice(0, n // 5), slice(2 * n // 5, 3 * n // 5), slice(4 * n // 5, n)):
        vals = per[:, :, region].mean(axis=2) / exact
        m = vals.mean(axis=0)
        se = vals.std(axis=0, ddof=1) / math.sqrt(vals.shape[0])
        assert np.all(se < 0.0033), se
        assert np.all(np.abs(m - 1) < np.minimum(0.01, 3 * se + 1e-4)), (region, m, se)
        print("mass, momentum, energy flux / RH:", np.round(m - 1, 5), "se", np.round(se, 5))


def test_inverse_density_thickness_rises_peaks_and_falls_with_mach_number():
    """lambda1/delta at M 1.5 < M 3 > M 8 by more than 3 combined jackknife errors (the shape
    of the Alsmeyer 1976 curve), and each value within MEMORY_TOLERANCE + 3 s.e. of the
    values recalled from his data (from memory)."""
    inv = {}
    for mach in (1.5, 3.0, 8.0):
        v, se = run(mach).shock_profile()["inverse_density_thickness"]
        assert se / v < 0.08, (mach, v, se)  # enough to resolve the >20 % differences below
        inv[mach] = (v, se)
        print(f"M {mach}: lambda1/delta = {v:.4f} +- {se:.4f} (Alsmeyer, from memory, "
              f"{ALSMEYER_FROM_MEMORY[mach]})")
        ref = ALSMEYER_FROM_MEMORY[mach]
        assert abs(v - ref) < MEMORY_TOLERANCE * ref + 3 * se, (mach, v, se, ref)
    (a, sa), (b, sb), (c, sc) = inv[1.5], inv[3.0], inv[8.0]
    assert b - a > 3 * math.hypot(sa, sb), inv
    assert b - c > 3 * math.hypot(sb, sc), inv


def test_shock_stays_at_its_position_and_results_carry_the_shock_group():
    sim = run(3.0)
    prof = sim.shock_profile()
    L = sim.grid.length
    assert abs(prof["x_shock"] - 0.5 * L) < 2 * sim.grid.dx
    assert sim.shock_shifts > 0
    tree = result_tree(sim)["shock"]
    for name in ("mach", "upstream_number_density", "downstream_temperature", "thickness",
                 "inverse_density_thickness", "x", "normal_temperature", "parallel_temperature"):
        assert name in tree and tree[name].units
    # normal temperature overshoots the downstream value inside a strong-enough shock
    # (T_xx peak above T2 at M 3; Bird 1994 ch. 12, from memory), parallel does not
    assert np.nanmax(tree["normal_temperature"].value) > sim.shock.T2
    assert np.nanmax(tree["parallel_temperature"].value) < 1.02 * sim.shock.T2


@pytest.mark.parametrize("extra, boundary, key, message", [
    ("mach = 1.0", "", "shock.mach", "a normal shock needs a Mach number above 1, got 1"),
    ("position = 0.95", "", "shock.position", "must be at most 0.9"),
    ("", '[boundary.xmin]\nmodel = "outflow"\n[boundary.xmax]\nmodel = "outflow"\n', "boundary",
     "leave [boundary] out"),
])
def test_shock_case_errors_are_one_line(extra, boundary, key, message):
    text = shock_text(3.0, extra=extra).replace("mach = 3.0\nmach = 1.0", "mach = 1.0") + boundary
    with pytest.raises(CaseError) as err:
        parse_case(text, "s.toml")
    msg = str(err.value)
    assert "\n" not in msg and msg.startswith(f"s.toml: {key}: "), msg
    assert message in msg, msg


def test_shipped_shock_case_is_argon_between_mach_1_5_and_10(cases_dir):
    paths = sorted(cases_dir.glob("*-shock-*.toml"))
    assert paths
    for p in paths:
        case = load_case(p)
        assert case.gas.species.name == "Ar" and 1.5 <= case.shock.mach <= 10
        assert [w.model for w in case.walls] == ["inflow", "inflow"]


def test_plot_tool_draws_a_shock_result(tmp_path):
    import importlib.util

    from dsmc.io.results import write_results

    res = write_results(tmp_path / "shock.h5", result_tree(run(3.0)))
    spec = importlib.util.spec_from_file_location("plot_shock", ROOT / "tools" / "plot_shock.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    assert mod.main([str(res), "-o", str(tmp_path / "s.png")]) == 0
    assert (tmp_path / "s.png").stat().st_size > 10_000


def test_mach_sweep_through_the_sweep_verb(tmp_path, capsys):
    """`dsmc sweep BASE --machs`: one result per Mach number, summary CSV/HDF5 and plot; the
    summary values are those of the point files' /shock groups."""
    import csv

    import h5py

    from dsmc.cli import main

    base = tmp_path / "base.toml"
    base.write_text(shock_text(3.0, cells=80, steps=300, ppc=30), encoding="utf-8")
    out = tmp_path / "out"
    assert main(["sweep", str(base), "--machs", "4,2", "--jobs", "2", "--out", str(out)]) == 0
    text = capsys.readouterr().out
    assert "lambda1/delta" in text
    with open(out / "base-mach-summary.csv", newline="") as fh:
        rows = list(csv.reader(fh))
    assert rows[0][0] == "mach [1]" and [float(r[0]) for r in rows[1:]] == [2.0, 4.0]
    for r in rows[1:]:
        with h5py.File(r[-1]) as f:
            assert f["shock/mach"][()] == float(r[0])
            assert f["shock/inverse_density_thickness"][()] == float(r[1])
    assert (out / "base-mach-sweep.png").stat().st_size > 5_000
    assert main(["sweep", str(CASES_DIR / "sweep-shuttle-gap-couette.toml"), "--machs", "2",
                 "--out", str(tmp_path / "x")]) == 2
    assert "needs a base case with a [shock] section" in capsys.readouterr().err
    assert main(["sweep", str(base), "--pressures", "1,2", "--out", str(tmp_path / "y")]) == 2
    assert "a Knudsen sweep needs two walls" in capsys.readouterr().err


def test_open_side_run_continues_bit_identically_from_its_state():
    """A shock run (injection remainders and streams, re-centring window, batch inflow sums in
    the state) paused and restored into a fresh Simulation ends exactly as an uninterrupted one."""
    text = shock_text(3.0, cells=80, steps=200, ppc=30, extra="recentre_interval = 7")
    whole = Simulation(parse_case(text))
    whole.run()
    first = Simulation(parse_case(text))
    count = [0]

    def stop():
        count[0] += 1
        return count[0] == 333  # mid-window, mid-sampling

    assert not first.run(stop=stop)
    second = Simulation(parse_case(text))
    second.restore(first.state())
    assert second.run()
    assert second.step_count == whole.step_count
    for name in ("number_density", "temperature", "heat_flux"):
        assert np.array_equal(second.fields()[name][0], whole.fields()[name][0]), name
    a, b = second.open_side_fluxes(), whole.open_side_fluxes()
    assert np.array_equal(a[1]["outflow_energy_flux"][0], b[1]["outflow_energy_flux"][0])
    assert second.shock_shift == whole.shock_shift


def test_compare_refuses_a_result_with_open_sides(tmp_path, capsys):
    from dsmc.cli import main
    from dsmc.io.results import write_results

    res = write_results(tmp_path / "shock.h5", result_tree(run(3.0)))
    assert main(["compare", str(res)]) == 2
    err = capsys.readouterr().err
    assert "xmin is an open side ('inflow'): the gap limits need two walls" in err
    assert len(err.splitlines()) == 1
