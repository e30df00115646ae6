"""Case files: the shipped cases parse, values round-trip, and every input
mistake gives a one-line CaseError naming the file and the key path.

Cases are built as Python dicts and written to TOML by a small writer here,
so each error test states only the one change it makes to a valid case.
"""

from __future__ import annotations

import copy
import dataclasses
import math
import re
from pathlib import Path

import pytest

from dsmc.case import (Case, DomainSpec, GasSpec, InitialSpec, NumericsSpec, RunSpec, ShockSpec,
                       WallSpec, load_case, parse_case)
from dsmc.errors import CaseError, UserError
from dsmc.models import COLLISION_MODELS, OPEN_BOUNDARIES, WALL_MODELS

ROOT = Path(__file__).resolve().parents[1]
SHIPPED = sorted((ROOT / "cases").glob("*.toml"))
DOC = ROOT / "docs" / "case-files.md"

K_SI2019 = 1.380649e-23  # J/K, exact by the 2019 SI definition
FILE = "some/dir/my-case.toml"  # the name parse_case is told; must appear in every message


# ----------------------------------------------------------------------------
# a tiny TOML writer for test cases


def _value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, int):
        return str(v)
    if isinstance(v, str):
        return '"' + v.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(v, list):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    raise TypeError(v)


def to_toml(data: dict, prefix: str = "") -> str:
    lines = [f"{k} = {_value(v)}" for k, v in data.items() if not isinstance(v, dict)]
    for k, v in data.items():
        if isinstance(v, dict):
            name = f"{prefix}.{k}" if prefix else k
            lines.append(f"\n[{name}]")
            lines.append(to_toml(v, name))
    return "\n".join(lines) + "\n"


def base() -> dict:
    """A small valid case (a fresh copy each call)."""
    return copy.deepcopy({
        "gas": {"species": "Ar", "temperature": 300.0, "pressure": 100.0},
        "domain": {"length": 1.0e-3, "cells": 5},
        "boundary": {"xmin": {"model": "diffuse"}, "xmax": {"model": "diffuse"}},
    })


def parse(data: dict) -> Case:
    return parse_case(to_toml(data), FILE)


def error_of(data_or_text) -> str:
    text = data_or_text if isinstance(data_or_text, str) else to_toml(data_or_text)
    with pytest.raises(CaseError) as info:
        parse_case(text, FILE)
    return str(info.value)


def assert_one_line(message: str):
    assert message and "\n" not in message and "\r" not in message, repr(message)
    assert "Traceback" not in message


# ----------------------------------------------------------------------------
# shipped cases


def test_shipped_cases_exist():
    assert len(SHIPPED) >= 4, SHIPPED


@pytest.mark.parametrize("path", SHIPPED, ids=lambda p: p.stem)
def test_shipped_case_parses(path):
    case = load_case(path)
    assert case.path == str(path)
    assert case.text == path.read_text(encoding="utf-8")
    assert case.title
    assert case.gas.temperature > 0 and case.gas.number_density > 0
    assert case.domain.length > 0 and case.domain.cells >= 1
    for k, wall in enumerate(case.walls):
        if wall.is_open:  # a reservoir drift may cross the side
            assert wall.model in OPEN_BOUNDARIES
        else:  # sides k = 0, 1 are normal to x, sides 2, 3 (2-D) to y
            assert wall.model in WALL_MODELS and wall.velocity[k // 2] == 0.0
    assert case.run.sample_steps // case.run.sample_interval >= case.run.batches


# ----------------------------------------------------------------------------
# round trips and defaults


def full_case() -> dict:
    """Every key given, none at its default."""
    return {
        "title": "every key",
        "gas": {"species": "argon", "collision_model": "vss", "temperature": 310.5,
                "pressure": 250.0, "velocity": [0.0, 1.5, -2.5]},
        "domain": {"length": 2.5e-6, "cells": 33},
        "boundary": {
            "xmin": {"model": "maxwell", "temperature": 350.0, "velocity": [0.0, -10.0, 0.0],
                     "accommodation": 0.7},
            "xmax": {"model": "cll", "temperature": 280.0, "velocity": [0.0, 0.0, 4.0],
                     "normal_accommodation": 0.25, "tangential_accommodation": 0.0},
        },
        "initial": {"profile": "linear"},
        "numerics": {"particles_per_cell": 12.5, "time_step": 3.0e-10,
                     "collision_time_fraction": 0.1, "transit_fraction": 0.3},
        "run": {"seed": 987654321, "transient_steps": 0, "sample_steps": 700,
                "sample_interval": 7, "batches": 100, "steady_state": "auto",
                "monitor_window": 25, "target_error": 0.02,
                "target_quantities": ["bulk_heat_flux", "bulk_temperature"]},
    }


def test_round_trip_every_key():
    text = to_toml(full_case())
    case = parse_case(text, FILE)
    assert case.path == FILE and case.text == text
    assert case.title == "every key"
    g = case.gas
    assert g.species.name == "Ar"  # "argon" is an alias
    assert g.collision_model == "vss"
    assert g.temperature == 310.5
    assert g.number_density == 250.0 / (K_SI2019 * 310.5)
    assert g.pressure == pytest.approx(250.0, rel=1e-14)
    assert g.velocity == (0.0, 1.5, -2.5)
    assert case.domain == DomainSpec(2.5e-6, 33)
    assert case.walls == (
        WallSpec("maxwell", 350.0, (0.0, -10.0, 0.0), accommodation=0.7),
        WallSpec("cll", 280.0, (0.0, 0.0, 4.0), normal_accommodation=0.25,
                 tangential_accommodation=0.0),
    )
    assert case.initial == InitialSpec("linear")
    assert case.numerics == NumericsSpec(12.5, 3.0e-10, 0.1, 0.3)
    assert case.run == RunSpec(seed=987654321, transient_steps=0, sample_steps=700,
                               sample_interval=7, batches=100, steady_state="auto",
                               monitor_window=25, target_error=0.02,
                               target_quantities=("bulk_heat_flux", "bulk_temperature"))


def test_defaults():
    case = parse(base())
    assert case.title == "my-case"  # the file name without extension
    assert case.gas.collision_model == "vhs"
    assert case.gas.velocity == (0.0, 0.0, 0.0)
    for wall in case.walls:
        # wall temperature defaults to the gas temperature; accommodations to 1
        assert wall == WallSpec("diffuse", 300.0, (0.0, 0.0, 0.0), 1.0, 1.0, 1.0)
    assert case.initial == InitialSpec("uniform")
    assert case.numerics == NumericsSpec(particles_per_cell=40.0, time_step=None,
                                         collision_time_fraction=0.25, transit_fraction=0.5)
    assert case.run == RunSpec(seed=1, transient_steps=1000, sample_steps=5000,
                               sample_interval=1, batches=20, steady_state="fixed",
                               monitor_window=50, target_error=0.0, target_quantities=())
    # empty optional sections give the same defaults
    data = base() | {"initial": {}, "numerics": {}, "run": {}}
    empty = parse(data)
    assert (empty.initial, empty.numerics, empty.run) == (case.initial, case.numerics, case.run)


@pytest.mark.parametrize("p, T", [(100.0, 300.0), (1.2e5, 273.15), (1e-3, 4.2), (101325.0, 1e4)])
def test_pressure_to_number_density(p, T):
    data = base()
    data["gas"].update(pressure=p, temperature=T)
    n = parse(data).gas.number_density
    assert n == p / (K_SI2019 * T)  # same formula, same rounding: exact


def test_standard_conditions_number_density():
    # Loschmidt constant at 273.15 K, 101.325 kPa: 2.686780111...e25 1/m^3 (CODATA 2018, exact
    # digits follow from the exact k)
    data = base()
    data["gas"].update(pressure=101325.0, temperature=273.15)
    assert parse(data).gas.number_density == pytest.approx(2.686780111e25, rel=1e-9)


def test_number_density_given_directly():
    data = base()
    del data["gas"]["pressure"]
    data["gas"]["number_density"] = 2.5e22
    g = parse(data).gas
    assert g.number_density == 2.5e22
    assert g.pressure == pytest.approx(2.5e22 * K_SI2019 * 300.0, rel=1e-15)


def test_integers_accepted_for_numbers():
    data = base()
    data["gas"].update(temperature=300, pressure=100)
    data["domain"]["length"] = 1
    data["boundary"]["xmax"] = {"model": "maxwell", "accommodation": 1, "temperature": 400}
    case = parse(data)
    assert isinstance(case.gas.temperature, float) and case.gas.temperature == 300.0
    assert isinstance(case.domain.length, float)
    assert case.walls[1].accommodation == 1.0 and case.walls[1].temperature == 400.0


def test_time_step_auto_and_explicit():
    data = base() | {"numerics": {"time_step": "auto"}}
    assert parse(data).numerics.time_step is None
    data["numerics"]["time_step"] = 1e-9
    assert parse(data).numerics.time_step == 1e-9


@pytest.mark.parametrize("name", ["Ar", "ar", "AR", "argon", "Argon"])
def test_gas_name_ignores_case_and_accepts_description(name):
    data = base()
    data["gas"]["species"] = name
    assert parse(data).gas.species.name == "Ar"


@pytest.mark.parametrize("model", sorted(COLLISION_MODELS))
def test_every_collision_model_accepted(model):
    data = base()
    data["gas"]["collision_model"] = model
    assert parse(data).gas.collision_model == model


@pytest.mark.parametrize("key, value", [
    ("accommodation", 0.0), ("accommodation", 1.0),
    ("normal_accommodation", 0.0), ("tangential_accommodation", 1.0),
])
def test_accommodation_range_is_inclusive(key, value):
    data = base()
    model = "maxwell" if key == "accommodation" else "cll"
    data["boundary"]["xmin"] = {"model": model, key: value}
    assert getattr(parse(data).walls[0], key) == value


def test_periodic_pair():
    data = base()
    data["boundary"] = {"xmin": {"model": "periodic"}, "xmax": {"model": "periodic"}}
    case = parse(data)
    assert [w.model for w in case.walls] == ["periodic", "periodic"]
    assert all(w.temperature == 300.0 and w.velocity == (0.0, 0.0, 0.0) for w in case.walls)


def test_batches_exactly_filled():
    # sample_steps // sample_interval == batches is the smallest schedule allowed
    data = base() | {"run": {"sample_steps": 105, "sample_interval": 10, "batches": 10}}
    assert parse(data).run.batches == 10


def test_with_run_replaces_only_run_values():
    case = parse(base())
    other = case.with_run(seed=42)
    assert other.run.seed == 42 and other.run.batches == case.run.batches
    assert other.gas == case.gas and case.run.seed == 1


# ----------------------------------------------------------------------------
# errors: each mutation of the valid base case -> (key path, text in the message)


def _set(path: str, value):
    """A mutation setting ``a.b.c = value`` in the case dict."""
    def mutate(d):
        *parents, last = path.split(".")
        for p in parents:
            d = d.setdefault(p, {})
        d[last] = value
    mutate.__name__ = f"{path}={value!r}"
    return mutate


def _del(path: str):
    def mutate(d):
        *parents, last = path.split(".")
        for p in parents:
            d = d[p]
        del d[last]
    mutate.__name__ = f"del {path}"
    return mutate


def _wall(side: str, **keys):
    def mutate(d):
        d["boundary"][side] = dict(keys)
    mutate.__name__ = f"{side}={keys}"
    return mutate


def _both(*mutations):
    def mutate(d):
        for m in mutations:
            m(d)
    mutate.__name__ = "+".join(m.__name__ for m in mutations)
    return mutate


SUGGEST = "(did you mean '{}'?)"

ERRORS = [
    # unknown sections and keys, with the nearest known name
    (_set("bondary", {"x": 1}), "bondary", "unknown section " + SUGGEST.format("boundary")),
    (_set("numerical", {}), "numerical", "unknown section " + SUGGEST.format("numerics")),
    (_set("foo", 1), "foo", "unknown section"),
    (_wall("xmax", model="maxwell", accomodation=0.5), "boundary.xmax.accomodation",
     "unknown key " + SUGGEST.format("accommodation")),
    (_set("gas.temprature", 300.0), "gas.temprature", "unknown key " + SUGGEST.format("temperature")),
    (_set("gas.number_densty", 1e22), "gas.number_densty",
     "unknown key " + SUGGEST.format("number_density")),
    (_set("gas.velocty", [0.0, 0.0, 0.0]), "gas.velocty", "unknown key " + SUGGEST.format("velocity")),
    (_set("domain.cell", 5), "domain.cell", "unknown key " + SUGGEST.format("cells")),
    (_set("numerics.time_stp", 1e-9), "numerics.time_stp", "unknown key " + SUGGEST.format("time_step")),
    (_set("numerics.particles_per_cel", 20), "numerics.particles_per_cel",
     "unknown key " + SUGGEST.format("particles_per_cell")),
    (_set("run.sample_step", 100), "run.sample_step", "unknown key " + SUGGEST.format("sample_steps")),
    (_set("run.target_eror", 0.1), "run.target_eror", "unknown key " + SUGGEST.format("target_error")),
    (_set("initial.profil", "linear"), "initial.profil", "unknown key " + SUGGEST.format("profile")),
    (_set("boundary.xmn", {"model": "diffuse"}), "boundary.xmn", "unknown key " + SUGGEST.format("xmin")),
    (_set("boundary.ymin", {"model": "diffuse"}), "boundary.ymin", "unknown key"),
    # a key of another wall model
    (_wall("xmin", model="diffuse", accommodation=0.5), "boundary.xmin.accommodation",
     "only used by model 'maxwell' (this wall is 'diffuse')"),
    (_wall("xmin", model="specular", tangential_accommodation=0.5),
     "boundary.xmin.tangential_accommodation", "only used by model 'cll' (this wall is 'specular')"),
    (_wall("xmax", model="maxwell", normal_accommodation=0.5), "boundary.xmax.normal_accommodation",
     "only used by model 'cll' (this wall is 'maxwell')"),
    (_wall("xmax", model="cll", accommodation=0.5), "boundary.xmax.accommodation",
     "only used by model 'maxwell' (this wall is 'cll')"),
    (_both(_wall("xmin", model="periodic", accommodation=0.5), _wall("xmax", model="periodic")),
     "boundary.xmin.accommodation", "only used by model 'maxwell' (this wall is 'periodic')"),
    (_both(_wall("xmin", model="periodic", temperature=300.0), _wall("xmax", model="periodic")),
     "boundary.xmin.temperature", "unknown key"),
    # wrong types
    (_set("gas.temperature", "300"), "gas.temperature", "expected a number (in K), got a string"),
    (_set("gas.temperature", True), "gas.temperature", "expected a number (in K), got a boolean"),
    (_set("gas.pressure", [100.0]), "gas.pressure", "expected a number (in Pa), got a list"),
    (_set("domain.length", {"value": 1.0}), "domain.length", "expected a number (in m), got a table"),
    (_set("domain.cells", 5.0), "domain.cells", "expected a whole number, got a number"),
    (_set("domain.cells", False), "domain.cells", "expected a whole number, got a boolean"),
    (_set("run.sample_steps", 4e4), "run.sample_steps", "expected a whole number, got a number"),
    (_set("run.seed", "1"), "run.seed", "expected a whole number, got a string"),
    (_wall("xmax", model="diffuse", velocity=[0.0, 1.0]), "boundary.xmax.velocity",
     "expected a list of three numbers (in m/s), got [0.0, 1.0]"),
    (_wall("xmax", model="diffuse", velocity=[0.0, 1.0, 0.0, 0.0]), "boundary.xmax.velocity",
     "expected a list of three numbers (in m/s)"),
    (_wall("xmax", model="diffuse", velocity=[0.0, True, 0.0]), "boundary.xmax.velocity",
     "expected a list of three numbers (in m/s)"),
    (_set("gas.velocity", "fast"), "gas.velocity", "expected a list of three numbers (in m/s)"),
    (_set("gas.species", 18), "gas.species", "expected a gas name, got a whole number"),
    (_wall("xmin", model=1), "boundary.xmin.model", "expected one of 'specular', 'diffuse'"),
    (_set("title", 5), "title", "expected a string, got a whole number"),
    (_set("gas", "Ar"), "gas", "must be a table, got a string"),
    (_set("boundary.xmin", "diffuse"), "boundary.xmin", "must be a table, got a string"),
    # missing required keys and sections
    (_del("gas.species"), "gas.species", "required key is missing"),
    (_del("gas.temperature"), "gas.temperature", "required key is missing"),
    (_del("domain.length"), "domain.length", "required key is missing"),
    (_del("domain.cells"), "domain.cells", "required key is missing"),
    (_del("boundary.xmin"), "boundary.xmin", "required key is missing"),
    (_del("boundary.xmax"), "boundary.xmax", "required key is missing"),
    (_del("boundary.xmin.model"), "boundary.xmin.model", "required key is missing"),
    (_del("gas"), "gas", "required key is missing"),
    (_del("domain"), "domain", "required key is missing"),
    (_del("boundary"), "boundary", "required key is missing"),
    # not finite
    (_set("gas.temperature", math.nan), "gas.temperature", "must be finite, got nan"),
    (_set("domain.length", math.inf), "domain.length", "must be finite, got inf"),
    (_set("gas.pressure", -math.inf), "gas.pressure", "must be finite, got -inf"),
    (_set("gas.velocity", [0.0, math.nan, 0.0]), "gas.velocity", "must be finite"),
    (_wall("xmin", model="maxwell", accommodation=math.nan), "boundary.xmin.accommodation",
     "must be finite, got nan"),
    (_set("numerics.time_step", math.inf), "numerics.time_step", "must be finite, got inf"),
    # negative or zero
    (_set("gas.temperature", -3.0), "gas.temperature", "must be positive (in K), got -3"),
    (_set("gas.temperature", 0.0), "gas.temperature", "must be positive (in K), got 0"),
    (_set("domain.length", 0.0), "domain.length", "must be positive (in m), got 0"),
    (_set("domain.length", -1e-3), "domain.length", "must be positive (in m), got -0.001"),
    (_set("gas.pressure", 0), "gas.pressure", "must be positive (in Pa), got 0"),
    (_set("gas.pressure", -100.0), "gas.pressure", "must be positive (in Pa), got -100"),
    (_both(_del("gas.pressure"), _set("gas.number_density", 0.0)), "gas.number_density",
     "must be positive (in 1/m^3), got 0"),
    (_wall("xmin", model="diffuse", temperature=0.0), "boundary.xmin.temperature",
     "must be positive (in K), got 0"),
    (_set("numerics.time_step", -1e-9), "numerics.time_step", "must be positive (in s)"),
    # other ranges
    (_set("gas.temperature", 2e5), "gas.temperature", "must be at most 100000 (in K), got 200000"),
    (_set("domain.cells", 0), "domain.cells", "must be at least 1, got 0"),
    (_set("numerics.particles_per_cell", 0.5), "numerics.particles_per_cell", "must be at least 1"),
    (_set("run.batches", 1), "run.batches", "must be at least 2, got 1"),
    (_set("run.seed", -1), "run.seed", "must be at least 0, got -1"),
    (_set("run.sample_interval", 0), "run.sample_interval", "must be at least 1, got 0"),
    (_set("run.monitor_window", 0), "run.monitor_window", "must be at least 1, got 0"),
    (_set("run.target_error", 1.5), "run.target_error", "must be at most 1, got 1.5"),
    (_set("run.target_error", -0.01), "run.target_error", "must be at least 0, got -0.01"),
    (_set("run.target_error", math.nan), "run.target_error", "must be finite, got nan"),
    (_set("run.target_quantities", "bulk_heat_flux"), "run.target_quantities",
     "expected a list of names from 'bulk_shear_stress', 'bulk_heat_flux', 'bulk_temperature', "
     "got 'bulk_heat_flux'"),
    (_set("run.target_quantities", ["bulk_heat_flux", 3]), "run.target_quantities",
     "expected a list of names from"),
    (_set("numerics.time_step", "automatic"), "numerics.time_step", "expected a number (in s)"),
    # accommodation outside [0, 1]
    (_wall("xmax", model="maxwell", accommodation=1.5), "boundary.xmax.accommodation",
     "must be at most 1, got 1.5"),
    (_wall("xmax", model="maxwell", accommodation=-0.1), "boundary.xmax.accommodation",
     "must be at least 0, got -0.1"),
    (_wall("xmin", model="cll", normal_accommodation=1.01), "boundary.xmin.normal_accommodation",
     "must be at most 1, got 1.01"),
    (_wall("xmin", model="cll", tangential_accommodation=-0.5),
     "boundary.xmin.tangential_accommodation", "must be at least 0, got -0.5"),
    # wall velocity through the gas
    (_wall("xmin", model="diffuse", velocity=[1.0, 0.0, 0.0]), "boundary.xmin.velocity",
     "the wall-normal (x) component must be 0"),
    (_wall("xmax", model="maxwell", velocity=[-1e-9, 5.0, 0.0]), "boundary.xmax.velocity",
     "the wall-normal (x) component must be 0"),
    # periodic on one side only
    (_wall("xmin", model="periodic"), "boundary", "'periodic' must be given on both xmin and xmax"),
    (_wall("xmax", model="periodic"), "boundary", "'periodic' must be given on both xmin and xmax"),
    # unknown names, with the nearest known one
    (_set("gas.species", "argn"), "gas.species", "unknown gas 'argn' " + SUGGEST.format("Ar")),
    (_set("gas.species", "nitrogn"), "gas.species", "unknown gas 'nitrogn' " + SUGGEST.format("N2")),
    (_set("gas.species", "unobtainium"), "gas.species", "known: He, Ne, Ar"),
    (_set("gas.collision_model", "vhd"), "gas.collision_model",
     "'vhd' is not one of 'hs', 'vhs', 'vss' " + SUGGEST.format("vhs")),
    (_wall("xmax", model="difuse"), "boundary.xmax.model",
     "'difuse' is not one of 'specular', 'diffuse', 'maxwell', 'cll', 'periodic', "
     "'inflow', 'outflow', 'pressure' "
     + SUGGEST.format("diffuse")),
    (_wall("xmin", model="maxwel"), "boundary.xmin.model", SUGGEST.format("maxwell")),
    (_set("initial.profile", "linera"), "initial.profile", SUGGEST.format("linear")),
    (_set("run.steady_state", "automatic"), "run.steady_state",
     "'automatic' is not one of 'fixed', 'auto' " + SUGGEST.format("auto")),
    (_set("run.target_quantities", ["bulk_shear_stres"]), "run.target_quantities",
     "'bulk_shear_stres' is not one of 'bulk_shear_stress', 'bulk_heat_flux', 'bulk_temperature' "
     + SUGGEST.format("bulk_shear_stress")),
    # both or neither of pressure and number_density
    (_set("gas.number_density", 1e22), "gas",
     "give exactly one of 'pressure' (Pa) and 'number_density' (1/m^3)"),
    (_del("gas.pressure"), "gas", "give exactly one of 'pressure' (Pa) and 'number_density' (1/m^3)"),
    # too few samples for the batches
    (_set("run", {"sample_steps": 10}), "run",
     "sample_steps / sample_interval = 10 samples cannot fill 20 batches"),
    (_set("run", {"sample_steps": 109, "sample_interval": 10, "batches": 11}), "run",
     "sample_steps / sample_interval = 10 samples cannot fill 11 batches"),
]


@pytest.mark.parametrize("mutate, key, expected", ERRORS,
                         ids=[m.__name__ for m, _, _ in ERRORS])
def test_case_error(mutate, key, expected):
    data = base()
    mutate(data)
    message = error_of(data)
    assert_one_line(message)
    assert message.startswith(f"{FILE}: {key}: "), message
    assert expected in message, message


def test_error_ids_are_unique():
    ids = [m.__name__ for m, _, _ in ERRORS]
    assert len(ids) == len(set(ids))


def test_base_case_is_valid():
    # the error tests above mean something only if the unmutated case parses
    assert parse(base()).domain.cells == 5


@pytest.mark.parametrize("text, where", [
    ("[gas\nspecies = 'Ar'\n", "line 1"),
    (to_toml(base()) + 'model = "specular"\n', "line"),  # key given twice in [boundary.xmax]
    ("[gas]\nspecies = Ar\n", "line 2"),
    ('[gas]\nspecies = "Ar\n', "line 2"),
])
def test_bad_toml_syntax(text, where):
    message = error_of(text)
    assert_one_line(message)
    assert message.startswith(f"{FILE}: not valid TOML: "), message
    assert where in message, message


def test_case_error_is_a_user_error_with_exit_code_2():
    with pytest.raises(UserError) as info:
        parse_case("[gas\n", FILE)
    assert isinstance(info.value, CaseError)
    assert info.value.exit_code == 2


# ----------------------------------------------------------------------------
# the file itself


def test_load_case_reads_a_file(tmp_path):
    path = tmp_path / "ok.toml"
    path.write_text(to_toml(base()), encoding="utf-8")
    case = load_case(path)
    assert case.path == str(path) and case.title == "ok"


def test_load_case_error_names_the_file(tmp_path):
    path = tmp_path / "named.toml"
    path.write_text(to_toml(base()).replace("cells = 5", "cells = 5.5"), encoding="utf-8")
    with pytest.raises(CaseError) as info:
        load_case(path)
    assert str(info.value) == f"{path}: domain.cells: expected a whole number, got a number"


def _missing(tmp_path):
    return tmp_path / "absent.toml"


def _directory(tmp_path):
    d = tmp_path / "folder.toml"
    d.mkdir()
    return d


def _latin1(tmp_path):
    p = tmp_path / "latin1.toml"
    p.write_bytes('title = "Gap at 25 \u00b0C, r\u00e9sum\u00e9"\n'.encode("latin-1")
                  + to_toml(base()).encode("ascii"))
    return p


def _binary(tmp_path):
    p = tmp_path / "binary.toml"
    p.write_bytes(b"\xff\xfe\x00[gas]\x80\n")
    return p


@pytest.mark.parametrize("make, expected", [
    (_missing, "no such case file"),
    (_directory, "is a directory, not a case file"),
    (_latin1, "not a UTF-8 text file"),
    (_binary, "not a UTF-8 text file"),
], ids=["missing", "directory", "latin1", "binary"])
def test_unreadable_file(tmp_path, make, expected):
    path = make(tmp_path)
    with pytest.raises(CaseError) as info:
        load_case(path)
    message = str(info.value)
    assert_one_line(message)
    assert message == f"{path}: {expected}"


def test_utf8_text_is_fine(tmp_path):
    p = tmp_path / "utf8.toml"
    p.write_text('title = "Gap at 25 \u00b0C"\n' + to_toml(base()), encoding="utf-8")
    assert load_case(p).title == "Gap at 25 \u00b0C"


# ----------------------------------------------------------------------------
# the reference page stays in step with the code


def _doc() -> str:
    return DOC.read_text(encoding="utf-8")


def test_doc_names_every_key_and_model():
    doc = _doc()
    names = {"title", "pressure", "xmin", "xmax", "auto"}
    for spec in (GasSpec, DomainSpec, WallSpec, InitialSpec, NumericsSpec, RunSpec, ShockSpec):
        names |= {f.name for f in dataclasses.fields(spec)}
    names |= set(COLLISION_MODELS) | set(WALL_MODELS) | set(OPEN_BOUNDARIES)
    missing = sorted(n for n in names if f"`{n}`" not in doc and f'"{n}"' not in doc)
    assert not missing, f"not documented in {DOC.name}: {missing}"


def test_doc_defaults_match_the_code():
    doc = _doc()
    rows = {m.group(1): m.group(0) for m in re.finditer(r"^\| `(\w+)` \|.*$", doc, re.M)}
    for spec in (NumericsSpec, RunSpec, InitialSpec):
        for f in dataclasses.fields(spec):
            default = f.default
            if default is None:  # time_step: automatic
                shown = '"auto"'
            elif isinstance(default, str):
                shown = f'"{default}"'
            elif isinstance(default, tuple):  # a TOML list
                shown = "[" + ", ".join(f'"{x}"' for x in default) + "]"
            elif isinstance(default, float):
                shown = f"{default:g}"
            else:
                shown = str(default)
            assert f.name in rows, f"no table row for `{f.name}` in {DOC.name}"
            assert f"`{shown}`" in rows[f.name], (f.name, shown, rows[f.name])


def test_doc_example_is_a_valid_case():
    doc = _doc()
    example = doc[doc.index("## A complete annotated example"):]
    block = re.search(r"```toml\n(.*?)```", example, re.S).group(1)
    case = parse_case(block, "example.toml")
    assert case.title.startswith("Heated-plate gauge")
    assert [w.model for w in case.walls] == ["diffuse", "maxwell"]
    assert case.numerics.time_step is None
