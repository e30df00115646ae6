"""A DSMC Knudsen sweep against the analytic limits, and the hard-sphere slip coefficient.

Cost: about 100 s on two cores (the Kn = 0.01 point, 439 cells, takes ~85 s
alone; the hard-sphere run, ~60 s, shares the second core with the other
points).  Kn = ell/L throughout, ell = mu sqrt(2kT/m)/p the equivalent free
path at the mean wall temperature (the free path the slip coefficients of
dsmc.analysis.limits refer to); for VHS argon the model mean free path is
lambda = ell/1.46, so Kn_lambda = Kn/1.46.

Findings (seed fixed, numbers of this suite):

* Kn = 10: DSMC shear stress is about 7 % and heat flux about 5 % below the
  exact collisionless values (standard errors 0.2-0.35 % and 0.8-1 %).  This is the
  physical O(1/Kn) effect of the few collisions left, of the same size as the
  -3.5 % measured earlier at Kn 24 (diffuse walls), so agreement within 2 %
  at Kn = 10 is not attainable with either Kn definition (Kn_lambda = 10 is
  Kn = 14.6, still about -5 %).  The 2 % free-molecular check is therefore
  made at Kn = 100, and the Kn = 10 expectation is kept as a strict xfail.
* Kn = 0.01: the shear stress is checked against the slip solution within
  3 %; its standard error is 1.5-2.2 % in the time we allow, so the check
  has power only against departures of about 3 standard errors.  The heat
  flux there has a 5 % batch error, not trustworthy because the batches are
  shorter than the diffusion time, and is not checked here; tools/validate.py
  (fourier_kn001) runs the Kn 0.01 Fourier gap with batches 5 diffusion times
  long: +0.86 % +- 0.53 % from NSF with the temperature jump (22 min, one core).
"""

from __future__ import annotations

import math
import multiprocessing
from concurrent.futures import ProcessPoolExecutor

import pytest

from dsmc.analysis import limits
from dsmc.analysis.report import compare, transport_for
from dsmc.gas import K_B, get_species
from dsmc.parallel import _init_worker, run_point, run_sweep

from conftest import CASES

pytestmark = pytest.mark.slow

BASE = CASES / "sweep-shuttle-gap-couette.toml"
KN = (0.01, 0.1, 1.0, 3.0, 10.0, 100.0)

HS_CASE = """
title = "Hard-sphere argon, diffuse walls, Couette at Kn = ell/L = 0.05"
[gas]
species = "Ar"
collision_model = "hs"
temperature = 273.15
pressure = {p!r}
[domain]
length = 2.0e-6
cells = 68                # lambda_HS = ell/1.108: dx = lambda/3
[boundary.xmin]
model = "diffuse"
velocity = [0.0, -150.0, 0.0]
[boundary.xmax]
model = "diffuse"
velocity = [0.0, 150.0, 0.0]
[initial]
profile = "linear"
[numerics]
particles_per_cell = 80
[run]
seed = 7
transient_steps = 3000    # diffusion time ~ 400 steps here
sample_steps = 100000
batches = 20              # 5000 steps a batch, >> the diffusion time
"""


def _pressure_for(kn, T=350.0, L=2.0e-6, model="vhs"):
    sp = get_species("Ar")
    mu = float(transport_for("Ar", model).mu(T))
    return mu * math.sqrt(2.0 * K_B * T / sp.mass) / (kn * L)


@pytest.fixture(scope="module")
def sweep(tmp_path_factory):
    out = tmp_path_factory.mktemp("sweep")
    ctx = multiprocessing.get_context("spawn")
    with ProcessPoolExecutor(1, mp_context=ctx, initializer=_init_worker) as pool:
        hs = pool.submit(run_point, HS_CASE.format(p=_pressure_for(0.05, 273.15, model="hs")),
                         "<hs>", str(out / "hs.h5"))
        res = run_sweep(BASE, pressures=[_pressure_for(k) for k in KN], jobs=2, out_dir=out,
                        log=lambda *a: None)
        res["hs"] = hs.result()["path"]
    res["rows"].sort(key=lambda r: r.kn_ell)
    return res


def _at(res, kn):
    row = min(res["rows"], key=lambda r: abs(math.log(r.kn_ell / kn)))
    assert row.kn_ell == pytest.approx(kn, rel=0.01)
    return row


def test_sweep_writes_files(sweep):
    csv_path, h5_path = sweep["summary"]
    assert csv_path.read_text().count("\n") == len(KN) + 1
    assert h5_path.stat().st_size > 0
    assert sweep["plots"][0].read_bytes().startswith(b"\x89PNG\r\n\x1a\n")
    for r in sweep["rows"]:
        assert r.cells >= 20 and r.cells * r.kn_lambda >= 3.0 - 1e-9  # dx <= lambda/3


@pytest.mark.parametrize("name", ["tau", "q"])
def test_dsmc_lies_between_the_limits(sweep, name):
    """|DSMC| never exceeds the no-slip or the free-molecular magnitude by 2 standard
    errors, and lies clearly (> 2 standard errors) below both for 0.1 <= Kn <= 10, where
    the two limits and the slip correction are far apart from DSMC."""
    for r in sweep["rows"]:
        v, se = abs(getattr(r, name)), getattr(r, name + "_se")
        ns, fm = abs(getattr(r, name + "_no_slip")), abs(getattr(r, name + "_fm"))
        if name == "q" and r.kn_ell < 0.05:
            # at Kn 0.01 the batches (2000 steps) are ~10x shorter than the diffusion
            # time, and the batch error of q (5 %) is not trustworthy; measured q was
            # 0.7 % below no-slip in one engine version and 13 % (2.3 errors) above it
            # in the next: no check is possible there within the time budget
            continue
        assert v < min(ns, fm) + 2 * se, (r.kn_ell, v, ns, fm, se)
        if 0.09 <= r.kn_ell <= 11.0:
            assert v + 2 * se < min(ns, fm), (r.kn_ell, v, ns, fm, se)


def test_slip_flow_at_kn_001(sweep):
    r = _at(sweep, 0.01)
    print(f"Kn 0.01: tau/tau_slip - 1 = {r.tau / r.tau_slip - 1:+.4f} +- {r.tau_se / abs(r.tau):.4f}")
    # precision of this check: 1.5 % and 2.2 % measured with two sets of random streams (the
    # error of 20 batches is itself uncertain by about 16 %, more with batches shorter than
    # the diffusion time)
    assert r.tau_se < 0.025 * abs(r.tau)
    assert abs(r.tau - r.tau_slip) < 0.03 * abs(r.tau_slip)


def test_free_molecular_at_kn_100(sweep):
    r = _at(sweep, 100.0)
    for name in ("tau", "q"):
        v, se, fm = getattr(r, name), getattr(r, name + "_se"), getattr(r, name + "_fm")
        assert se < 0.01 * abs(fm)               # 0.3 % (shear), 0.9 % (heat) measured
        assert abs(v - fm) < 0.02 * abs(fm)


def test_approach_to_free_molecular_is_from_below_and_shrinks(sweep):
    """Few collisions reduce both fluxes below the collisionless ones; the reduction
    shrinks as Kn grows (it is O(1/Kn))."""
    for name in ("tau", "q"):
        devs = []
        for kn in (3.0, 10.0, 100.0):
            r = _at(sweep, kn)
            v, se, fm = abs(getattr(r, name)), getattr(r, name + "_se"), abs(getattr(r, name + "_fm"))
            assert v + 2 * se < fm or kn == 100.0
            devs.append(1.0 - v / fm)
        assert devs[0] > devs[1] > devs[2]


@pytest.mark.xfail(strict=True, reason="physically unattainable: at Kn = ell/L = 10 the DSMC "
                   "fluxes are about 7 % (shear) and 5 % (heat) below the collisionless values, "
                   "the O(1/Kn) effect of the remaining collisions")
def test_free_molecular_within_2_percent_at_kn_10(sweep):
    r = _at(sweep, 10.0)
    assert abs(r.tau - r.tau_fm) < 0.02 * abs(r.tau_fm)
    assert abs(r.q - r.q_fm) < 0.02 * abs(r.q_fm)


def test_verdict(sweep):
    v = sweep["verdict"]
    # the shear slip model holds within 5 % up to Kn ~ 3 and fails by Kn 10;
    # the heat-flux jump model fails earlier (between Kn 1 and 3)
    assert v["tau"]["kn_departs"] is not None and 3.0 <= v["tau"]["kn_departs"] <= 10.0
    assert v["q"]["kn_departs"] is not None and 0.1 <= v["q"]["kn_departs"] <= 3.0


def test_hard_sphere_slip_coefficient(sweep):
    """Viscous slip coefficient of hard spheres with diffuse walls vs Ohwada, Sone and
    Aoki (1989), k0 = -1.2540 -> sigma_P = 0.98737 in units of ell (from memory, via
    limits.DIFFUSE_COEFFICIENTS), within 10 %.

    The coefficient is the mean of the two walls with mu du/dn from the measured shear
    stress (so the 1-2 % gap between the true hard-sphere viscosity and its
    Chapman-Enskog first approximation does not enter); its jackknife error was 2.5 % and
    3.6 % of it with two sets of random streams, so 10 % is 3-4 standard errors."""
    c = compare(sweep["hs"])
    sigma, err = c.fit.mean["sigma_measured_mu"]
    ref = limits.DIFFUSE_COEFFICIENTS["hard_sphere"]["sigma_P"]
    print(f"hard-sphere slip coefficient {sigma:.4f} +- {err:.4f} (reference {ref:.5f})")
    assert err < 0.045 * ref  # the check below is then at least 2.2 standard errors wide
    assert abs(sigma - ref) < 0.10 * ref, (sigma, err, ref)
