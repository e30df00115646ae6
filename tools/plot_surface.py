#!/usr/bin/env python3
"""Surface distributions on the bodies of a 2-D result file.

    python tools/plot_surface.py RESULT.h5 [--free-molecular] [-o OUT.png]

One row of panels per body (``/bodies/NAME`` groups): the pressure, skin
friction and heat-transfer coefficients (or, when the freestream is at rest,
the pressure, shear stress and heat flux) against the polar angle from the
freestream stagnation direction for a circle, or the distance along the outline
for a polygon, each with error bars of one batch-means standard error.  The
drag and lift per unit depth and their coefficients are written in the panel
titles.  ``--free-molecular`` draws the exact collisionless distributions of a
convex body in the same freestream (``dsmc.analysis.free_molecular``) for
comparison; that limit holds only where the freestream mean free path is large
next to the body.

Only h5py, numpy and matplotlib are needed (plus the dsmc package for
``--free-molecular``); the layout is in ``docs/output.md`` (``/bodies``).
"""

from __future__ import annotations

import argparse
import math
import sys
from pathlib import Path

import h5py
import matplotlib
import numpy as np

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402

K_B = 1.380649e-23  # J/K, exact (SI 2019)

COEFFICIENTS = (("pressure_coefficient", "$C_p$"), ("skin_friction_coefficient", "$C_f$"),
                ("heat_transfer_coefficient", "$C_h$"))
DIMENSIONAL = (("pressure", "pressure"), ("shear_stress", "shear stress"),
               ("heat_flux", "heat flux"))


def _free_molecular(f, body):
    """Exact collisionless Cp, Cf, Ch of the panels of a convex body in the freestream."""
    from dsmc.analysis import free_molecular as fm

    fs = f["freestream"]
    n = float(fs["number_density"][()])
    T = float(fs["temperature"][()])
    u = fs["velocity"][()][:2]
    m = float(f["gas/mass"][0])
    U = float(np.hypot(*u))
    e = u / U
    normal = body["panel_normal"][()]
    cos_in = -(normal @ e)  # > 0 on the windward side
    Tw = float(body["temperature"][()])
    a = float(body.attrs.get("accommodation", 1.0)) if body.attrs.get("model") == "maxwell" else 1.0
    el = fm.surface_element(n, T, m, U * cos_in, U * np.sqrt(np.clip(1 - cos_in ** 2, 0, None)), Tw, a)
    c = fm.coefficients(el, n, T, m, U)
    # the shear acts along the tangential drift; the file's shear is along t = (-n_y, n_x)
    t = np.column_stack([-normal[:, 1], normal[:, 0]])
    sign = np.sign(t @ e)
    return {"pressure_coefficient": c.Cp, "skin_friction_coefficient": c.Cf * sign,
            "heat_transfer_coefficient": c.Ch}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("result", help="result file of a 2-D case with [[body]] tables")
    ap.add_argument("--free-molecular", action="store_true",
                    help="draw the exact collisionless distributions too")
    ap.add_argument("-o", "--output", help="PNG to write (default: RESULT with _surface.png)")
    args = ap.parse_args(argv)
    path = Path(args.result)
    out = Path(args.output) if args.output else path.with_name(path.stem + "_surface.png")
    try:
        f = h5py.File(path, "r")
    except OSError as err:
        print(f"plot_surface: {path}: cannot open: {err}", file=sys.stderr)
        return 2
    with f:
        if "bodies" not in f or not len(f["bodies"]):
            print(f"plot_surface: {path}: no bodies in this result file", file=sys.stderr)
            return 2
        names = list(f["bodies"])
        u = f["freestream/velocity"][()][:2]
        moving = float(np.hypot(*u)) > 0.0
        quantities = COEFFICIENTS if moving else DIMENSIONAL
        fig, axes = plt.subplots(len(names), 3, figsize=(13, 3.6 * len(names)), squeeze=False,
                                 constrained_layout=True)
        stag = math.atan2(-u[1], -u[0]) if moving else 0.0  # direction the flow comes from
        for row, name in zip(axes, names):
            b = f["bodies"][name]
            if b.attrs["shape"] == "circle":
                ang = np.degrees(np.mod(b["panel_angle"][()] - stag + math.pi, 2 * math.pi) - math.pi)
                xlabel = "angle from the stagnation direction (deg)"
                order = np.argsort(ang)
                xs = ang
            else:
                xs = b["panel_arc"][()]
                scale, unit = (1e6, "um") if xs.max() < 1e-3 else (1e3, "mm") if xs.max() < 1 else (1, "m")
                xs = xs * scale
                xlabel = f"distance along the outline from vertex 0 ({unit})"
                order = np.arange(xs.size)
            fm = _free_molecular(f, b) if args.free_molecular and moving else None
            for ax, (key, label) in zip(row, quantities):
                val = b[key][()]
                err = b[key + "_stderr"][()]
                units = b[key].attrs.get("units", "1")
                ax.errorbar(xs[order], val[order], yerr=err[order], fmt=".", ms=3, lw=0.8,
                            label="DSMC")
                if fm is not None:
                    ax.plot(xs[order], fm[key][order], "-", lw=1.0, label="free-molecular")
                    ax.legend(fontsize=8)
                ax.set_xlabel(xlabel)
                ax.set_ylabel(label if units == "1" else f"{label} ({units})")
                ax.grid(alpha=0.3)
            loads = f"drag {b['drag'][()]:.4g} N/m, lift {b['lift'][()]:.4g} N/m" if "drag" in b else (
                f"force ({b['force'][0]:.3g}, {b['force'][1]:.3g}) N/m")
            if "drag_coefficient" in b:
                loads += (f"; CD = {b['drag_coefficient'][()]:.4f} ± {b['drag_coefficient_stderr'][()]:.4f},"
                          f" CL = {b['lift_coefficient'][()]:.4f} ± {b['lift_coefficient_stderr'][()]:.4f}")
            row[0].set_title(f"{name}: {loads}", loc="left", fontsize=9)
        fig.suptitle(str(f.attrs.get("title", path.stem)))
        fig.savefig(out, dpi=120)
    print(f"wrote {out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
