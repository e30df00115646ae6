#!/usr/bin/env python3
"""Plot the profiles of a normal-shock result file with the Rankine-Hugoniot levels marked.

    python tools/plot_shock.py RESULT.h5 [-o OUT.png]

Three panels against the shock-frame coordinate (x minus the position of the
steepest density slope) in upstream mean free paths: number density,
velocity u_x, and the temperatures T, T_xx ('normal') and
(T_yy + T_zz)/2 ('parallel'); each with one batch-means standard error as a
band, and the upstream and downstream Rankine-Hugoniot values of the file's
``/shock`` group as dashed lines.  The title gives the Mach number and the
inverse density thickness lambda1/delta with its jackknife error.

Like ``tools/plot_profiles.py`` it uses only h5py and matplotlib; the layout
is in ``docs/output.md`` (``/shock``, ``/fields``).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import h5py
import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("result", help="result file of a [shock] case")
    ap.add_argument("-o", "--output", help="PNG to write (default: RESULT with .png)")
    args = ap.parse_args(argv)
    path = Path(args.result)
    out = Path(args.output) if args.output else path.with_suffix(".png")
    try:
        f = h5py.File(path, "r")
    except OSError as err:
        print(f"plot_shock: {path}: cannot open: {err}", file=sys.stderr)
        return 2
    with f:
        if "shock" not in f:
            print(f"plot_shock: {path}: no /shock group (not a [shock] case)", file=sys.stderr)
            return 2
        s = f["shock"]
        lam = s["mean_free_path_upstream"][()]
        xi = s["x"][:] / lam
        fl = f["fields"]
        panels = [
            ("number density $n$ (1/m$^3$)",
             [("n", fl["number_density"][:], fl["number_density_stderr"][:])],
             s["upstream_number_density"][()], s["downstream_number_density"][()]),
            ("velocity $u_x$ (m/s)",
             [("$u_x$", fl["velocity"][:, 0], fl["velocity_stderr"][:, 0])],
             s["upstream_velocity"][()], s["downstream_velocity"][()]),
            ("temperature (K)",
             [("$T$", fl["temperature"][:], fl["temperature_stderr"][:]),
              ("$T_{xx}$ normal", s["normal_temperature"][:], s["normal_temperature_stderr"][:]),
              ("$(T_{yy}+T_{zz})/2$ parallel", s["parallel_temperature"][:],
               s["parallel_temperature_stderr"][:])],
             s["upstream_temperature"][()], s["downstream_temperature"][()]),
        ]
        mach = s["mach"][()]
        inv = s["inverse_density_thickness"][()]
        inv_se = s["inverse_density_thickness_stderr"][()]
        title = f.attrs.get("title", path.stem)
    fig, axes = plt.subplots(3, 1, figsize=(7.0, 9.0), dpi=120, sharex=True)
    for ax, (label, curves, up, down) in zip(axes, panels):
        for name, y, err in curves:
            line, = ax.plot(xi, y, "-", lw=1.2, label=name)
            ax.fill_between(xi, y - err, y + err, color=line.get_color(), alpha=0.3, lw=0)
        ax.axhline(up, ls="--", color="0.3", lw=0.9, label="Rankine-Hugoniot upstream")
        ax.axhline(down, ls=":", color="0.1", lw=1.1, label="Rankine-Hugoniot downstream")
        ax.set_ylabel(label)
        ax.grid(alpha=0.3)
        ax.legend(fontsize=7, loc="best")
    axes[-1].set_xlabel(r"$(x - x_{\rm shock}) / \lambda_1$")
    fig.suptitle(f"{title}\nM = {mach:g}, $\\lambda_1/\\delta$ = {inv:.3f} $\\pm$ {inv_se:.3f}",
                 fontsize=10)
    fig.tight_layout()
    fig.savefig(out)
    plt.close(fig)
    print(f"wrote {out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
