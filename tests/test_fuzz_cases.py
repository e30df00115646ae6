"""Broken case files, hand-written and generated: every one is refused by `dsmc run` and
`dsmc check` with exit status 2 and one line `dsmc: error: FILE: key.path: ...`, no traceback,
nothing on stdout and no file left behind.

Each broken case is a valid case (drawn at random by hypothesis, or the fixed small one of
tests/test_case.py) with one mistake, so the key path the message must name is known. Absurd
sizes (about 1e11 particles or more) are refused by the resource guard (dsmc/resources.py)
before anything is allocated. Hypothesis runs derandomized: the same examples on every run.
The last test prints how many broken cases were tried.
"""

from __future__ import annotations

import contextlib
import copy
import datetime
import io
import json
import math
import os
import subprocess
import sys
import tempfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from dsmc.cli import main
from dsmc.errors import UnknownNameError
from dsmc.gas.species import get_species
from dsmc.models import WALL_MODELS

COUNT = {"tried": 0, "rejected": 0}
FUZZ = settings(derandomize=True, max_examples=60, deadline=None, database=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])


# ----------------------------------------------------------------------------
# a TOML writer (inline tables and dates too, so any value type can be put anywhere)


def toml_value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        return ("inf" if v > 0 else "-inf") if math.isinf(v) else repr(v)
    if isinstance(v, int):
        return str(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False).replace("\x7f", "\\u007f")  # TOML escapes
    if isinstance(v, (datetime.date, datetime.time)):
        return v.isoformat()
    if isinstance(v, list):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{k} = {toml_value(x)}" for k, x in v.items()) + "}"
    raise TypeError(v)


def to_toml(data: dict, prefix: str = "") -> str:
    """Sub-dicts become [tables]; dicts inside lists are inline tables."""
    lines = [f"{k} = {toml_value(v)}" for k, v in data.items() if not isinstance(v, dict)]
    for k, v in data.items():
        if isinstance(v, dict):
            name = f"{prefix}.{k}" if prefix else k
            lines.append(f"\n[{name}]\n" + to_toml(v, name))
    return "\n".join(lines) + "\n"


def small() -> dict:
    return {
        "title": "fuzz",
        "gas": {"species": "Ar", "temperature": 300.0, "pressure": 100.0},
        "domain": {"length": 1.0e-3, "cells": 5},
        "boundary": {"xmin": {"model": "diffuse"}, "xmax": {"model": "diffuse"}},
        "numerics": {"particles_per_cell": 10},
        "run": {"transient_steps": 0, "sample_steps": 40, "batches": 2},
    }


# ----------------------------------------------------------------------------
# running one broken case through the CLI


def refuse(text: str, key: str | None, commands=("run", "check"), count=True) -> str:
    """Write ``text``, run each command on it, check the refusal; return the message.

    ``key`` is the key path the message must name; None for a TOML syntax error."""
    COUNT["tried"] += count
    with tempfile.TemporaryDirectory() as d:
        path = Path(d) / "broken.toml"
        path.write_text(text, encoding="utf-8")
        for command in commands:
            out_file = Path(d) / "out.h5"
            argv = [command, str(path)] + (["-o", str(out_file)] if command == "run" else [])
            out, err = io.StringIO(), io.StringIO()
            cwd = os.getcwd()
            os.chdir(d)  # a stray default-named output would land here
            try:
                with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
                    status = main(argv)
            finally:
                os.chdir(cwd)
            line = check_refusal(status, out.getvalue(), err.getvalue(), path, key, text)
            assert os.listdir(d) == ["broken.toml"], (os.listdir(d), text)
    COUNT["rejected"] += count
    return line


def check_refusal(status, out, err, path, key, text) -> str:
    assert status == 2, (status, err, text)
    assert out == "", (out, text)
    lines = err.splitlines()
    assert len(lines) == 1 and "Traceback" not in err, (err, text)
    head = f"dsmc: error: {path}: "
    want = head + ("not valid TOML: " if key is None else f"{key}: ")
    assert lines[0].startswith(want), (lines[0], want, text)
    return lines[0]


def mutated(*changes, base=None) -> str:
    """TOML of ``base`` (default: the small case) after ``changes``: ("a.b", value) sets,
    ("a.b", DELETE) deletes."""
    data = copy.deepcopy(base or small())
    for path, value in changes:
        *parents, last = path.split(".")
        node = data
        for p in parents:
            node = node.setdefault(p, {})
        if value is DELETE:
            del node[last]
        else:
            node[last] = value
    return to_toml(data)


DELETE = object()

# ----------------------------------------------------------------------------
# the hand-written set: (case text, key path or None for a syntax error)

VALID = to_toml(small())
SYNTAX = [
    "[gas\nspecies = 'Ar'\n",
    VALID.replace("[gas]", "[gas]]"),
    VALID.replace('species = "Ar"', 'species = "Ar'),
    VALID.replace('species = "Ar"', "species = Ar"),
    VALID.replace('species = "Ar"', "species ="),
    VALID.replace('species = "Ar"', '= "Ar"'),
    VALID.replace('species = "Ar"', 'species = "Ar"\nspecies = "Ne"'),
    VALID + "\n[gas]\nvelocity = [0.0, 0.0, 0.0]\n",
    VALID.replace("cells = 5", "cells = 5 5"),
    VALID.replace("cells = 5", "cells = 0x"),
    VALID.replace("cells = 5", "cells = 05"),
    VALID.replace("length = 0.001", "length = 1e"),
    VALID.replace("length = 0.001", "length = .5"),
    VALID.replace("length = 0.001", "length = 1.e-3"),
    VALID.replace("length = 0.001", "length = 1__0"),
    VALID.replace("length = 0.001", "length = NaN"),
    VALID.replace("length = 0.001", "length = Infinity"),
    VALID.replace("temperature = 300.0", "temperature = [300.0"),
    VALID.replace("temperature = 300.0", "temperature = {value = 300.0,}"),
    VALID.replace('species = "Ar"', 'species = "A\\qr"'),
    VALID.replace("[domain]", "[ domain name ]"),
    VALID.replace("[boundary.xmin]", "[boundary..xmin]"),
    "\ufeff" + VALID,
    VALID + "\x00",
    VALID + "junk",
    VALID.replace("\n", "\r"),
    "title = '''unterminated\n" + VALID,
]

HAND = [(t, None) for t in SYNTAX] + [
    # not tables, empty file, unknown sections and keys
    ("", "gas"),
    ("[[gas]]\nspecies = 'Ar'\n", "gas"),
    (mutated(("gas", "Ar")), "gas"),
    (mutated(("boundary", [1, 2])), "boundary"),
    (mutated(("boundary.xmin", "diffuse")), "boundary.xmin"),
    (mutated(("run", 5)), "run"),
    (mutated(("numerics", True)), "numerics"),
    (mutated(("initial", "linear")), "initial"),
    (mutated(("bondary", {"a": 1})), "bondary"),
    (mutated(("numeric", {})), "numeric"),
    (mutated(("solver", {"order": 2})), "solver"),
    (mutated(("output", "x.h5")), "output"),
    (mutated(("Gas", {"species": "Ar"})), "Gas"),
    (mutated(("gas.temprature", 300.0)), "gas.temprature"),
    (mutated(("gas.Temperature", 300.0)), "gas.Temperature"),
    (mutated(("gas.mass", 1e-26)), "gas.mass"),
    (mutated(("domain.width", 1e-3)), "domain.width"),
    (mutated(("domain.dx", 1e-4)), "domain.dx"),
    (mutated(("boundary.ymin", {"model": "diffuse"})), "boundary.ymin"),
    (mutated(("boundary.left", {"model": "diffuse"})), "boundary.left"),
    (mutated(("boundary.xmin.speed", 1.0)), "boundary.xmin.speed"),
    (mutated(("boundary.xmax.sub", {"a": 1})), "boundary.xmax.sub"),
    (mutated(("numerics.dt", 1e-9)), "numerics.dt"),
    (mutated(("numerics.threads", 2)), "numerics.threads"),
    (mutated(("run.steps", 10)), "run.steps"),
    (mutated(("run.output", "a.h5")), "run.output"),
    (mutated(("initial.temperature", 300.0)), "initial.temperature"),
    # a key of another wall model
    (mutated(("boundary.xmin.accommodation", 0.5)), "boundary.xmin.accommodation"),
    (mutated(("boundary.xmax.normal_accommodation", 0.5)), "boundary.xmax.normal_accommodation"),
    (mutated(("boundary.xmin", {"model": "specular", "tangential_accommodation": 1.0})),
     "boundary.xmin.tangential_accommodation"),
    (mutated(("boundary.xmin", {"model": "cll", "accommodation": 1.0})),
     "boundary.xmin.accommodation"),
    (mutated(("boundary.xmin", {"model": "periodic", "velocity": [0.0, 0.0, 0.0]}),
             ("boundary.xmax", {"model": "periodic"})), "boundary.xmin.velocity"),
    (mutated(("boundary.xmin", {"model": "periodic"}),
             ("boundary.xmax", {"model": "periodic", "temperature": 300.0})),
     "boundary.xmax.temperature"),
    # wrong types
    (mutated(("title", 3)), "title"),
    (mutated(("title", ["a"])), "title"),
    (mutated(("gas.species", 18)), "gas.species"),
    (mutated(("gas.species", ["Ar"])), "gas.mole_fractions"),  # a list is a mixture: fractions needed
    (mutated(("gas.collision_model", 1)), "gas.collision_model"),
    (mutated(("gas.temperature", "300")), "gas.temperature"),
    (mutated(("gas.temperature", True)), "gas.temperature"),
    (mutated(("gas.temperature", datetime.date(2026, 1, 1))), "gas.temperature"),
    (mutated(("gas.temperature", datetime.time(3, 0))), "gas.temperature"),
    (mutated(("gas.pressure", [100.0])), "gas.pressure"),
    (mutated(("gas.pressure", {"value": 100.0})), "gas.pressure"),
    (mutated(("gas.velocity", 0.0)), "gas.velocity"),
    (mutated(("gas.velocity", [0.0, 0.0])), "gas.velocity"),
    (mutated(("gas.velocity", [0, 0, 0, 0])), "gas.velocity"),
    (mutated(("gas.velocity", ["0", 0, 0])), "gas.velocity"),
    (mutated(("gas.velocity", [[0], 0, 0])), "gas.velocity"),
    (mutated(("domain.length", "1 mm")), "domain.length"),
    (mutated(("domain.cells", 5.0)), "domain.cells"),
    (mutated(("domain.cells", 5.5)), "domain.cells"),
    (mutated(("domain.cells", "5")), "domain.cells"),
    (mutated(("domain.cells", True)), "domain.cells"),
    (mutated(("boundary.xmin.model", True)), "boundary.xmin.model"),
    (mutated(("boundary.xmin.model", ["diffuse"])), "boundary.xmin.model"),
    (mutated(("boundary.xmin.temperature", "hot")), "boundary.xmin.temperature"),
    (mutated(("boundary.xmax.velocity", [0.0, "1", 0.0])), "boundary.xmax.velocity"),
    (mutated(("boundary.xmin", {"model": "maxwell", "accommodation": "full"})),
     "boundary.xmin.accommodation"),
    (mutated(("initial.profile", 1)), "initial.profile"),
    (mutated(("numerics.particles_per_cell", "many")), "numerics.particles_per_cell"),
    (mutated(("numerics.time_step", "automatic")), "numerics.time_step"),
    (mutated(("numerics.time_step", "AUTO")), "numerics.time_step"),
    (mutated(("numerics.time_step", False)), "numerics.time_step"),
    (mutated(("numerics.collision_time_fraction", [0.2])), "numerics.collision_time_fraction"),
    (mutated(("run.seed", 1.0)), "run.seed"),
    (mutated(("run.seed", "7")), "run.seed"),
    (mutated(("run.sample_steps", 4e1)), "run.sample_steps"),
    (mutated(("run.batches", 2.0)), "run.batches"),
    (mutated(("run.transient_steps", True)), "run.transient_steps"),
    (mutated(("run.steady_state", True)), "run.steady_state"),
    (mutated(("run.target_error", "1%")), "run.target_error"),
    (mutated(("run.target_quantities", "bulk_heat_flux")), "run.target_quantities"),
    (mutated(("run.target_quantities", [1])), "run.target_quantities"),
    # missing keys
    (mutated(("gas", DELETE)), "gas"),
    (mutated(("domain", DELETE)), "domain"),
    (mutated(("boundary", DELETE)), "boundary"),
    (mutated(("gas.species", DELETE)), "gas.species"),
    (mutated(("gas.temperature", DELETE)), "gas.temperature"),
    (mutated(("gas.pressure", DELETE)), "gas"),
    (mutated(("gas.number_density", 1e22)), "gas"),
    (mutated(("domain.length", DELETE)), "domain.length"),
    (mutated(("domain.cells", DELETE)), "domain.cells"),
    (mutated(("boundary.xmin", DELETE)), "boundary.xmin"),
    (mutated(("boundary.xmax", DELETE)), "boundary.xmax"),
    (mutated(("boundary.xmin.model", DELETE)), "boundary.xmin.model"),
    (mutated(("boundary.xmax", {})), "boundary.xmax.model"),
    (mutated(("gas.species", DELETE), ("domain", DELETE)), "gas.species"),
    # empty domains
    (mutated(("domain", {})), "domain.length"),
    (mutated(("domain.cells", 0)), "domain.cells"),
    (mutated(("domain.cells", -5)), "domain.cells"),
    (mutated(("domain.length", 0.0)), "domain.length"),
    (mutated(("domain.length", -0.0)), "domain.length"),
    (mutated(("domain.length", 0)), "domain.length"),
    (mutated(("domain.length", -1e-3)), "domain.length"),
    # negative or zero temperatures and densities
    (mutated(("gas.temperature", 0.0)), "gas.temperature"),
    (mutated(("gas.temperature", -273.15)), "gas.temperature"),
    (mutated(("gas.temperature", 1e6)), "gas.temperature"),
    (mutated(("gas.pressure", 0.0)), "gas.pressure"),
    (mutated(("gas.pressure", -1.0)), "gas.pressure"),
    (mutated(("gas.pressure", 2e9)), "gas.pressure"),
    (mutated(("gas.pressure", DELETE), ("gas.number_density", 0)), "gas.number_density"),
    (mutated(("gas.pressure", DELETE), ("gas.number_density", -1e20)), "gas.number_density"),
    (mutated(("gas.pressure", DELETE), ("gas.number_density", 1e31)), "gas.number_density"),
    (mutated(("boundary.xmin.temperature", 0.0)), "boundary.xmin.temperature"),
    (mutated(("boundary.xmax.temperature", -10.0)), "boundary.xmax.temperature"),
    (mutated(("boundary.xmax.temperature", 2e5)), "boundary.xmax.temperature"),
    (mutated(("numerics.particles_per_cell", 0)), "numerics.particles_per_cell"),
    (mutated(("numerics.particles_per_cell", -10)), "numerics.particles_per_cell"),
    (mutated(("numerics.particles_per_cell", 0.999)), "numerics.particles_per_cell"),
    (mutated(("numerics.time_step", 0.0)), "numerics.time_step"),
    (mutated(("numerics.time_step", -1e-9)), "numerics.time_step"),
    (mutated(("numerics.collision_time_fraction", 0.0)), "numerics.collision_time_fraction"),
    (mutated(("numerics.transit_fraction", -0.5)), "numerics.transit_fraction"),
    (mutated(("numerics.transit_fraction", 11.0)), "numerics.transit_fraction"),
    (mutated(("run.seed", -1)), "run.seed"),
    (mutated(("run.seed", 2**63)), "run.seed"),
    (mutated(("run.transient_steps", -1)), "run.transient_steps"),
    (mutated(("run.sample_steps", 0)), "run.sample_steps"),
    (mutated(("run.sample_interval", 0)), "run.sample_interval"),
    (mutated(("run.batches", 1)), "run.batches"),
    (mutated(("run.batches", 10_001)), "run.batches"),
    (mutated(("run.monitor_window", 0)), "run.monitor_window"),
    (mutated(("run.target_error", -0.1)), "run.target_error"),
    (mutated(("run.target_error", 2.0)), "run.target_error"),
    # accommodation outside [0, 1]
    (mutated(("boundary.xmin", {"model": "maxwell", "accommodation": 1.0000001})),
     "boundary.xmin.accommodation"),
    (mutated(("boundary.xmin", {"model": "maxwell", "accommodation": -1e-9})),
     "boundary.xmin.accommodation"),
    (mutated(("boundary.xmax", {"model": "maxwell", "accommodation": 100})),
     "boundary.xmax.accommodation"),
    (mutated(("boundary.xmax", {"model": "cll", "normal_accommodation": 2.0})),
     "boundary.xmax.normal_accommodation"),
    (mutated(("boundary.xmax", {"model": "cll", "tangential_accommodation": -0.5})),
     "boundary.xmax.tangential_accommodation"),
    (mutated(("boundary.xmin", {"model": "cll", "normal_accommodation": 0.5,
                                "tangential_accommodation": 1.5})),
     "boundary.xmin.tangential_accommodation"),
    # NaN and infinities
    *[(mutated((key, v)), key) for key in ("gas.temperature", "gas.pressure", "domain.length",
                                           "numerics.particles_per_cell", "run.target_error")
      for v in (math.nan, math.inf, -math.inf)],
    (VALID.replace("temperature = 300.0", "temperature = -nan"), "gas.temperature"),
    (VALID.replace("temperature = 300.0", "temperature = +inf"), "gas.temperature"),
    (mutated(("gas.velocity", [0.0, math.inf, 0.0])), "gas.velocity"),
    (mutated(("gas.velocity", [math.nan, 0.0, 0.0])), "gas.velocity"),
    (mutated(("boundary.xmax.velocity", [0.0, 0.0, -math.inf])), "boundary.xmax.velocity"),
    (mutated(("boundary.xmin.temperature", math.nan)), "boundary.xmin.temperature"),
    (mutated(("boundary.xmin", {"model": "maxwell", "accommodation": math.nan})),
     "boundary.xmin.accommodation"),
    (mutated(("boundary.xmin", {"model": "cll", "normal_accommodation": math.inf})),
     "boundary.xmin.normal_accommodation"),
    (mutated(("numerics.time_step", math.inf)), "numerics.time_step"),
    (mutated(("numerics.time_step", math.nan)), "numerics.time_step"),
    (mutated(("numerics.collision_time_fraction", math.nan)), "numerics.collision_time_fraction"),
    # inconsistent boundary pairs and wall velocities through the gas
    (mutated(("boundary.xmin.model", "periodic")), "boundary"),
    (mutated(("boundary.xmax.model", "periodic")), "boundary"),
    (mutated(("boundary.xmin", {"model": "periodic"}),
             ("boundary.xmax", {"model": "maxwell", "accommodation": 0.5})), "boundary"),
    (mutated(("boundary.xmin", {"model": "specular"}), ("boundary.xmax", {"model": "periodic"})),
     "boundary"),
    (mutated(("boundary.xmin.velocity", [1.0, 0.0, 0.0])), "boundary.xmin.velocity"),
    (mutated(("boundary.xmax.velocity", [-1e-300, 0.0, 0.0])), "boundary.xmax.velocity"),
    # unknown names
    (mutated(("gas.species", "argn")), "gas.species"),
    (mutated(("gas.species", "")), "gas.species"),
    (mutated(("gas.species", "CO2"), ("gas.vibration", True)), "gas.vibration"),  # 4 modes
    (mutated(("gas.species", ["He", "Ar"])), "gas.mole_fractions"),  # fractions missing
    (mutated(("gas.species", ["He", "Ar"]), ("gas.mole_fractions", [0.5, 0.6])),
     "gas.mole_fractions"),
    (mutated(("gas.species", ["He", "he"]), ("gas.mole_fractions", [0.5, 0.5])), "gas.species"),
    (mutated(("gas.collision_model", "VHS")), "gas.collision_model"),
    (mutated(("boundary.xmin.model", "Diffuse")), "boundary.xmin.model"),
    (mutated(("boundary.xmin.model", "")), "boundary.xmin.model"),
    (mutated(("initial.profile", "parabolic")), "initial.profile"),
    (mutated(("run.steady_state", "yes")), "run.steady_state"),
    (mutated(("run.target_quantities", ["bulk_pressure"])), "run.target_quantities"),
    # schedules
    (mutated(("run.sample_steps", 1)), "run"),
    (mutated(("run.sample_interval", 21)), "run"),
    (mutated(("run.batches", 41)), "run"),
    # absurd sizes: refused by the parser (cells) or the resource guard (everything else)
    (mutated(("domain.cells", 10**9)), "domain.cells"),
    (mutated(("domain.cells", 10**7 + 1)), "domain.cells"),
    (mutated(("numerics.particles_per_cell", 1e9)), "numerics.particles_per_cell"),
    (mutated(("domain.cells", 10**7), ("numerics.particles_per_cell", 1e6)),
     "numerics.particles_per_cell"),
    (mutated(("domain.cells", 10**6), ("numerics.particles_per_cell", 1e6)),
     "numerics.particles_per_cell"),
    (mutated(("domain.cells", 10**5), ("numerics.particles_per_cell", 1e6)),
     "numerics.particles_per_cell"),
    (mutated(("domain.cells", 10**7), ("numerics.particles_per_cell", 1e4)),
     "numerics.particles_per_cell"),
    (mutated(("domain.cells", 10**7), ("numerics.particles_per_cell", 1),
             ("run.batches", 10_000), ("run.sample_steps", 10_000)), "domain.cells"),
    (mutated(("domain.cells", 5 * 10**6), ("run.batches", 5_000), ("run.sample_steps", 10**12)),
     "domain.cells"),
    # a time step so long that the molecules would bounce between the walls forever
    (mutated(("numerics.time_step", 1e300)), "numerics.time_step"),
    (mutated(("numerics.time_step", 1.0e3)), "numerics.time_step"),
    (mutated(("boundary.xmin", {"model": "periodic"}), ("boundary.xmax", {"model": "periodic"}),
             ("numerics.time_step", 1e100)), "numerics.time_step"),
]

# Integers too large for a double (once an OverflowError traceback, now a one-line refusal).
OVERFLOW = [
    (VALID.replace("temperature = 300.0", "temperature = 1" + "0" * 400), "gas.temperature"),
    (VALID.replace("cells = 5", "cells = 1" + "0" * 400), "domain.cells"),
    (VALID.replace("sample_steps = 40", "sample_steps = 1" + "0" * 400), "run.sample_steps"),
]


def test_valid_base_runs(tmp_path, capsys):
    """The unbroken case is accepted, so every refusal below is caused by its one mistake."""
    case = tmp_path / "ok.toml"
    case.write_text(VALID, encoding="utf-8")
    assert main(["check", str(case)]) == 0
    assert main(["run", str(case), "-o", str(tmp_path / "ok.h5"), "--quiet", "--threads", "1"]) == 0
    assert (tmp_path / "ok.h5").is_file()


def test_hand_written_set_is_large_and_distinct():
    texts = [t for t, _ in HAND]
    assert len(texts) >= 200 - 5 * FUZZ.max_examples and len(set(texts)) == len(texts)


@pytest.mark.parametrize("text, key", HAND, ids=[f"{i:03d}-{k}" for i, (_, k) in enumerate(HAND)])
def test_hand_written(text, key):
    refuse(text, key)


# Known bug in dsmc/case.py (reported, not fixed here; when fixed these pass: move them to
# HAND): a name given by the user is echoed unescaped, so a line break in it splits the message.
LINE_BREAKS = [
    (mutated(("boundary.xmin.model", "diffuse\nx")), "boundary.xmin.model"),
    (mutated(("gas.species", "Ar\r\nAr")), "gas.species"),
    (mutated(("initial.profile", "lin\u2028ear")), "initial.profile"),
    ('"sample\\nsteps" = 1\n' + VALID, "sample\\nsteps"),  # a TOML-escaped line break, echoed escaped
]


@pytest.mark.parametrize("text, key", OVERFLOW, ids=["number", "cells", "sample_steps"])
def test_huge_integer_literal(text, key):
    refuse(text, key)


@pytest.mark.parametrize("text, key", LINE_BREAKS, ids=["model", "species", "profile", "key"])
def test_line_break_in_a_name(text, key):
    refuse(text, key, commands=("check",), count=False)


# ----------------------------------------------------------------------------
# generated: a random valid case, then one mistake


MONATOMIC = ["He", "Ne", "Ar", "Kr", "Xe", "helium", "argon", "xenon"]
finite = st.floats(allow_nan=False, allow_infinity=False)


@st.composite
def wall(draw, periodic=False):
    if periodic:
        return {"model": "periodic"}
    model = draw(st.sampled_from(["specular", "diffuse", "maxwell", "cll"]))
    w = {"model": model}
    if draw(st.booleans()):
        w["temperature"] = draw(st.floats(1.0, 1e4))
    if draw(st.booleans()):
        w["velocity"] = [0.0, draw(st.floats(-1e3, 1e3)), draw(st.floats(-1e3, 1e3))]
    for key in WALL_MODELS[model].keys:
        if draw(st.booleans()):
            w[key] = draw(st.floats(0.0, 1.0))
    return w


@st.composite
def valid_case(draw) -> dict:
    periodic = draw(st.booleans())
    gas = {"species": draw(st.sampled_from(MONATOMIC)),
           "collision_model": draw(st.sampled_from(["hs", "vhs", "vss"])),
           "temperature": draw(st.floats(1.0, 1e4))}
    if draw(st.booleans()):
        gas["pressure"] = draw(st.floats(1e-3, 1e6))
    else:
        gas["number_density"] = draw(st.floats(1e15, 1e26))
    data = {"gas": gas,
            "domain": {"length": draw(st.floats(1e-7, 1.0)), "cells": draw(st.integers(1, 50))},
            "boundary": {"xmin": draw(wall(periodic)), "xmax": draw(wall(periodic))},
            "numerics": {"particles_per_cell": draw(st.integers(1, 20))},
            "run": {"transient_steps": draw(st.integers(0, 5)), "sample_steps": 20,
                    "batches": draw(st.integers(2, 10))}}
    if draw(st.booleans()):
        data["initial"] = {"profile": draw(st.sampled_from(["uniform", "linear"]))}
    return data


# number keys: (path, lower, lower allowed, upper); the wall keys are on the xmin wall
NUMBERS = [
    ("gas.temperature", 0.0, False, 1e5),
    ("domain.length", 0.0, False, 1e3),
    ("numerics.particles_per_cell", 1.0, True, 1e6),
    ("numerics.collision_time_fraction", 0.0, False, 10.0),
    ("numerics.transit_fraction", 0.0, False, 10.0),
    ("run.target_error", 0.0, True, 1.0),
    ("boundary.xmin.temperature", 0.0, False, 1e5),
    ("boundary.xmin.accommodation", 0.0, True, 1.0),
    ("boundary.xmin.normal_accommodation", 0.0, True, 1.0),
    ("boundary.xmin.tangential_accommodation", 0.0, True, 1.0),
]
INTEGERS = [("domain.cells", 1, 10**7), ("run.seed", 0, 2**63 - 1),
            ("run.transient_steps", 0, 10**12), ("run.sample_interval", 1, 10**9),
            ("run.batches", 2, 10**4), ("run.monitor_window", 1, 10**9)]
WALL_OWNER = {"accommodation": "maxwell", "normal_accommodation": "cll",
              "tangential_accommodation": "cll", "temperature": "diffuse"}


def place(data: dict, path: str, value) -> str:
    """Set ``path`` to ``value`` in ``data``, giving the xmin wall the model that owns a
    wall key, and return the TOML."""
    parts = path.split(".")
    if parts[0] == "boundary" and parts[-1] in WALL_OWNER:
        owner = WALL_OWNER[parts[-1]]
        data["boundary"] = {"xmin": {"model": owner}, "xmax": data["boundary"]["xmax"]}
        if data["boundary"]["xmax"]["model"] == "periodic":
            data["boundary"]["xmax"] = {"model": "diffuse"}
    node = data
    for p in parts[:-1]:
        node = node.setdefault(p, {})
    node[parts[-1]] = value
    return to_toml(data)


def out_of_range(lo, lo_ok, hi):
    top = math.nextafter(lo, -math.inf) if lo_ok else lo  # not -0.0 where 0 is allowed
    below = st.floats(max_value=top, allow_nan=False, allow_infinity=False)
    above = st.floats(min_value=math.nextafter(hi, math.inf), allow_nan=False,
                      allow_infinity=False)
    return below | above


special = st.sampled_from([math.nan, math.inf, -math.inf])
# line breaks in an echoed value break the one-line message: a known bug, tested on its own
text = st.text(st.characters(exclude_characters="\n\r\x0b\x0c\x1c\x1d\x1e\x85\u2028\u2029"),
               max_size=12)
not_a_number = (text | st.booleans() | st.lists(st.integers(), max_size=3)
                | st.dates() | st.times() | st.dictionaries(st.sampled_from(["a", "b"]), st.integers()))


@FUZZ
@given(valid_case(), st.sampled_from(NUMBERS), st.data())
def test_generated_bad_number(data, spec, draw):
    path, lo, lo_ok, hi = spec
    value = draw.draw(out_of_range(lo, lo_ok, hi) | special | not_a_number, label="value")
    refuse(place(data, path, value), path)


@FUZZ
@given(valid_case(), st.sampled_from(INTEGERS), st.data())
def test_generated_bad_integer(data, spec, draw):
    path, lo, hi = spec
    bad_int = st.integers(max_value=lo - 1) | st.integers(min_value=hi + 1, max_value=10**300)
    value = draw.draw(bad_int | finite | special | not_a_number, label="value")
    refuse(place(data, path, value), path)


identifier = st.from_regex(r"[A-Za-z][A-Za-z0-9_]{0,15}", fullmatch=True)
KNOWN = {"title", "gas", "domain", "boundary", "initial", "numerics", "run", "species",
         "collision_model", "temperature", "pressure", "number_density", "velocity", "length",
         "cells", "xmin", "xmax", "model", "accommodation", "normal_accommodation",
         "tangential_accommodation", "profile", "particles_per_cell", "time_step",
         "collision_time_fraction", "transit_fraction", "seed", "transient_steps",
         "sample_steps", "sample_interval", "batches", "steady_state", "monitor_window",
         "target_error", "target_quantities"}


@FUZZ
@given(valid_case(), st.sampled_from(["", "gas", "domain", "boundary", "boundary.xmin",
                                      "boundary.xmax", "initial", "numerics", "run"]),
       identifier.filter(lambda s: s not in KNOWN), st.integers() | text)
def test_generated_unknown_name(data, section, name, value):
    node = data
    for p in filter(None, section.split(".")):
        node = node.setdefault(p, {})
    node[name] = value
    refuse(to_toml(data), f"{section}.{name}" if section else name)


def _not_a_gas(name: str) -> bool:
    try:
        get_species(name)
    except UnknownNameError:
        return True
    return False


CHOICES = {"gas.collision_model": {"hs", "vhs", "vss"}, "boundary.xmax.model": set(WALL_MODELS),
           "initial.profile": {"uniform", "linear"}, "run.steady_state": {"fixed", "auto"}}


@FUZZ
@given(valid_case(), st.sampled_from(sorted(CHOICES) + ["gas.species"]), st.data())
def test_generated_bad_name(data, path, draw):
    ok = CHOICES.get(path)
    anything = text | not_a_number | st.integers() | finite
    if ok is None:
        value = draw.draw(anything.filter(lambda v: not isinstance(v, str) or _not_a_gas(v)))
    else:
        value = draw.draw(anything.filter(lambda v: not (isinstance(v, str) and v in ok)))
    if path == "boundary.xmax.model":
        data["boundary"]["xmax"] = {}
    refuse(place(data, path, value), path)


@FUZZ
@given(valid_case(), st.lists(st.sampled_from(["gas.species", "gas.temperature", "gas.amount",
                                               "domain.length", "domain.cells",
                                               "boundary.xmin", "boundary.xmax"]),
                              min_size=1, unique=True))
def test_generated_missing_keys(data, missing):
    order = ["gas.species", "gas.temperature", "gas.amount", "domain.length", "domain.cells",
             "boundary.xmin", "boundary.xmax"]
    for path in missing:
        section, key = path.split(".")
        if key == "amount":
            data["gas"].pop("pressure", None)
            data["gas"].pop("number_density", None)
        else:
            del data[section][key]
    first = min(missing, key=order.index)
    refuse(to_toml(data), "gas" if first == "gas.amount" else first)


@FUZZ
@given(valid_case(), st.sampled_from(["xmin", "xmax"]), wall())
def test_generated_one_sided_periodic(data, side, other):
    data["boundary"] = {side: {"model": "periodic"},
                        "xmax" if side == "xmin" else "xmin": other}
    refuse(to_toml(data), "boundary")


@FUZZ
@given(valid_case(), st.integers(10**5, 10**7), st.floats(1e5, 1e6))
def test_generated_absurd_size(data, cells, ppc):
    data["domain"]["cells"] = cells
    data["numerics"]["particles_per_cell"] = ppc
    refuse(to_toml(data), "numerics.particles_per_cell")


@FUZZ
@given(valid_case(), st.integers(1, 10**6), st.sampled_from(["{", "[", "=", '"', "]]", "\\", "= ="]))
def test_generated_syntax_error(data, where, junk):
    text = to_toml(data)
    lines = text.splitlines()
    i = where % len(lines)
    lines[i] = lines[i] + " " + junk
    refuse("\n".join(lines) + "\n", None)


# ----------------------------------------------------------------------------
# a sample through a real process


SUBPROCESS = [HAND[0], HAND[len(SYNTAX) + 14], HAND[len(SYNTAX) + 40]] + [
    h for h in HAND if h[1] in ("numerics.particles_per_cell", "domain.cells")][-3:]


@pytest.mark.parametrize("text, key", SUBPROCESS, ids=[str(k) for _, k in SUBPROCESS])
def test_through_a_subprocess(tmp_path, text, key):
    COUNT["tried"] += 1
    path = tmp_path / "broken.toml"
    path.write_text(text, encoding="utf-8")
    proc = subprocess.run([sys.executable, "-m", "dsmc.cli", "run", str(path), "-o",
                           str(tmp_path / "out.h5")], capture_output=True, text=True,
                          cwd=tmp_path, timeout=120)
    check_refusal(proc.returncode, proc.stdout, proc.stderr, path, key, text)
    assert os.listdir(tmp_path) == ["broken.toml"]
    COUNT["rejected"] += 1


def test_zz_count(request, capsys):
    """Runs last (file order): at least 200 broken cases were tried, all refused correctly."""
    ran = [i for i in request.session.items if i.module is sys.modules[__name__]]
    if len(ran) < len(HAND) + 10:
        pytest.skip("only part of this file was selected")
    with capsys.disabled():
        print(f"\n{__name__}: {COUNT['tried']} broken case files tried, "
              f"{COUNT['rejected']} refused correctly")
    assert COUNT["tried"] >= 200
    assert COUNT["rejected"] == COUNT["tried"]
