"""Embedded bodies in a 2-D box: free-molecular loads, equilibrium, invariants, output.

Outside references:

* free-molecular drag of a circular cylinder with diffuse walls (closed form with the modified
  Bessel functions I0, I1; Bird 1994, Molecular Gas Dynamics and the Direct Simulation of Gas
  Flows, ch. 7, from memory) and drag and lift of a flat plate at incidence with Maxwell walls
  (Bird 1994 ch. 7; Schaaf and Chambre 1958, from memory), as coded and checked against
  quadrature in :mod:`dsmc.analysis.free_molecular` (tests/test_free_molecular.py); the closed
  forms are also recomputed here with scipy.special for the cylinder;
* a gas in equilibrium at rest pushes on any surface with p = n k T and exerts no shear and no
  net heat flux (standard kinetic theory), k from scipy.constants;
* cut-cell volumes add up to the box minus the exact body areas (pi R^2, shoelace area).

The free-molecular runs use a gas so thin (Knudsen number about 1000 on the body size) that
collisions change the loads by far less than the 2 % tolerance; every side is an inflow of the
freestream, so the body sees the undisturbed freestream and its own re-emitted molecules leave.
"""

from __future__ import annotations

import math
import re
import xml.etree.ElementTree as ET

import h5py
import numba
import numpy as np
import pytest
from scipy import constants, special

from conftest import ROOT, one_error_line
from dsmc.analysis import free_molecular as fm
from dsmc.case import parse_case
from dsmc.cli import main
from dsmc.errors import CaseError
from dsmc.io.results import write_results
from dsmc.io.xdmf import write_xdmf
from dsmc.kernels.bodies import mark_inside
from dsmc.simulation import Simulation, result_tree
from tests.test_planar_2d import _one_thread  # noqa: F401 (one kernel thread, autouse)

K_B = constants.k


def case_text(bodies: str, *, sides=("inflow",) * 4, length=(0.02, 0.02), cells=(24, 24),
              number_density=1e17, temperature=300.0, velocity=(800.0, 0.0, 0.0), ppc=20,
              transient=100, samples=2000, batches=10, seed=5) -> str:
    text = f"""
[gas]
species = "Ar"
temperature = {temperature!r}
number_density = {number_density!r}
velocity = [{velocity[0]!r}, {velocity[1]!r}, {velocity[2]!r}]
[domain]
length = [{length[0]!r}, {length[1]!r}]
cells = [{cells[0]}, {cells[1]}]
"""
    for side, model in zip(("xmin", "xmax", "ymin", "ymax"), sides):
        text += f'[boundary.{side}]\nmodel = "{model}"\n'
    return text + bodies + f"""
[numerics]
particles_per_cell = {ppc}
[run]
seed = {seed}
transient_steps = {transient}
sample_steps = {samples}
batches = {batches}
"""


def _no_particle_inside(sim):
    t = sim.bodies
    out = np.zeros(sim.n_particles, dtype=np.bool_)
    mark_inside(sim.positions, sim.n_particles, t.elem, t.box, t.first, out)
    return int(out.sum())


def _run_checked(sim, steps, batches):
    """Run the sampling phase by hand, checking after every step that no particle is inside a
    body or outside the box."""
    lx, ly = sim.grid.extent
    sim.reset_samples()
    for _ in range(batches):
        for _ in range(steps // batches):
            sim.step(sample=True)
            p = sim.positions
            assert _no_particle_inside(sim) == 0
            assert p.min() >= 0.0 and np.all(p[:, 0] <= lx) and np.all(p[:, 1] <= ly)
        sim.close_batch()


def _deviation(value, err, ref):
    return (value - ref) / ref, err / abs(ref)


# ------------------------------------------------------------------ free-molecular loads


def test_free_molecular_cylinder_drag():
    """Cylinder, diffuse wall at 500 K in a 300 K argon stream at 800 m/s (s = 2.27): CD
    against the exact free-molecular value within 2 % and 4 standard errors."""
    body = """
[[body]]
name = "wire"
shape = "circle"
center = [0.01, 0.01]
radius = 0.002
model = "diffuse"
temperature = 500.0
panels = 36
"""
    sim = Simulation(parse_case(case_text(body)))
    sim.advance(100)
    _run_checked(sim, 2000, 10)
    f = sim.body_fields()[0]
    cd, err = f["drag_coefficient"]
    s = 800.0 / math.sqrt(2 * K_B * 300.0 / sim.mass[0])
    exact = fm.cylinder(s, 300.0, 500.0).CD
    # the closed form (Bird 1994 ch. 7, from memory) with scipy's Bessel functions
    x = s * s / 2
    bird = (math.sqrt(math.pi) / s * math.exp(-x) * ((s * s + 1.5) * special.iv(0, x)
                                                    + (s * s + 0.5) * special.iv(1, x))
            + math.pi ** 1.5 / (4 * s) * math.sqrt(500.0 / 300.0))
    assert exact == pytest.approx(bird, rel=1e-12)
    dev, rel_err = _deviation(cd, err, exact)
    print(f"cylinder CD {cd:.5f} +- {err:.5f} against {exact:.5f} ({100 * dev:+.2f} %)")
    assert rel_err < 0.005  # the check means something
    assert abs(dev) < 0.02 and abs(dev) < 4 * rel_err, (cd, err, exact)
    # symmetric body in a stream along x: no lift
    cl, cl_err = f["lift_coefficient"]
    assert abs(cl) < 4 * cl_err + 1e-3
    # the whole-body force agrees with the sum over the panels of (-p n + tau t) * length
    p = sim.bodies.panels
    t = p.tangent
    fx = np.sum(p.length * (-f["pressure"][0] * p.normal[:, 0] + f["shear_stress"][0] * t[:, 0]))
    assert fx == pytest.approx(f["force"][0][0], rel=1e-10)


@pytest.mark.parametrize("incidence_deg,accommodation", [(30.0, 1.0), (15.0, 0.8)])
def test_free_molecular_flat_plate_at_incidence(incidence_deg, accommodation):
    """A thin plate (1 % thick) at incidence, faces only: drag and lift coefficients against
    the exact free-molecular flat plate (zero thickness: the faces of a convex plate see only
    the freestream, so the edges change nothing on them) within 2 % and 4 standard errors."""
    a = math.radians(incidence_deg)
    c, th = 0.008, 0.00008
    e = np.array([math.cos(a), -math.sin(a)])  # chord direction, nose up: the plate meets the flow at +a
    nrm = np.array([math.sin(a), math.cos(a)])
    mid = np.array([0.01, 0.01])
    lead = mid - 0.5 * c * e
    pts = [lead, lead + c * e, lead + c * e + th * nrm, lead + th * nrm]
    verts = ", ".join(f"[{float(x)!r}, {float(y)!r}]" for x, y in pts)
    model = ('model = "diffuse"' if accommodation == 1.0 else
             f'model = "maxwell"\naccommodation = {accommodation!r}')
    body = f"""
[[body]]
name = "plate"
shape = "polygon"
vertices = [{verts}]
{model}
panels = 42
reference_length = {c!r}
"""
    sim = Simulation(parse_case(case_text(body, samples=6000, batches=12)))
    sim.advance(100)
    _run_checked(sim, 6000, 12)
    f = sim.body_fields()[0]
    p = sim.bodies.panels
    faces = np.abs(p.normal @ nrm) > 0.99  # the two long faces' panels (21 each)
    assert faces.sum() == 42 and p.length.size == 44
    fs = sim.freestream()
    q = 0.5 * fs["mass_density"] * fs["speed"] ** 2

    def coefficients(fields):
        t = p.tangent
        F = np.sum(p.length[faces, None] * (-fields["pressure"][faces, None] * p.normal[faces]
                                            + fields["shear_stress"][faces, None] * t[faces]), axis=0)
        return F[0] / (q * c), F[1] / (q * c)  # stream along +x: drag along x, lift along y

    cd, cl = coefficients({k: v[0] for k, v in f.items()})
    per = np.array([coefficients(b) for b in _batch_panel_fields(sim)])
    cd_err, cl_err = per.std(axis=0, ddof=1) / math.sqrt(len(per))
    s = fs["speed"] / math.sqrt(2 * K_B * 300.0 / sim.mass[0])
    ref = fm.flat_plate(s, a, 300.0, 300.0, accommodation)
    for got, err, exact in ((cd, cd_err, ref.CD), (cl, cl_err, ref.CL)):
        dev, rel_err = _deviation(got, err, exact)
        print(f"plate {incidence_deg} deg, a = {accommodation}: {got:.5f} +- {err:.5f} against "
              f"{exact:.5f} ({100 * dev:+.2f} % +- {100 * rel_err:.2f} %)")
        assert rel_err < 0.006
        assert abs(dev) < 0.02 and abs(dev) < 4 * rel_err, (got, err, exact)


def _batch_panel_fields(sim):
    from dsmc import stats

    p = sim.bodies.panels
    return [stats.panel_fields(b.surfaces, b.steps * sim.dt, sim.weight, p.length, p.normal)
            for b in sim._closed_batches()]


# ------------------------------------------------------------------ equilibrium and invariants

def bodies(unit: float) -> str:
    """A concave L-shaped 'hook' (area 8 unit^2) and a circular 'pin' (radius 1.3 unit)."""
    hook = [[2, 2], [7, 2], [7, 3], [3, 3], [3, 6], [2, 6]]
    verts = ", ".join(f"[{x * unit!r}, {y * unit!r}]" for x, y in hook)
    return f"""
[[body]]
name = "hook"
shape = "polygon"
vertices = [{verts}]
model = "maxwell"
accommodation = 0.7
panels = 30
[[body]]
name = "pin"
shape = "circle"
center = [{7.3 * unit!r}, {7.1 * unit!r}]
radius = {1.3 * unit!r}
model = "cll"
normal_accommodation = 0.5
tangential_accommodation = 0.6
panels = 24
"""


def bodies_area(unit: float) -> float:
    return 8.0 * unit ** 2 + math.pi * (1.3 * unit) ** 2


def closed_box(seed=7, samples=1200, batches=8, sides=("diffuse", "diffuse", "periodic", "periodic")):
    return parse_case(case_text(bodies(1e-6), sides=sides, length=(1e-5, 1e-5), cells=(16, 16),
                                number_density=4e23, velocity=(0.0, 0.0, 0.0), ppc=30,
                                transient=200, samples=samples, batches=batches, seed=seed))


def test_equilibrium_gas_pushes_n_k_T_on_bodies_and_no_particle_gets_in():
    """A closed box at 300 K (diffuse x walls, periodic in y: bodies near a periodic side)
    with a concave polygon and a circle at the gas temperature, Kn about 0.3: every panel
    feels p = n k T (n the mean gas density), no mean shear, no mean heat flux; after every
    step no particle is inside a body or outside the box."""
    sim = Simulation(closed_box())
    assert sim.volume.sum() == pytest.approx(sim.grid.volume, rel=1e-10)
    assert sim.grid.volume == pytest.approx(1e-10 - bodies_area(1e-6), rel=1e-12)
    sim.advance(200)
    _run_checked(sim, 1200, 8)
    n = sim.n_particles * sim.weight / sim.grid.volume
    p_ref = n * K_B * 300.0
    for f in sim.body_fields():
        p, p_err = f["pressure"]
        mean_p = np.mean(p)
        err_p = math.sqrt(np.sum(p_err ** 2)) / p.size
        assert abs(mean_p - p_ref) < 4 * err_p + 1e-3 * p_ref, (mean_p, err_p, p_ref)
        assert err_p < 0.01 * p_ref
        tau, tau_err = f["shear_stress"]
        assert abs(np.mean(tau)) < 4 * math.sqrt(np.sum(tau_err ** 2)) / tau.size + 1e-3 * p_ref
        q, q_err = f["heat_flux"]
        assert abs(np.mean(q)) < 4 * math.sqrt(np.sum(q_err ** 2)) / q.size + 1e-6 * p_ref * 300


def test_bodies_run_is_bit_identical_for_one_and_two_threads_and_resumes():
    """Thread count does not change a run with bodies; state() / restore() continues it
    bit-identically (panel sums included)."""
    def run(threads, split=None):
        old = numba.get_num_threads()
        numba.set_num_threads(threads)
        try:
            sim = Simulation(closed_box(seed=11, samples=120, batches=4))
            if split is None:
                sim.run()
                return sim
            for _ in range(split):
                sim._schedule_step()
            st = sim.state()
            sim = Simulation(closed_box(seed=11, samples=120, batches=4))
            sim.restore(st)
            sim.run()
            return sim
        finally:
            numba.set_num_threads(old)

    a = run(1)
    others = [run(1, split=250)]
    if numba.config.NUMBA_NUM_THREADS >= 2:
        others.append(run(2))
    for b in others:
        assert np.array_equal(a.positions, b.positions)
        assert np.array_equal(a.velocities, b.velocities)
        for fa, fb in zip(a.body_fields(), b.body_fields()):
            for k in fa:
                assert np.array_equal(fa[k][0], fb[k][0]), k


def test_result_file_has_bodies_and_freestream(tmp_path):
    sim = Simulation(parse_case(case_text(bodies(1e-3), samples=40, batches=2, transient=0)))
    sim.run()
    out = tmp_path / "r.h5"
    write_results(out, result_tree(sim))
    with h5py.File(out) as f:
        assert f["freestream/speed"][()] == pytest.approx(800.0)
        assert f["freestream/speed"].attrs["units"] == "m/s"
        hook, pin = f["bodies/hook"], f["bodies/pin"]
        assert hook.attrs["shape"] == "polygon" and pin.attrs["shape"] == "circle"
        assert hook["vertices"].shape == (6, 2) and pin["radius"][()] == pytest.approx(0.0013)
        for g in (hook, pin):
            P = g.attrs["panels"]
            for name, unit in (("pressure", "Pa"), ("shear_stress", "Pa"),
                               ("heat_flux", "W/m^2"), ("number_flux", "1/(m^2 s)"),
                               ("pressure_coefficient", "1"), ("skin_friction_coefficient", "1"),
                               ("heat_transfer_coefficient", "1")):
                assert g[name].shape == (P,) and g[name].attrs["units"] == unit
                assert g[name + "_stderr"].shape == (P,)
            for name, unit in (("drag", "N/m"), ("lift", "N/m"), ("drag_coefficient", "1"),
                               ("lift_coefficient", "1"), ("heat_transfer_rate", "W/m")):
                assert g[name].shape == () and g[name].attrs["units"] == unit
            assert g["force"].shape == (3,) and g["panel_center"].shape == (P, 2)
        vol = f["grid/cell_volume"][()]
        assert vol.sum() == pytest.approx(4e-4 - bodies_area(1e-3), rel=1e-10)
        assert np.isnan(f["fields/temperature"][()][vol == 0]).all()
    # the XDMF sidecar: the fields grid and one panel grid per body, every reference resolvable
    root = ET.parse(write_xdmf(out)).getroot()
    grids = {g.get("Name"): g for g in root.iter("Grid")}
    assert {"hook", "pin"} <= set(grids)
    assert grids["pin"].find("Topology").get("NumberOfElements") == "24"
    with h5py.File(out) as f:
        for item in root.iter("DataItem"):
            if item.get("Format") != "HDF":
                continue
            file, path = item.text.split(":")
            assert file == out.name
            assert " ".join(map(str, f[path].shape)) == item.get("Dimensions"), path
    names = {a.get("Name") for a in grids["hook"].iter("Attribute")}
    assert {"pressure", "pressure_coefficient", "heat_flux_stderr"} <= names


# ------------------------------------------------------------------ case files

DOMAIN_7x6 = case_text("", length=(7e-3, 6e-3), cells=(28, 24), sides=("inflow", "outflow",
                                                                        "diffuse", "diffuse"))


def test_documented_body_example_parses():
    """The [[body]] example of docs/case-files.md is a valid pair of bodies."""
    doc = (ROOT / "docs" / "case-files.md").read_text()
    section = doc[doc.index("### Embedded bodies"):]
    block = re.search(r"```toml\n(.*?)```", section, re.S).group(1)
    case = parse_case(DOMAIN_7x6 + block, "example.toml")
    assert [b.name for b in case.bodies] == ["wire", "plate"]
    assert case.bodies[1].reference_length == pytest.approx(3e-3)
    assert case.bodies[0].reference_length == pytest.approx(1e-3)  # the diameter


CIRCLE = '[[body]]\nshape = "circle"\ncenter = [3e-3, 3e-3]\nradius = 1e-3\nmodel = "diffuse"\n'


@pytest.mark.parametrize("extra,key,words", [
    (CIRCLE.replace("1e-3\nmodel", "3.5e-3\nmodel"), "body[0].center", "outside the domain"),
    (CIRCLE.replace("[3e-3, 3e-3]", "[1e-3, 3e-3]"), "body[0].center", "touches side xmin"),
    (CIRCLE + CIRCLE.replace("[3e-3, 3e-3]", "[4.5e-3, 3e-3]"), "body[1].center", "overlaps"),
    (CIRCLE + 'velocity = [1.0, 0.0, 0.0]\n', "body[0].velocity", "at rest"),
    (CIRCLE.replace('"diffuse"', '"periodic"'), "body[0].model", "is not one of"),
    (CIRCLE + "accommodation = 0.5\n", "body[0].accommodation", "only used by model 'maxwell'"),
    ('[[body]]\nshape = "polygon"\nvertices = [[1e-3, 1e-3], [2e-3, 2e-3], [2e-3, 1e-3], '
     '[1e-3, 1.5e-3]]\nmodel = "diffuse"\n', "body[0].vertices", "cross"),
    ('[[body]]\nshape = "polygon"\nvertices = [[1e-3, 1e-3], [2e-3, 1e-3], [2e-3, 2e-3]]\n'
     'model = "diffuse"\npanels = 2\n', "body[0].panels", "one panel per edge"),
    (CIRCLE.replace("shape", "shap"), "body[0].shape", "required key is missing"),
])
def test_body_errors_name_the_key(extra, key, words):
    with pytest.raises(CaseError) as err:
        parse_case(DOMAIN_7x6 + extra, "case.toml")
    msg = str(err.value)
    assert msg.startswith(f"case.toml: {key}: ") and words in msg and "\n" not in msg, msg


def test_bodies_refused_in_1d_with_exit_status_2(tmp_path, capsys):
    text = (ROOT / "cases" / "shuttle-gap-couette-transitional.toml").read_text() + CIRCLE
    path = tmp_path / "c.toml"
    path.write_text(text)
    assert main(["check", str(path)]) == 2
    line = one_error_line(capsys.readouterr().err)
    assert f"{path}: body: bodies need a 2-D domain" in line
