"""Result files: writer/reader round trip, atomic writes, refusals, and the schema of a real run.

The schema checked here is the one documented in ``docs/output.md``; the
example code of that page and ``tools/plot_profiles.py`` are run against a
file from a tiny simulation.
"""

from __future__ import annotations

import ast
import os
import re
import subprocess
import sys
from pathlib import Path

import h5py
import numpy as np
import pytest

from dsmc.errors import UserError
from dsmc.io.results import SCHEMA_NAME, SCHEMA_VERSION, Data, read_results, value, write_results

ROOT = Path(__file__).resolve().parents[1]
K_B = 1.380649e-23


def small_tree() -> dict:
    return {
        "@attrs": {"title": "round trip \u00fc \u00b5m", "count": 3, "ratio": 0.25},
        "matrix": Data(np.arange(6.0).reshape(2, 3), "m"),
        "count": Data(7, "1"),
        "pressure": Data(2.5, "Pa"),
        "group": {
            "@attrs": {"note": "nested group", "flag": 1},
            "velocity": Data(np.array([1.0, -2.0, 3.0]), "m/s"),
            "deeper": {"ids": Data(np.array([4, 5, 6], dtype=np.int64), "1/s")},
        },
        "empty": {},
    }


def listing(directory: Path) -> list[str]:
    return sorted(p.name for p in directory.iterdir())


# ----------------------------------------------------------------------------- writer and reader


def test_round_trip_keeps_values_dtypes_units_and_attributes(tmp_path):
    path = write_results(tmp_path / "r.h5", small_tree())
    assert path == tmp_path / "r.h5"
    tree = read_results(path)

    attrs = tree["@attrs"]
    assert attrs["schema"] == SCHEMA_NAME and attrs["schema_version"] == SCHEMA_VERSION
    assert attrs["title"] == "round trip \u00fc \u00b5m" and isinstance(attrs["title"], str)
    assert attrs["count"] == 3 and attrs["ratio"] == 0.25
    assert tree["group"]["@attrs"] == {"note": "nested group", "flag": 1}

    m = tree["matrix"]
    assert isinstance(m, Data) and m.units == "m"
    np.testing.assert_array_equal(m.value, np.arange(6.0).reshape(2, 3))
    assert m.value.dtype == np.float64
    assert value(tree, "count") == 7 and tree["count"].units == "1"
    assert value(tree, "pressure") == 2.5 and np.ndim(value(tree, "pressure")) == 0
    np.testing.assert_array_equal(value(tree, "group/velocity"), [1.0, -2.0, 3.0])
    ids = value(tree, "/group/deeper/ids")
    assert ids.dtype == np.int64 and list(ids) == [4, 5, 6]
    assert tree["group"]["deeper"]["ids"].units == "1/s"
    assert tree["empty"] == {}
    assert listing(tmp_path) == ["r.h5"]


def test_every_dataset_carries_a_units_attribute(tmp_path):
    path = write_results(tmp_path / "r.h5", small_tree())
    seen = {}
    with h5py.File(path, "r") as f:
        f.visititems(lambda name, obj: seen.__setitem__(name, obj.attrs.get("units"))
                     if isinstance(obj, h5py.Dataset) else None)
    assert seen == {"matrix": "m", "count": "1", "pressure": "Pa", "group/velocity": "m/s",
                    "group/deeper/ids": "1/s"}


@pytest.mark.skipif(os.name != "posix", reason="POSIX file modes")
def test_result_file_gets_an_ordinary_file_mode(tmp_path):
    old = os.umask(0o022)
    try:
        path = write_results(tmp_path / "r.h5", small_tree())
    finally:
        os.umask(old)
    assert path.stat().st_mode & 0o777 == 0o644  # as open() would make it, not mkstemp's 0600


class Exploding:
    """An array-like whose conversion fails, like a bug or Ctrl-C in the middle of a write."""

    def __init__(self, exc):
        self.exc = exc

    def __array__(self, dtype=None, copy=None):
        raise self.exc


@pytest.mark.parametrize("bad, exc", [
    (2.0, TypeError),                                         # a bare value, not Data or a group
    (Data(Exploding(KeyboardInterrupt()), "1"), KeyboardInterrupt),
    (Data(Exploding(MemoryError()), "1"), MemoryError),
])
def test_failed_write_leaves_no_file_and_no_temporary(tmp_path, bad, exc):
    tree = small_tree()
    tree["group"]["deeper"]["bad"] = bad  # after several datasets are already written
    with pytest.raises(exc):
        write_results(tmp_path / "r.h5", tree)
    assert listing(tmp_path) == []


def test_failed_overwrite_keeps_the_old_file(tmp_path):
    path = write_results(tmp_path / "r.h5", small_tree())
    before = path.read_bytes()
    tree = small_tree()
    tree["later"] = {"x": Data(np.ones(3), "m"), "bad": object()}
    with pytest.raises(TypeError, match="/later/bad"):
        write_results(path, tree, overwrite=True)
    assert path.read_bytes() == before
    assert listing(tmp_path) == ["r.h5"]


def test_refuses_to_overwrite_without_permission(tmp_path):
    path = write_results(tmp_path / "r.h5", small_tree())
    before, mtime = path.read_bytes(), path.stat().st_mtime_ns
    with pytest.raises(UserError, match="exists already") as err:
        write_results(path, {"other": Data(1.0, "m")})
    assert str(path) in str(err.value)
    assert path.read_bytes() == before and path.stat().st_mtime_ns == mtime
    assert listing(tmp_path) == ["r.h5"]

    write_results(path, {"other": Data(1.0, "m")}, overwrite=True)
    tree = read_results(path)
    assert "matrix" not in tree and value(tree, "other") == 1.0
    assert listing(tmp_path) == ["r.h5"]


def test_refuses_a_missing_directory(tmp_path):
    with pytest.raises(UserError, match="does not exist"):
        write_results(tmp_path / "nowhere" / "r.h5", small_tree())


def _missing(path):
    pass


def _text(path):
    path.write_text("title = 'this is a case file, not a result'\n")


def _empty(path):
    path.write_bytes(b"")


def _truncated(path):
    write_results(path, {"big": Data(np.linspace(0.0, 1.0, 20_000), "m")})
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2])


def _other_schema(path):
    with h5py.File(path, "w") as f:
        f.attrs["schema"] = "someone-elses-format"
        f.attrs["schema_version"] = 1
        f["x"] = np.arange(3.0)


def _plain_hdf5(path):
    with h5py.File(path, "w") as f:
        f["x"] = np.arange(3.0)


def _newer(path):
    write_results(path, small_tree())
    with h5py.File(path, "r+") as f:
        f.attrs["schema_version"] = SCHEMA_VERSION + 1


@pytest.mark.parametrize("make, message", [
    (_missing, "no such result file"),
    (_text, "unreadable or damaged HDF5"),
    (_empty, "unreadable or damaged HDF5"),
    (_truncated, "unreadable or damaged HDF5"),
    (_other_schema, "not a result file of this program .schema 'someone-elses-format'"),
    (_plain_hdf5, "not a result file of this program"),
    (_newer, f"schema version {SCHEMA_VERSION + 1}, this program reads version {SCHEMA_VERSION}"),
], ids=lambda v: getattr(v, "__name__", "").strip("_") or None)
def test_reader_refuses_bad_files_with_one_line(tmp_path, make, message):
    path = tmp_path / "bad.h5"
    make(path)
    with pytest.raises(UserError) as err:
        read_results(path)
    text = str(err.value)
    assert "\n" not in text
    assert text.startswith(f"{path}: ")
    assert re.search(message, text), text


# ----------------------------------------------------------------------------- a real run

CASE = """
title = "tiny sliding-wall gap for the I/O tests"
[gas]
species = "Ar"
temperature = 273.15
pressure = 4.0e3
[domain]
length = 2.0e-6
cells = 5
[boundary.xmin]
model = "diffuse"
temperature = 273.15
velocity = [0.0, -1000.0, 0.0]
[boundary.xmax]
model = "diffuse"
temperature = 273.15
velocity = [0.0, 1000.0, 0.0]
[numerics]
particles_per_cell = 20
[run]
seed = 7
transient_steps = 0
sample_steps = 40
batches = 2
"""

N = 5
FIELDS = {  # name: (shape, units), as docs/output.md states
    "number_density": ((N,), "1/m^3"),
    "mass_density": ((N,), "kg/m^3"),
    "velocity": ((N, 3), "m/s"),
    "temperature": ((N,), "K"),
    "temperature_components": ((N, 3), "K"),
    "pressure": ((N,), "Pa"),
    "pressure_tensor": ((N, 3, 3), "Pa"),
    "heat_flux": ((N, 3), "W/m^2"),
    "particles_per_cell": ((N,), "1"),
}
WALL = {
    "number_flux": ((), "1/(m^2 s)"),
    "pressure": ((), "Pa"),
    "shear_stress": ((3,), "Pa"),
    "heat_flux": ((), "W/m^2"),
}


@pytest.fixture(scope="module")
def result_file(tmp_path_factory):
    from dsmc.case import parse_case
    from dsmc.simulation import Simulation, result_tree

    sim = Simulation(parse_case(CASE, "tiny.toml"))
    sim.run()
    return write_results(tmp_path_factory.mktemp("e2e") / "tiny.h5", result_tree(sim))


def test_real_file_has_the_documented_layout(result_file):
    with h5py.File(result_file, "r") as f:
        assert f.attrs["schema"] == SCHEMA_NAME and f.attrs["schema_version"] == 1
        assert f.attrs["title"] == "tiny sliding-wall gap for the I/O tests"
        assert f.attrs["dimension"] == 1 and f.attrs["package_version"]
        assert "title = \"tiny sliding-wall" in f["case"].attrs["text"]
        assert f["case"].attrs["path"] == "tiny.toml"
        assert f["gas"].attrs["species"] == "Ar" and f["gas"].attrs["collision_model"] == "vhs"

        datasets = {}
        f.visititems(lambda name, obj: datasets.__setitem__(name, obj)
                     if isinstance(obj, h5py.Dataset) else None)
        for name, ds in datasets.items():
            assert isinstance(ds.attrs.get("units"), str) and ds.attrs["units"], name
            assert np.all(np.isfinite(ds[()])), name

        for name, (shape, units) in FIELDS.items():
            for key in (name, name + "_stderr"):
                ds = f["fields"][key]
                assert ds.shape == shape and ds.dtype == np.float64, key
                assert ds.attrs["units"] == units, key
            assert np.all(f["fields"][name + "_stderr"][()] >= 0), name
        assert set(f["fields"]) == set(FIELDS) | {k + "_stderr" for k in FIELDS}

        x, edges = f["grid/x"][()], f["grid/x_edges"][()]
        assert x.shape == (N,) and edges.shape == (N + 1,)
        np.testing.assert_allclose(edges[[0, -1]], [0.0, 2.0e-6])
        np.testing.assert_allclose(x, 0.5 * (edges[1:] + edges[:-1]))
        np.testing.assert_allclose(f["grid/cell_volume"][()], np.diff(edges) * 1.0)

        run = f["run"]
        assert run["batches"][()] == 2 and run["sampled_steps"][()] == 40
        assert run["steps"][()] == 40 and run["samples"][()] == 40
        assert run.attrs["seed"] == 7
        assert f["gas/mass"].shape == (1,) and f["gas/mass"].attrs["units"] == "kg"
        assert isinstance(f["adequacy"].attrs["warnings"], str)
        for name in ("cell_size_over_mean_free_path", "time_step_over_collision_time",
                     "cell_transit_fraction", "particles_per_cell", "knudsen_number",
                     "particles_per_cell_min", "mean_collision_separation_over_mean_free_path"):
            assert f["adequacy"][name].shape == () and f["adequacy"][name].attrs["units"] == "1"

        for side, normal in (("xmin", [1.0, 0.0, 0.0]), ("xmax", [-1.0, 0.0, 0.0])):
            w = f["walls"][side]
            assert w.attrs["model"] == "diffuse"
            np.testing.assert_array_equal(w["normal"][()], normal)
            assert w["temperature"][()] == 273.15 and w["velocity"].shape == (3,)
            for name, (shape, units) in WALL.items():
                for key in (name, name + "_stderr"):
                    assert w[key].shape == shape and w[key].attrs["units"] == units, (side, key)


def test_real_file_obeys_the_documented_definitions(result_file):
    with h5py.File(result_file, "r") as f:
        F = {k: v[()] for k, v in f["fields"].items()}
        mass = f["gas/mass"][0]
    n, P = F["number_density"], F["pressure_tensor"]
    np.testing.assert_allclose(P, np.swapaxes(P, 1, 2), rtol=1e-12, atol=1e-9)
    diag = np.diagonal(P, axis1=1, axis2=2)
    np.testing.assert_allclose(F["temperature_components"], diag / (n[:, None] * K_B), rtol=1e-12)
    np.testing.assert_allclose(F["temperature"], F["temperature_components"].mean(1), rtol=1e-12)
    np.testing.assert_allclose(F["pressure"], diag.sum(1) / 3.0, rtol=1e-12)
    np.testing.assert_allclose(F["pressure"], n * K_B * F["temperature"], rtol=1e-12)
    np.testing.assert_allclose(F["mass_density"], mass * n, rtol=1e-12)
    with h5py.File(result_file, "r") as f:
        volume = f["grid/cell_volume"][()]
        weight = f["run/particle_weight"][()]
    np.testing.assert_allclose(n, F["particles_per_cell"] * weight / volume, rtol=1e-12)


def test_real_file_sign_conventions(result_file):
    """Walls sliding at -1000 m/s (xmin) and +1000 m/s (xmax) past gas initially at rest.

    The gas drags each wall backwards relative to its motion, pushes it away
    from the gas, and heats it in its own frame; the margins are many
    standard errors wide.
    """
    with h5py.File(result_file, "r") as f:
        lo, hi = f["walls/xmin"], f["walls/xmax"]
        for w in (lo, hi):
            assert w["pressure"][()] > 2.0e3
            assert w["heat_flux"][()] > 2.0e6
            assert w["shear_stress"][0] == 0.0  # tangential: no normal component
        assert lo["shear_stress"][1] > 5.0e3 and hi["shear_stress"][1] < -5.0e3
        uy = f["fields/velocity"][:, 1]
    assert uy[0] < -200.0 and uy[-1] > 200.0


def test_docs_example_runs_on_a_real_file(result_file, capsys):
    doc = (ROOT / "docs" / "output.md").read_text()
    blocks = re.findall(r"```python\n(.*?)```", doc, flags=re.S)
    example = next(b for b in blocks if 'h5py.File("couette.h5"' in b)
    assert len(example.strip().splitlines()) <= 12
    exec(compile(example.replace("couette.h5", str(result_file)), "docs/output.md", "exec"), {})
    assert "shear on the xmin wall" in capsys.readouterr().out


# ----------------------------------------------------------------------------- plotting example

PLOT = ROOT / "tools" / "plot_profiles.py"


def test_plot_script_imports_only_h5py_numpy_matplotlib():
    allowed = {"__future__", "argparse", "sys", "pathlib", "h5py", "numpy", "matplotlib"}
    tree = ast.parse(PLOT.read_text())
    top = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            top |= {a.name.split(".")[0] for a in node.names}
        elif isinstance(node, ast.ImportFrom):
            top.add(node.module.split(".")[0])
    assert top <= allowed, top - allowed


def test_plot_script_writes_png_and_pdf(result_file, tmp_path):
    env = dict(os.environ, MPLBACKEND="Agg")
    out = tmp_path / "profiles.pdf"
    done = subprocess.run([sys.executable, str(PLOT), str(result_file), "-o", str(out)],
                          env=env, capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    png = out.with_suffix(".png")
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert png.stat().st_size > 10_000
    assert out.read_bytes()[:5] == b"%PDF-"

    bad = tmp_path / "not-a-result.h5"
    bad.write_text("nothing")
    done = subprocess.run([sys.executable, str(PLOT), str(bad)], env=env, capture_output=True,
                          text=True, timeout=120)
    assert done.returncode == 2
    assert done.stderr.count("\n") == 1 and str(bad) in done.stderr
