"""The command line: user errors give one line and exit status 2, never a
traceback or a stray output file; `check`, `gas` and `run` print and write what
they promise.

`dsmc run` is exercised on a tiny case (5 cells, 10 particles per cell, 40
sampled steps) on one thread, which runs in well under a second once the
kernels are compiled; nothing here runs a real simulation.
"""

from __future__ import annotations

import math
import os
import re
import subprocess
import sys
from pathlib import Path

import h5py
import pytest

from dsmc.cli import main
from conftest import one_error_line

ROOT = Path(__file__).resolve().parents[1]
SHIPPED = sorted((ROOT / "cases").glob("*.toml"))
PLATE = ROOT / "cases" / "plate-gauge-fourier-transitional.toml"

TINY = """\
title = "tiny test case"

[gas]
species = "Ar"
temperature = 300.0
pressure = 100.0

[domain]
length = 1.0e-3
cells = 5

[boundary.xmin]
model = "diffuse"
velocity = [0.0, -50.0, 0.0]

[boundary.xmax]
model = "maxwell"
accommodation = 0.8
temperature = 350.0
velocity = [0.0, 50.0, 0.0]

[numerics]
particles_per_cell = 10

[run]
seed = 7
transient_steps = 0
sample_steps = 40
batches = 2
"""

FIGURES = ("cell_size_over_mean_free_path", "time_step_over_collision_time",
           "cell_transit_fraction", "particles_per_cell", "knudsen_number")


def write(path: Path, text: str) -> Path:
    path.write_text(text, encoding="utf-8")
    return path


def number_after(label: str, text: str) -> float:
    m = re.search(rf"^\s*{re.escape(label)}\s+(\S+)", text, re.M)
    assert m, f"no '{label}' in:\n{text}"
    return float(m.group(1))


# ----------------------------------------------------------------------------
# bad case files


def _syntax(d):
    return write(d / "bad.toml", TINY.replace("[gas]", "[gas"))


def _unknown_key(d):
    return write(d / "bad.toml", TINY.replace("accommodation", "accomodation"))


def _wrong_type(d):
    return write(d / "bad.toml", TINY.replace("cells = 5", "cells = 5.0"))


def _batches(d):
    return write(d / "bad.toml", TINY.replace("batches = 2", "batches = 41"))


def _missing(d):
    return d / "bad.toml"


def _directory(d):
    (d / "bad.toml").mkdir()
    return d / "bad.toml"


def _not_utf8(d):
    (d / "bad.toml").write_bytes(TINY.replace("tiny", "t\u00eeny").encode("latin-1"))
    return d / "bad.toml"


BAD = [
    (_syntax, "not valid TOML: "),
    (_unknown_key, "boundary.xmax.accomodation: unknown key (did you mean 'accommodation'?)"),
    (_wrong_type, "domain.cells: expected a whole number, got a number"),
    (_batches, "run: sample_steps / sample_interval = 40 samples cannot fill 41 batches"),
    (_missing, "no such case file"),
    (_directory, "is a directory, not a case file"),
    (_not_utf8, "not a UTF-8 text file"),
]
BAD_IDS = ["syntax", "unknown-key", "wrong-type", "batches", "missing", "directory", "not-utf8"]


@pytest.mark.parametrize("command", ["run", "check"])
@pytest.mark.parametrize("make, expected", BAD, ids=BAD_IDS)
def test_bad_case_exits_2_with_one_line(tmp_path, monkeypatch, capsys, command, make, expected):
    monkeypatch.chdir(tmp_path)  # `run` without -o would write ./bad.h5
    case = make(tmp_path)
    before = sorted(p.name for p in tmp_path.iterdir())
    argv = [command, str(case)] + (["-o", str(tmp_path / "out.h5")] if command == "run" else [])
    assert main(argv) == 2
    out, err = capsys.readouterr()
    line = one_error_line(err)
    assert line.startswith(f"dsmc: error: {case}: "), line
    assert expected in line, line
    assert out == ""
    assert sorted(p.name for p in tmp_path.iterdir()) == before  # nothing written


def test_bad_case_default_output_name_not_created(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    case = _unknown_key(tmp_path)
    assert main(["run", "bad.toml"]) == 2
    one_error_line(capsys.readouterr().err)
    assert not (tmp_path / "bad.h5").exists()
    assert [p.name for p in tmp_path.iterdir()] == [case.name]


def test_bad_case_through_a_subprocess(tmp_path):
    case = _unknown_key(tmp_path)
    out = tmp_path / "out.h5"
    proc = subprocess.run([sys.executable, "-m", "dsmc.cli", "run", str(case), "-o", str(out)],
                          capture_output=True, text=True, cwd=tmp_path, timeout=120)
    assert proc.returncode == 2, proc.stderr
    line = one_error_line(proc.stderr)
    assert line == (f"dsmc: error: {case}: boundary.xmax.accomodation: unknown key "
                    "(did you mean 'accommodation'?)")
    assert proc.stdout == ""
    assert not out.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == [case.name]


def test_unknown_command_is_a_usage_error(capsys):
    with pytest.raises(SystemExit) as info:
        main(["frobnicate"])
    assert info.value.code == 2
    assert "usage: dsmc" in capsys.readouterr().err


def test_negative_seed_is_a_user_error(tmp_path, capsys):
    case = write(tmp_path / "tiny.toml", TINY)
    assert main(["check", str(case), "--seed", "-1"]) == 2
    one_error_line(capsys.readouterr().err)


# ----------------------------------------------------------------------------
# dsmc check


@pytest.mark.parametrize("path", SHIPPED, ids=lambda p: p.stem)
def test_check_shipped_case(path, capsys):
    assert main(["check", str(path)]) == 0
    out, err = capsys.readouterr()
    assert err == ""
    assert f"case {path}: " in out and ": valid" in out
    assert "numerical adequacy:" in out
    for name in FIGURES:
        value = number_after(name, out)
        assert math.isfinite(value) and value > 0, (name, value)


def test_check_figures_are_consistent(capsys):
    assert main(["check", str(PLATE)]) == 0
    out = capsys.readouterr().out
    # "mean free path 0.0006131 m, mean collision time 1.477e-06 s"
    lam, tau = map(float, re.search(r"mean free path (\S+) m, mean collision time (\S+) s",
                                    out).groups())
    dt = float(re.search(r"time step (\S+) s", out).group(1))
    length, cells, ppc = 1.0e-3, 50, 60  # from the case file
    assert number_after("knudsen_number", out) == pytest.approx(lam / length, rel=2e-3)
    assert number_after("cell_size_over_mean_free_path", out) == pytest.approx(
        length / cells / lam, rel=2e-3)
    assert number_after("time_step_over_collision_time", out) == pytest.approx(dt / tau, rel=2e-3)
    assert number_after("particles_per_cell", out) == pytest.approx(ppc, rel=0.05)
    # automatic step = min(0.25 tau_c, 0.5 dx / c_mp): one bound met, neither exceeded
    use = (number_after("time_step_over_collision_time", out) / 0.25,
           number_after("cell_transit_fraction", out) / 0.5)
    assert max(use) == pytest.approx(1.0, rel=2e-3)
    # the gas line: p = 10 Pa at 325 K -> n = p / (k T)
    n = float(re.search(r"n (\S+) 1/m\^3", out).group(1))
    assert n == pytest.approx(10.0 / (1.380649e-23 * 325.0), rel=1e-4)


def test_check_warns_about_a_coarse_case(tmp_path, capsys):
    case = write(tmp_path / "tiny.toml", TINY)  # 10 particles per cell, cells > lambda
    assert main(["check", str(case)]) == 0
    out = capsys.readouterr().out
    assert "warning: particles_per_cell = 10 < 20" in out
    assert "warning: cell_size_over_mean_free_path" in out


# ----------------------------------------------------------------------------
# dsmc gas


def test_gas_summary(capsys):
    assert main(["gas", "Ar", "--T", "300", "--p", "100", "--length", "1e-3"]) == 0
    out, err = capsys.readouterr()
    assert err == ""
    mu = number_after("viscosity", out)
    lam = number_after("mean_free_path", out)
    kn = number_after("Kn", out)
    assert re.search(r"^viscosity\s+\S+ Pa s$", out, re.M)
    assert re.search(r"^mean_free_path\s+\S+ m$", out, re.M)
    # argon at 300 K, 100 Pa: 22.72e-6 Pa s from the reference correlation in CoolProp 6
    # (PropsSI('V', 'T', 300, 'P', 100, 'Argon'), evaluated once, not imported here)
    assert mu == pytest.approx(22.7e-6, rel=0.03)
    assert kn == pytest.approx(lam / 1e-3, rel=2e-3)
    assert 1e-5 < lam < 1e-4  # tens of micrometres at 100 Pa
    assert number_after("n", out) == pytest.approx(100.0 / (1.380649e-23 * 300.0), rel=1e-3)


def test_gas_without_length_has_no_knudsen_number(capsys):
    assert main(["gas", "N2"]) == 0
    out = capsys.readouterr().out
    assert "viscosity" in out and not re.search(r"^Kn\s", out, re.M)


@pytest.mark.parametrize("name, suggestion", [("Argn", "Ar"), ("nitrogn", "N2"), ("Xx", "Xe")])
def test_gas_unknown_name(capsys, name, suggestion):
    assert main(["gas", name]) == 2
    out, err = capsys.readouterr()
    line = one_error_line(err)
    assert line.startswith(f"dsmc: error: unknown gas '{name}' (did you mean '{suggestion}'?)")
    assert "known: He, Ne, Ar" in line
    assert out == ""


def test_gas_unknown_name_through_a_subprocess():
    proc = subprocess.run([sys.executable, "-m", "dsmc.cli", "gas", "Argn"],
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2
    assert one_error_line(proc.stderr).startswith(
        "dsmc: error: unknown gas 'Argn' (did you mean 'Ar'?)")


@pytest.mark.parametrize("argv, expected", [
    (["gas", "Ar", "--model", "xx"], "unknown collision model 'xx'"),
    (["gas", "Ar", "--T", "-5"], "temperature must be positive"),
    (["gas", "Ar", "--p", "0"], "pressure must be positive"),
])
def test_gas_bad_arguments(capsys, argv, expected):
    assert main(argv) == 2
    assert expected in one_error_line(capsys.readouterr().err)


# ----------------------------------------------------------------------------
# dsmc run


@pytest.fixture(scope="module")
def tiny_run(tmp_path_factory):
    """Run the tiny case once; return (case path, result path)."""
    d = tmp_path_factory.mktemp("run")
    case = write(d / "tiny.toml", TINY)
    out = d / "tiny-result.h5"
    assert main(["run", str(case), "-o", str(out), "--quiet", "--threads", "1"]) == 0
    return case, out


def test_run_writes_plain_hdf5_with_units(tiny_run):
    _, out = tiny_run
    datasets = {}

    def collect(name, obj):  # must return None, or visititems stops
        if isinstance(obj, h5py.Dataset):
            datasets[name] = obj.attrs.get("units")

    with h5py.File(out, "r") as f:
        assert f.attrs["schema"] == "dsmc-results"
        assert f.attrs["title"] == "tiny test case"
        f.visititems(collect)
        steps = int(f["run/steps"][()])
        x = f["grid/x"][()]
    assert len(datasets) > 10
    missing = sorted(k for k, u in datasets.items() if not isinstance(u, str) or not u)
    assert not missing, f"datasets without a units attribute: {missing}"
    assert steps == 40, "run/steps must be transient_steps + sample_steps = 0 + 40"
    assert x.shape == (5,)
    assert not any(p.name.endswith(".part") for p in out.parent.iterdir())


def test_run_refuses_to_overwrite(tiny_run, capsys):
    case, _ = tiny_run
    out = case.parent / "existing.h5"
    out.write_bytes(b"precious data")
    stamp = out.stat().st_mtime_ns
    assert main(["run", str(case), "-o", str(out)]) == 2
    stdout, err = capsys.readouterr()
    assert one_error_line(err) == f"dsmc: error: {out}: exists already (use --force to replace it)"
    assert stdout == ""  # refused before anything was run
    assert out.read_bytes() == b"precious data"
    assert out.stat().st_mtime_ns == stamp


def test_run_force_replaces(tiny_run, capsys):
    case, _ = tiny_run
    out = case.parent / "replace-me.h5"
    out.write_bytes(b"old")
    assert main(["run", str(case), "-o", str(out), "--force", "--threads", "1"]) == 0
    stdout = capsys.readouterr().out
    assert f"wrote {out}" in stdout
    assert "numerical adequacy:" in stdout
    with h5py.File(out, "r") as f:
        assert f.attrs["schema"] == "dsmc-results"


def test_run_default_output_name(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    write(tmp_path / "small.toml", TINY)
    assert main(["run", "small.toml", "--quiet", "--threads", "1"]) == 0
    assert capsys.readouterr() == ("", "")  # --quiet: nothing on either stream
    assert (tmp_path / "small.h5").is_file()
    assert sorted(os.listdir(tmp_path)) == ["small.h5", "small.toml"]


@pytest.mark.parametrize("steps, interval", [(45, 1), (25, 10)])
def test_run_batches_as_the_case_says(tmp_path, steps, interval):
    case = write(tmp_path / "rem.toml", TINY.replace(
        "sample_steps = 40", f"sample_steps = {steps}\nsample_interval = {interval}"))
    out = tmp_path / "rem.h5"
    assert main(["run", str(case), "-o", str(out), "--quiet", "--threads", "1"]) == 0
    with h5py.File(out, "r") as f:
        got = {k: int(f[f"run/{k}"][()]) for k in ("batches", "sampled_steps", "samples")}
    assert got == {"batches": 2, "sampled_steps": steps, "samples": steps // interval}


def test_run_refuses_a_missing_output_directory_before_running(tmp_path, capsys):
    case = write(tmp_path / "tiny.toml", TINY)
    assert main(["run", str(case), "-o", str(tmp_path / "no" / "x.h5")]) == 2
    line = one_error_line(capsys.readouterr().err)
    assert "does not exist" in line
