"""The 2-D planar engine: kernel geometry, invariants, equilibrium, Couette against 1-D, output.

Sources of the outside values:

* ideal-gas pressure on a wall of a closed box in equilibrium, ``p = n k T``, and the one-sided
  number flux ``n sqrt(kT / (2 pi m))`` (Bird 1994, eq. 4.22 with zero drift; standard kinetic
  theory);
* k from scipy.constants (exact in the SI since 2019);
* plane Couette flow is the same physical problem in both engines, so the 2-D box with a
  periodic x axis must give the 1-D slab's wall shear stress and velocity profile (the 1-D
  engine's own checks against published limits live in tests/test_gap_limits.py).
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

import h5py
import numba
import numpy as np
import pytest
from scipy import constants

from dsmc.case import parse_case
from dsmc.geometry import empty_tables
from dsmc.kernels.surfaces import W_NCOL
from dsmc.errors import CaseError
from dsmc.io.results import write_results
from dsmc.io.xdmf import write_xdmf
from dsmc.kernels.move import N_WALL_ACC, move_2d
from dsmc.kernels.rng import new_streams
from dsmc.kernels.sort import SORT_CHUNKS, keys_2d
from dsmc.models import wall_row
from dsmc.simulation import Simulation, result_tree

K_B = constants.k


@pytest.fixture(autouse=True, scope="module")
def _one_thread():
    """One kernel thread (runs are bit-identical at any thread count; see the test below)."""
    n = numba.get_num_threads()
    numba.set_num_threads(1)
    yield
    numba.set_num_threads(n)


def box_case(walls: dict, *, length=(0.01, 0.008), cells=(10, 8), pressure=1.0, ppc=30,
             transient=100, samples=400, batches=8, seed=3, time_step=None, gas="") -> str:
    """Case text of an argon box with the given ``{side: 'key = value' lines}``; ``gas``: more
    ``[gas]`` lines."""
    text = f"""
[gas]
species = "Ar"
temperature = 300.0
pressure = {pressure!r}
{gas}
[domain]
length = [{length[0]!r}, {length[1]!r}]
cells = [{cells[0]}, {cells[1]}]
"""
    for side in ("xmin", "xmax", "ymin", "ymax"):
        text += f"[boundary.{side}]\n{walls[side]}\n"
    text += f"""[numerics]
particles_per_cell = {ppc}
{'' if time_step is None else f'time_step = {time_step!r}'}
[run]
seed = {seed}
transient_steps = {transient}
sample_steps = {samples}
batches = {batches}
"""
    return text


SPECULAR = 'model = "specular"'
DIFFUSE = 'model = "diffuse"'
PERIODIC = 'model = "periodic"'


# ---------------------------------------------------------------------------- kernel geometry


_T = empty_tables()
# body arguments of move_2d for a box without bodies: tables, wall rows, panel sums, offset
NO_BODIES = (_T.elem, _T.box, _T.first, np.zeros((0, W_NCOL)), np.zeros((SORT_CHUNKS, 0, N_WALL_ACC)),
             1e-12)


def _move_one(pos, vel, dt, walls, nx=4, ny=4, lx=1.0, ly=1.0):
    pos = np.array([pos], dtype=float)
    v = np.array([vel], dtype=float)
    acc = np.zeros((1, 4, N_WALL_ACC))
    key = np.zeros(1, dtype=np.int32)
    hist = np.zeros((SORT_CHUNKS, nx * ny + 1), dtype=np.int32)
    state = new_streams(np.random.SeedSequence(1), 1)
    move_2d(pos, v, np.zeros(1, dtype=np.uint8), np.zeros(0), np.zeros(0, dtype=np.int32), 1, dt,
            lx, ly, walls, np.array([6.6e-26]), np.zeros(1, dtype=np.int64), np.zeros(1), state,
            4096, acc, nx, ny, key, hist, *NO_BODIES)
    return pos[0], v[0], acc[0], key[0], hist[0]


def test_specular_corner_hit_is_a_double_mirror():
    """A particle flying into the corner (0, 0) leaves it with both in-plane components
    reversed, at the doubly mirrored straight-line position; one hit on each of xmin, ymin."""
    walls = np.array([wall_row("specular", 300.0, (0, 0, 0))] * 4)
    pos, v, acc, key, hist = _move_one((0.25, 0.25), (-1.0, -1.0, 0.3), 0.5, walls)
    assert np.allclose(pos, (0.25, 0.25), atol=1e-15)
    assert np.array_equal(v, (1.0, 1.0, 0.3))
    assert acc[0, 0] == 1.0 and acc[2, 0] == 1.0 and acc[1, 0] == 0.0 and acc[3, 0] == 0.0
    assert key == 1 + 4 * 1 and hist[key] == 1 and hist.sum() == 1


def test_several_hits_in_one_step_and_periodic_wrap():
    """Specular x walls 1 m apart, periodic y: a flight of 3.3 m in x ends mirrored three times
    (x = 0.3 + 3.3 -> 3.6 -> folded into [0, 1] as 0.4 moving back), y wraps modulo ly."""
    walls = np.array([wall_row("specular", 300.0, (0, 0, 0))] * 2
                     + [wall_row("periodic", 300.0, (0, 0, 0))] * 2)
    pos, v, acc, key, _ = _move_one((0.3, 0.9), (3.3, 0.25, 0.0), 1.0, walls)
    assert np.allclose(pos, (0.4, 0.15), atol=1e-12)
    assert v[0] == -3.3 and v[1] == 0.25
    assert acc[0, 0] + acc[1, 0] == 3.0 and acc[2, 0] == 0.0 and acc[3, 0] == 0.0
    assert key == 1 + 4 * 0


def test_absurd_time_step_stops_at_max_hits_inside_the_box():
    """The MAX_HITS guard: a flight of 1e9 box widths ends after MAX_HITS wall hits, on a
    wall, inside the box."""
    from dsmc.kernels.move import MAX_HITS

    walls = np.array([wall_row("specular", 300.0, (0, 0, 0))] * 4)
    pos, v, acc, key, _ = _move_one((0.3, 0.6), (1.0, 0.7, 0.0), 1e9, walls)
    assert acc[:, 0].sum() == MAX_HITS
    assert 0.0 <= pos[0] <= 1.0 and 0.0 <= pos[1] <= 1.0 and 0 <= key < 16
    assert abs(v[0]) == 1.0 and abs(v[1]) == 0.7


def test_set_particles_in_2d():
    sim = Simulation(parse_case(box_case(CAVITY, ppc=5)))
    sim.set_particles([[0.001, 0.007], [0.0095, 0.0005]], [[1.0, 2.0, 3.0], [0.0, 0.0, 0.0]])
    assert sim.positions.shape == (2, 2) and list(np.diff(sim.cell_start).nonzero()[0]) == [9, 71]
    with pytest.raises(ValueError, match="outside"):
        sim.set_particles([[0.001, 0.009]], [[0.0, 0.0, 0.0]])


def test_keys_2d_flat_cell_index():
    pos = np.array([[0.0, 0.0], [0.99, 0.0], [0.0, 0.99], [1.0, 1.0], [0.26, 0.51]])
    key = np.zeros(5, dtype=np.int32)
    keys_2d(pos, 5, 1.0, 1.0, 4, 2, key)
    assert list(key) == [0, 3, 4, 7, 1 + 4 * 1]


def test_move_2d_keys_and_histogram_feed_the_counted_sort():
    """Over several histogram chunks (80 000 particles, 79 blocks): the keys move_2d writes
    are those of keys_2d, its per-chunk histogram is that of sort.histogram, and the counted
    sort leaves every particle in its cell."""
    from dsmc.kernels.sort import chunk_layout, histogram
    from dsmc.simulation import BLOCK_SIZE

    sim = Simulation(parse_case(box_case(CAVITY, cells=(20, 20), ppc=200)))
    p, g = sim.particles, sim.grid
    n_chunks = chunk_layout(p.n, BLOCK_SIZE, g.cells + 1)[0]
    assert n_chunks >= 2
    sim._move()
    moved = sim._hist[:n_chunks].copy()
    key = np.zeros(p.n, dtype=np.int32)
    keys_2d(p.pos, p.n, g.lx, g.ly, g.nx, g.ny, key)
    assert np.array_equal(key, p.key[: p.n])
    recount = np.zeros_like(sim._hist)
    histogram(p.key, p.n, g.cells + 1, BLOCK_SIZE, recount)
    assert np.array_equal(moved, recount[:n_chunks])
    sim._sort(counted=True)
    cell = np.repeat(np.arange(g.cells), np.diff(sim.cell_start))
    ix = np.minimum((sim.positions[:, 0] / g.dx).astype(int), g.nx - 1)
    iy = np.minimum((sim.positions[:, 1] / g.dy).astype(int), g.ny - 1)
    assert np.array_equal(cell, ix + g.nx * iy)
    centre_keys = np.zeros(g.cells, dtype=np.int32)
    keys_2d(g.centers, g.cells, g.lx, g.ly, g.nx, g.ny, centre_keys)
    assert np.array_equal(centre_keys, np.arange(g.cells))  # centres in flat cell order


# ---------------------------------------------------------------------------- invariants


@pytest.mark.parametrize("dt_factor", [1.0, 40.0])
def test_random_box_invariants(dt_factor):
    """Random wall models and speeds, normal and very long time steps (many hits per step):
    no particle outside the box, the count kept, everything finite; and with four specular
    walls the kinetic energy is kept to round-off."""
    rng = np.random.default_rng(11)
    models = ['model = "diffuse"\ntemperature = 350.0',
              'model = "maxwell"\naccommodation = 0.4',
              'model = "cll"\nnormal_accommodation = 0.3\ntangential_accommodation = 0.6',
              SPECULAR]
    walls = {}
    for k, side in enumerate(("xmin", "xmax", "ymin", "ymax")):
        m = models[rng.integers(len(models))]
        speed = rng.uniform(-200, 200)
        vel = [0.0, speed, 0.0] if k < 2 else [speed, 0.0, 0.0]
        walls[side] = m + ("" if m == SPECULAR else f"\nvelocity = {vel!r}")
    base = Simulation(parse_case(box_case(walls, ppc=10)))
    dt = base.dt * dt_factor
    for wall_set in (walls, {s: SPECULAR for s in walls}):
        sim = Simulation(parse_case(box_case(wall_set, ppc=10, time_step=dt)))
        n0 = sim.n_particles
        e0 = float(np.sum(sim.velocities ** 2))
        sim.advance(30)
        pos = sim.positions
        assert sim.n_particles == n0
        assert np.all(np.isfinite(pos)) and np.all(np.isfinite(sim.velocities))
        assert np.all(pos >= 0.0) and np.all(pos[:, 0] <= 0.01) and np.all(pos[:, 1] <= 0.008)
        counts = np.diff(sim.cell_start)
        assert counts.sum() == n0
        if wall_set is not walls:
            e1 = float(np.sum(sim.velocities ** 2))
            assert abs(e1 - e0) / e0 < 1e-12


def test_periodic_box_conserves_momentum_and_energy():
    """Periodic on both axes: only collisions change velocities, and they conserve momentum
    and energy (round-off)."""
    sim = Simulation(parse_case(box_case({s: PERIODIC for s in ("xmin", "xmax", "ymin", "ymax")},
                                         ppc=20)))
    p0 = sim.velocities.sum(axis=0)
    e0 = float(np.sum(sim.velocities ** 2))
    scale = np.sqrt(e0 / sim.n_particles) * sim.n_particles
    sim.advance(40)
    assert np.all(np.abs(sim.velocities.sum(axis=0) - p0) < 1e-12 * scale)
    assert abs(float(np.sum(sim.velocities ** 2)) - e0) / e0 < 1e-12


# ---------------------------------------------------------------------------- equilibrium


def test_equilibrium_box_pressure_and_wall_flux():
    """Diffuse walls at the gas temperature: each side's pressure is n k T and its number flux
    n sqrt(kT / (2 pi m)) (Bird 1994 eq. 4.22, zero drift), n = N W / V of the run."""
    wall = 'model = "diffuse"\ntemperature = 300.0'
    sim = Simulation(parse_case(box_case({s: wall for s in ("xmin", "xmax", "ymin", "ymax")},
                                         ppc=40, transient=50, samples=1600, batches=16)))
    sim.run()
    n = sim.n_particles * sim.weight / sim.grid.volume
    m = sim.mass[0]
    p_ref = n * K_B * 300.0
    flux_ref = n * np.sqrt(K_B * 300.0 / (2.0 * np.pi * m))
    for side, w in zip(sim.grid.sides, sim.wall_fields()):
        p, p_se = w["pressure"]
        f, f_se = w["number_flux"]
        assert p_se < 0.01 * p_ref and f_se < 0.01 * flux_ref, side
        assert abs(p - p_ref) < 4.0 * p_se, (side, p, p_ref, p_se)
        assert abs(f - flux_ref) < 4.0 * f_se, (side, f, flux_ref, f_se)


def test_free_molecular_box_between_y_walls_matches_the_exact_solution():
    """Kn ~ 200: the exact collisionless two-stream solution between Maxwell plates
    (:func:`dsmc.analysis.limits.free_molecular`) for the wall shear, heat fluxes and pressure,
    with the plates as the ymin / ymax sides of a box periodic in x.  Tolerance 2 %, with
    standard errors below 0.5 % (4 s.e.), as for the 1-D slab in tests/test_gap_limits.py."""
    from dsmc.analysis import limits

    T1, T2, u1, u2, a1, a2 = 400.0, 250.0, -100.0, 200.0, 0.8, 0.5
    walls = {"xmin": PERIODIC, "xmax": PERIODIC,
             "ymin": f'model = "maxwell"\naccommodation = {a1}\ntemperature = {T1}\n'
                     f'velocity = [{u1}, 0.0, 0.0]',
             "ymax": f'model = "maxwell"\naccommodation = {a2}\ntemperature = {T2}\n'
                     f'velocity = [{u2}, 0.0, 0.0]'}
    text = box_case(walls, length=(2e-4, 1e-3), cells=(2, 10), pressure=0.025, ppc=100,
                    transient=400, samples=32000, batches=20, seed=101)
    text = text.replace("temperature = 300.0", f"temperature = {0.5 * (T1 + T2)}", 1)
    sim = Simulation(parse_case(text))
    sim.run()
    n_avg = sim.n_particles * sim.weight / sim.grid.volume
    fm = limits.free_molecular(sim.mass[0], n_avg, T1, T2, u1, u2, a1, a2)
    w = sim.wall_fields()
    tau_lo, tau_lo_se = w[2]["shear_stress"][0][0], w[2]["shear_stress"][1][0]
    tau_hi, tau_hi_se = w[3]["shear_stress"][0][0], w[3]["shear_stress"][1][0]
    for dsmc, se in ((-tau_lo, tau_lo_se), (tau_hi, tau_hi_se)):
        assert se < 0.005 * abs(fm.tau)
        assert abs(dsmc - fm.tau) < 0.02 * abs(fm.tau), (dsmc, fm.tau)
    scale = max(abs(fm.q_wall1), abs(fm.q_wall2))
    for dsmc, se, exact in ((-w[2]["heat_flux"][0], w[2]["heat_flux"][1], fm.q_wall1),
                            (w[3]["heat_flux"][0], w[3]["heat_flux"][1], fm.q_wall2)):
        assert se < 0.005 * scale
        assert abs(dsmc - exact) < 0.02 * scale, (dsmc, exact)
    p, p_se = w[2]["pressure"]
    assert p_se < 0.005 * fm.p_xx and abs(p - fm.p_xx) < 0.02 * fm.p_xx, (p, fm.p_xx)


# ---------------------------------------------------------------------------- Couette vs 1-D

U = 100.0  # m/s, wall speed
GAP = 0.01  # m; at 2 Pa argon lambda ~ 2.8 mm, Kn ~ 0.3
NY = 20


def _couette_1d(samples=3000, ppc=200):
    text = f"""
[gas]
species = "Ar"
temperature = 300.0
pressure = 2.0
[domain]
length = {GAP!r}
cells = {NY}
[boundary.xmin]
model = "diffuse"
velocity = [0.0, {-U!r}, 0.0]
[boundary.xmax]
model = "diffuse"
velocity = [0.0, {U!r}, 0.0]
[numerics]
particles_per_cell = {ppc}
[run]
seed = 5
transient_steps = 400
sample_steps = {samples}
batches = 15
"""
    sim = Simulation(parse_case(text))
    sim.run()
    return sim


def _couette_2d(samples=3000, ppc=50):
    walls = {"xmin": PERIODIC, "xmax": PERIODIC,
             "ymin": f'model = "diffuse"\nvelocity = [{-U!r}, 0.0, 0.0]',
             "ymax": f'model = "diffuse"\nvelocity = [{U!r}, 0.0, 0.0]'}
    sim = Simulation(parse_case(box_case(walls, length=(0.004, GAP), cells=(4, NY), pressure=2.0,
                                         ppc=ppc, transient=400, samples=samples, batches=15,
                                         seed=6)))
    sim.run()
    return sim


def _profile_and_error(per_batch):
    per_batch = np.asarray(per_batch)
    return per_batch.mean(axis=0), per_batch.std(axis=0, ddof=1) / np.sqrt(per_batch.shape[0])


def test_couette_2d_periodic_matches_1d():
    """Same gap, gas and walls: the 2-D box (gap in y, periodic x) and the 1-D slab (gap in x)
    give the same wall shear stress and velocity profile within their standard errors."""
    one, two = _couette_1d(), _couette_2d()
    # wall shear: mean of the two walls' tangential stress (antisymmetric by symmetry)
    b1 = [0.5 * (w0 - w1) for w0, w1 in zip(*_wall_shear(one, 0, 1, 1))]
    b2 = [0.5 * (w0 - w1) for w0, w1 in zip(*_wall_shear(two, 2, 3, 0))]
    t1, s1 = _profile_and_error(b1)
    t2, s2 = _profile_and_error(b2)
    assert s1 < 0.02 * abs(t1) and s2 < 0.02 * abs(t2)
    assert abs(t2 - t1) < 4.0 * np.hypot(s1, s2), (t1, s1, t2, s2)
    # velocity profiles: u_y(x) of the slab, column mean of u_x(y) in the box
    u1, e1 = _profile_and_error([f["velocity"][:, 1] for f in one.batch_fields()])
    u2, e2 = _profile_and_error([f["velocity"][:, 0].reshape(NY, 4).mean(axis=1)
                                 for f in two.batch_fields()])
    assert np.all(e1 < 0.03 * U) and np.all(e2 < 0.03 * U)
    z = (u2 - u1) / np.hypot(e1, e2)
    assert np.max(np.abs(z)) < 4.5, z  # 20 cells: P(max |z| > 4.5) ~ 1e-4 for normal errors
    assert u1[-1] > 0.3 * U and u2[-1] > 0.3 * U  # the profile is really sheared


def test_couette_between_x_walls_with_specular_y_sides_matches_1d():
    """Specular sides are symmetry planes: walls xmin / xmax sliding in z with specular ymin /
    ymax give the 1-D slab's Couette flow (the slab's walls slide in y; by the symmetry of the
    gas the stress does not depend on the in-plane direction of sliding)."""
    one = _couette_1d()
    walls = {"xmin": f'model = "diffuse"\nvelocity = [0.0, 0.0, {-U!r}]',
             "xmax": f'model = "diffuse"\nvelocity = [0.0, 0.0, {U!r}]',
             "ymin": SPECULAR, "ymax": SPECULAR}
    two = Simulation(parse_case(box_case(walls, length=(GAP, 0.004), cells=(NY, 4), pressure=2.0,
                                         ppc=50, transient=400, samples=3000, batches=15,
                                         seed=8)))
    two.run()
    t1, s1 = _profile_and_error([0.5 * (a - b) for a, b in zip(*_wall_shear(one, 0, 1, 1))])
    t2, s2 = _profile_and_error([0.5 * (a - b) for a, b in zip(*_wall_shear(two, 0, 1, 2))])
    assert s1 < 0.02 * abs(t1) and s2 < 0.02 * abs(t2)
    assert abs(t2 - t1) < 4.0 * np.hypot(s1, s2), (t1, s1, t2, s2)
    u1, e1 = _profile_and_error([f["velocity"][:, 1] for f in one.batch_fields()])
    u2, e2 = _profile_and_error([f["velocity"][:, 2].reshape(4, NY).mean(axis=0)
                                 for f in two.batch_fields()])
    z = (u2 - u1) / np.hypot(e1, e2)
    assert np.max(np.abs(z)) < 4.5, z
    # the specular sides take no shear and see no mean y or z force
    w = two.wall_fields()
    for side in (2, 3):
        tau, se = w[side]["shear_stress"]
        assert np.all(np.abs(tau) <= 1e-12 * w[side]["pressure"][0])


def _wall_shear(sim, lo, hi, comp):
    """Per-batch tangential shear component ``comp`` on the sides ``lo``, ``hi``."""
    from dsmc import stats

    out = ([], [])
    for b in sim._closed_batches():
        for k, w in enumerate((lo, hi)):
            f = stats.wall_fields(b.walls[w], b.steps * sim.dt, sim.weight,
                                  sim.grid.side_areas[w], sim.grid.normals[w], sim.walls[w, 2:5])
            out[k].append(f["shear_stress"][comp])
    return out


def test_steady_cavity_wall_forces_and_energy_balance():
    """A steady lid-driven cavity neither gains momentum nor energy, so the forces of the gas
    on its four walls add up to zero and the energy the walls receive (lab frame) too: the
    lid's shear work equals the heat into all walls (integral conservation over a steady
    control volume).  Checked per batch, within four batch-means standard errors."""
    lid = 'model = "diffuse"\nvelocity = [100.0, 0.0, 0.0]'
    walls = {"xmin": DIFFUSE, "xmax": DIFFUSE, "ymin": DIFFUSE, "ymax": lid}
    sim = Simulation(parse_case(box_case(walls, length=(1e-5, 1e-5), cells=(10, 10),
                                         pressure=2700.0, ppc=40, transient=2000, samples=8000,
                                         batches=16, seed=12)))
    sim.run()
    force, energy, work = [], [], []
    for b in sim._closed_batches():
        # wall accumulators: momentum and energy given to each wall, per unit time (W per m)
        rate = b.walls * sim.weight / (b.steps * sim.dt)
        force.append(rate[:, 1:3].sum(axis=0))
        energy.append(rate[:, 4].sum())
        work.append(-rate[3, 1] * 100.0)  # power the lid puts into the gas
    f, f_se = _profile_and_error(force)
    e, e_se = _profile_and_error(energy)
    w, _ = _profile_and_error(work)
    lid_force = abs(float(np.mean([r for r in np.array(work) / 100.0])))
    assert np.all(f_se < 0.02 * lid_force) and e_se < 0.05 * w
    assert np.all(np.abs(f) < 4.0 * f_se), (f, f_se, lid_force)
    assert abs(e) < 4.0 * e_se, (e, e_se, w)


# ---------------------------------------------------------------------------- reproducibility

CAVITY = {"xmin": DIFFUSE, "xmax": 'model = "maxwell"\naccommodation = 0.7', "ymin": DIFFUSE,
          "ymax": 'model = "diffuse"\nvelocity = [120.0, 0.0, 0.0]'}
# every kind of open side, with walls: injection streams, per-face remainders and drifts
OPEN_BOX = {"xmin": 'model = "inflow"\nvelocity = [300.0, -120.0, 40.0]',
            "xmax": 'model = "pressure"\npressure = 0.8',
            "ymin": 'model = "outflow"',
            "ymax": 'model = "diffuse"\nvelocity = [120.0, 0.0, 0.0]'}


def _cavity(threads, seed=9, walls=CAVITY, ppc=100):
    old = numba.get_num_threads()
    numba.set_num_threads(threads)
    try:
        # 8000 particles (eight random-stream blocks), a long time step: many wall hits
        sim = Simulation(parse_case(box_case(walls, cells=(10, 8), ppc=ppc, transient=20,
                                             samples=40, batches=2, seed=seed)))
        sim.run()
    finally:
        numba.set_num_threads(old)
    return sim


def _same(a, b):
    assert np.array_equal(a.positions, b.positions)
    assert np.array_equal(a.velocities, b.velocities)
    fa, fb = a.fields(), b.fields()
    for k in fa:
        assert np.array_equal(fa[k][0], fb[k][0], equal_nan=True), k
    for wa, wb in zip(a.wall_fields(), b.wall_fields()):
        for k in wa:
            assert np.array_equal(wa[k][0], wb[k][0]), k
    for fa, fb in zip(a.open_side_fluxes(), b.open_side_fluxes()):
        assert (fa is None) == (fb is None)
        for k in fa or {}:
            assert np.array_equal(fa[k][0], fb[k][0]), k
    assert np.array_equal(a.local_drift, b.local_drift)
    assert np.array_equal(a.inject_remainder, b.inject_remainder)


def test_same_seed_same_2d_run_and_other_seed_differs():
    a = _cavity(1)
    _same(a, _cavity(1))
    assert not np.array_equal(a.velocities, _cavity(1, seed=10).velocities)


@pytest.mark.skipif(numba.config.NUMBA_NUM_THREADS < 2, reason="needs two threads")
@pytest.mark.parametrize("walls", [CAVITY, OPEN_BOX], ids=["walls", "open sides"])
def test_2d_thread_count_does_not_change_the_result(walls):
    # the open box: 80 000 particles, so that the move kernel's chunks (and their lists of
    # removed particles) are shared between the threads
    ppc = 100 if walls is CAVITY else 1000
    a, b = _cavity(1, walls=walls, ppc=ppc), _cavity(2, walls=walls, ppc=ppc)
    if walls is OPEN_BOX:
        from dsmc.kernels.sort import chunk_layout
        from dsmc.simulation import BLOCK_SIZE

        assert chunk_layout(a.n_particles, BLOCK_SIZE, a.grid.cells + 1)[0] >= 2
        assert a.open_side_fluxes()[2]["outflow_number_flux"][0] > 0
    _same(a, b)


@pytest.mark.parametrize("walls", [CAVITY, OPEN_BOX], ids=["walls", "open sides"])
def test_2d_checkpoint_state_resumes_bit_identically(walls):
    text = box_case(walls, ppc=20, transient=20, samples=40, batches=2)
    full = Simulation(parse_case(text))
    full.run()
    part = Simulation(parse_case(text))
    part.run(stop=lambda: part.step_count == 30)
    resumed = Simulation(parse_case(text))
    resumed.restore(part.state())
    resumed.run()
    _same(full, resumed)


def test_2d_steady_state_detection_and_target_error_stop():
    """The schedule's steady-state monitor (hits, momentum, energy of every side, gas kinetic
    energy) and the target-error stop work on four sides."""
    text = box_case(CAVITY, ppc=20, transient=3000, samples=4000, batches=20)
    text = text.replace("batches = 20", 'batches = 20\nsteady_state = "auto"\nmonitor_window = 50\n'
                                        "target_error = 0.05")
    sim = Simulation(parse_case(text))
    sim.run()
    assert sim.windows and len(sim.windows[0]) == 4 * 4 + 1
    assert sim.steady_detected and sim.transient_end_step < 3000
    assert sim.stop_reason in ("target_error", "sample_steps")


def test_memory_estimate_counts_the_2d_particle_arrays():
    """dsmc/resources.py: a 2-D slot holds one more coordinate (and its sort scratch copy)."""
    from dsmc import resources

    c = parse_case(box_case(CAVITY, ppc=23.5))
    sim = Simulation(c)
    p = sim.particles
    assert p.nbytes() == (resources.PARTICLE_ARRAYS + 16) * p.capacity
    assert resources.PLANAR_EXTRA_BYTES == 16 + 2 * N_WALL_ACC * 8 / resources.BLOCK_SIZE
    state = sim.state()
    assert sum(state[k].nbytes for k in ("pos", "v", "sp", "erot", "vib")) == (
        (resources.COPY_BYTES_PER_PARTICLE + resources.PLANAR_EXTRA_COPY_BYTES) * sim.n_particles)
    est = resources.estimate(c)
    assert est.cells == 80 and est.particles == int(np.ceil(23.5 * 80))


# ---------------------------------------------------------------------------- output


def test_result_file_and_xdmf_sidecar(tmp_path):
    sim = Simulation(parse_case(box_case(CAVITY, ppc=10, transient=10, samples=20, batches=2)))
    sim.run()
    out = write_results(tmp_path / "cavity.h5", result_tree(sim))
    xmf = write_xdmf(out)
    assert xmf == tmp_path / "cavity.xmf"
    with h5py.File(out) as f:
        assert f.attrs["dimension"] == 2
        assert f["fields/temperature"].shape == (8, 10)
        assert f["fields/velocity"].shape == (8, 10, 3)
        assert set(f["walls"]) == {"xmin", "xmax", "ymin", "ymax"}
        assert f["walls/ymax/area"][()] == pytest.approx(0.01)
        # cell (ix, iy) of the file is flat cell ix + nx * iy of the run
        t = sim.fields()["temperature"][0]
        assert f["fields/temperature"][3, 7] == t[7 + 10 * 3]
        root = ET.parse(xmf).getroot()
        assert root.tag == "Xdmf" and root.get("Version") == "3.0"
        grid = root.find("Domain/Grid")
        assert grid.find("Topology").get("TopologyType") == "2DRectMesh"
        assert grid.find("Topology").get("Dimensions") == "9 11"
        geo = [i.text for i in grid.find("Geometry").findall("DataItem")]
        assert grid.find("Geometry").get("GeometryType") == "VXVY"
        assert geo == ["cavity.h5:/grid/x_edges", "cavity.h5:/grid/y_edges"]
        names = set()
        for att in grid.findall("Attribute"):
            assert att.get("Center") == "Cell"
            item = att.find("DataItem")
            file, path = item.text.split(":")
            assert file == "cavity.h5"
            dims = tuple(int(d) for d in item.get("Dimensions").split())
            assert f[path].shape == dims
            names.add(att.get("Name"))
        assert {"temperature", "velocity", "number_density", "pressure"} <= names


def test_plot_2d_writes_a_png_and_the_1d_plot_refuses(tmp_path):
    import os
    import subprocess
    import sys
    from pathlib import Path

    tools = Path(__file__).resolve().parents[1] / "tools"
    sim = Simulation(parse_case(box_case(CAVITY, ppc=10, transient=10, samples=20, batches=2)))
    sim.run()
    res = write_results(tmp_path / "cavity.h5", result_tree(sim))
    env = dict(os.environ, MPLBACKEND="Agg")
    done = subprocess.run([sys.executable, str(tools / "plot_2d.py"), str(res), "--field",
                           "pressure"], env=env, capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    png = res.with_suffix(".png")
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" and png.stat().st_size > 10_000
    done = subprocess.run([sys.executable, str(tools / "plot_2d.py"), str(res), "--field",
                           "velocity"], env=env, capture_output=True, text=True, timeout=120)
    assert done.returncode == 2 and done.stderr.count("\n") == 1, done.stderr
    done = subprocess.run([sys.executable, str(tools / "plot_profiles.py"), str(res)], env=env,
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 2 and "plot it with tools/plot_2d.py" in done.stderr


def test_docs_2d_reading_example_runs_on_a_real_file(tmp_path, capsys):
    import re
    from pathlib import Path

    doc = (Path(__file__).resolve().parents[1] / "docs" / "output.md").read_text()
    example = next(b for b in re.findall(r"```python\n(.*?)```", doc, flags=re.S)
                   if 'h5py.File("cavity.h5"' in b)
    sim = Simulation(parse_case(box_case(CAVITY, ppc=10, transient=10, samples=20, batches=2)))
    sim.run()
    res = write_results(tmp_path / "cavity.h5", result_tree(sim))
    exec(compile(example.replace("cavity.h5", str(res)), "docs/output.md", "exec"), {})
    out = capsys.readouterr().out
    t = sim.fields()["temperature"][0][5 + 10 * 4]  # ix = nx // 2, iy = ny // 2
    assert out.startswith(f"T at the centre {t:.2f} K, lid shear ")


# ---------------------------------------------------------------------------- case errors


@pytest.mark.parametrize("change, where", [
    (('[boundary.ymax]\nmodel = "specular"',
      '[boundary.ymax]\nmodel = "outflow"\ntemperature = 300.0'),
     "boundary.ymax.temperature"),
    (('[boundary.ymin]\nmodel = "specular"', '[boundary.ymin]\nmodel = "periodic"'),
     "boundary"),
    (('[boundary.ymin]\nmodel = "specular"',
      '[boundary.ymin]\nmodel = "diffuse"\nvelocity = [0.0, 5.0, 0.0]'),
     "boundary.ymin.velocity"),
    (("cells = [10, 8]", "cells = [10, 8, 2]"), "domain.cells"),
    (("cells = [10, 8]", "cells = [10, 0]"), "domain.cells"),
    (("length = [0.01, 0.008]", "length = [0.01, -1.0]"), "domain.length"),
])
def test_2d_case_errors_are_one_line(change, where):
    text = box_case({s: SPECULAR for s in ("xmin", "xmax", "ymin", "ymax")})
    assert change[0] in text
    with pytest.raises(CaseError) as info:
        parse_case(text.replace(change[0], change[1], 1), "box.toml")
    msg = str(info.value)
    assert "\n" not in msg and msg.startswith(f"box.toml: {where}"), msg


# ---------------------------------------------------------------------------- command line


def test_dsmc_run_writes_results_and_sidecar_and_compare_refuses(tmp_path, capsys):
    from dsmc.cli import main

    case = tmp_path / "pocket.toml"
    case.write_text(box_case(CAVITY, ppc=10, transient=10, samples=20, batches=2))
    assert main(["check", str(case)]) == 0
    assert ("2-D box 0.01 m x 0.008 m (unit depth), 10 x 8 cells; sides xmin diffuse, xmax "
            "maxwell, ymin diffuse, ymax diffuse") in capsys.readouterr().out
    out = tmp_path / "pocket.h5"
    assert main(["run", str(case), "-o", str(out), "--quiet"]) == 0
    assert out.exists() and (tmp_path / "pocket.xmf").exists()
    capsys.readouterr()
    assert main(["compare", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.strip() == (f"dsmc: error: {out}: a 2-D result file; the gap limits are for a "
                           "1-D slab")
    assert main(["sweep", str(case), "--pressures", "1,2", "--out", str(tmp_path / "sw")]) == 2
    err = capsys.readouterr().err
    assert len(err.splitlines()) == 1 and "a Knudsen sweep is of 1-D gaps" in err
