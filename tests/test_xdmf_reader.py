"""The XDMF sidecar read by VTK's XDMF reader, the reader general-purpose viewers use.

VTK (the Visualization Toolkit, from the package index) is the outside reference here: what
its ``vtkXdmfReader`` makes of the sidecar is what a viewer shows.  A box with cells of
different width and height (dx = 2 dy) and a circular body: the mesh must lie in the x-y
plane with the box's bounds, every field at a VTK cell centre must be the HDF5 value
``[iy, ix]`` of the cell that contains that centre, and the body's panel grid must carry the
panel mid-points and values of ``/bodies/NAME``.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

import h5py
import numpy as np
from vtkmodules.util.numpy_support import vtk_to_numpy
from vtkmodules.vtkCommonCore import vtkOutputWindow, vtkStringOutputWindow
from vtkmodules.vtkFiltersCore import vtkCellCenters
from vtkmodules.vtkIOXdmf2 import vtkXdmfReader

from conftest import CASES
from dsmc.case import parse_case
from dsmc.runner import run_case

LX, LY, NX, NY = 2.0e-5, 0.5e-5, 16, 8  # dx = 1.25e-6 = 2 dy

BODY = """
[[body]]
name = "post"
shape = "circle"
center = [1.2e-5, 0.25e-5]
radius = 1.0e-6
panels = 12
model = "diffuse"
temperature = 300.0
"""


def read_xdmf(path) -> dict:
    """The blocks VTK reads from ``path``, by name, and the reader's error text (empty when
    it read everything)."""
    errors = vtkStringOutputWindow()
    previous = vtkOutputWindow.GetInstance()
    vtkOutputWindow.SetInstance(errors)
    try:
        reader = vtkXdmfReader()
        reader.SetFileName(str(path))
        reader.Update()
    finally:
        vtkOutputWindow.SetInstance(previous)
    out = reader.GetOutputDataObject(0)
    if out.IsA("vtkMultiBlockDataSet"):  # several grids: one block each, named after the grid
        blocks = {out.GetMetaData(b).Get(out.NAME()): out.GetBlock(b)
                  for b in range(out.GetNumberOfBlocks())}
    else:  # a single grid is read as that grid
        (grid,) = ET.parse(path).getroot().iter("Grid")
        blocks = {grid.get("Name"): out}
    return {"blocks": blocks, "errors": errors.GetOutput()}


def check_fields(mesh, h5: h5py.File) -> int:
    """Every cell array of the VTK ``mesh`` equals the HDF5 field at the cell holding each VTK
    cell centre; returns the number of arrays compared."""
    xe, ye = h5["grid/x_edges"][()], h5["grid/y_edges"][()]
    lo, hi = mesh.GetBounds()[0::2], mesh.GetBounds()[1::2]
    assert np.allclose(lo, (xe[0], ye[0], 0.0), rtol=0, atol=1e-12 * xe[-1])
    assert np.allclose(hi, (xe[-1], ye[-1], 0.0), rtol=0, atol=1e-12 * xe[-1])
    assert mesh.GetNumberOfCells() == (xe.size - 1) * (ye.size - 1)
    centres = vtkCellCenters()
    centres.SetInputData(mesh)
    centres.Update()
    c = vtk_to_numpy(centres.GetOutput().GetPoints().GetData())
    ix = np.searchsorted(xe, c[:, 0]) - 1
    iy = np.searchsorted(ye, c[:, 1]) - 1
    data = mesh.GetCellData()
    names = [data.GetArrayName(i) for i in range(data.GetNumberOfArrays())]
    for name in names:
        got = vtk_to_numpy(data.GetArray(name))
        want = h5["fields"][name][()][iy, ix]
        assert np.array_equal(got, want, equal_nan=True), name
    return len(names)


def test_vtk_reads_the_fields_in_the_xy_plane_and_the_body_panels(tmp_path):
    text = (CASES / "slider-pocket-cavity-lid-driven.toml").read_text()
    text = text.replace("length = [1.0e-5, 1.0e-5]", f"length = [{LX!r}, {LY!r}]")
    text = text.replace("cells = [20, 20]", f"cells = [{NX}, {NY}]") + BODY
    case = parse_case(text, "<xdmf>").with_run(transient_steps=20, sample_steps=40, batches=2)
    out = tmp_path / "pocket.h5"
    status, _ = run_case(case, out, threads=1, quiet=True)
    assert status == 0
    got = read_xdmf(out.with_suffix(".xmf"))
    assert got["errors"] == ""
    blocks = got["blocks"]
    assert set(blocks) == {case.title, "post"}
    with h5py.File(out) as f:
        n = check_fields(blocks[case.title], f)
        assert n == sum(1 for k in f["fields"] if f["fields"][k].shape[:2] == (NY, NX)
                        and (f["fields"][k].ndim == 2 or k.removesuffix("_stderr")
                             in ("velocity", "heat_flux", "temperature_components")))
        # the lid (y = LY) drags the gas in +x: the top row moves faster than the bottom row
        u = vtk_to_numpy(blocks[case.title].GetCellData().GetArray("velocity"))[:, 0]
        assert np.nanmean(u[-NX:]) > np.nanmean(u[:NX])
        post = blocks["post"]
        points = vtk_to_numpy(post.GetPoints().GetData())
        assert np.array_equal(points[:, :2], f["bodies/post/panel_center"][()])
        assert np.allclose(points[:, 2], 0.0)
        data = post.GetPointData()
        names = {data.GetArrayName(i) for i in range(data.GetNumberOfArrays())}
        assert {"pressure", "shear_stress", "heat_flux", "number_flux"} <= names
        for name in names:
            assert np.array_equal(vtk_to_numpy(data.GetArray(name)), f[f"bodies/post/{name}"][()]), name
