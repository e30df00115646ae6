"""XDMF sidecar of a 2-D result file, so that general-purpose viewers open its fields.

XDMF 3 (the eXtensible Data Model and Format, an open standard: light XML
describing heavy data kept in HDF5) describes the grid and points at the
HDF5 datasets; no data is copied.  The grid is a rectilinear mesh
(``2DRectMesh``) with ``(ny + 1) x (nx + 1)`` nodes whose ``VXVY`` geometry
points at the cell edges ``/grid/x_edges`` and ``/grid/y_edges``.  Checked with
VTK's XDMF reader (``vtkXdmfReader``, the reader of general-purpose viewers;
``tests/test_xdmf_reader.py``): the mesh lies in the x-y plane with the box's
bounds, and every field at a cell centre is the HDF5 value ``[iy, ix]``.  A
``2DCoRectMesh`` with ``ORIGIN_DXDY`` (origin and spacing only), used before,
was read into the y-z plane, x along y.  Every ``/fields`` dataset of
shape ``(ny, nx)`` becomes a cell-centred ``Scalar`` attribute, and those of
shape ``(ny, nx, 3)`` named in ``VECTOR_FIELDS`` a cell-centred ``Vector``;
the standard errors (``*_stderr``) are included the same way.  Other
datasets (the pressure tensor, per-species fields) stay in the HDF5 file only.

Each embedded body (``/bodies/NAME``) becomes a second grid named after it:
the mid-points of its sampling panels as a ``Polyvertex`` topology with
``XY`` geometry (``panel_center``), carrying every per-panel dataset (shape
``(panels,)``: pressure, shear stress, heat and number flux, the
coefficients and their standard errors) as a node-centred ``Scalar``.

This module reads HDF5 with h5py and writes XML with the standard library:
it does not import the engine.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET
from pathlib import Path

import h5py

VECTOR_FIELDS = ("velocity", "heat_flux", "temperature_components")


def xdmf_path(results: str | Path) -> Path:
    """``OUT.xmf`` beside ``OUT.h5``."""
    return Path(results).with_suffix(".xmf")


def write_xdmf(results: str | Path, out: str | Path | None = None) -> Path:
    """Write the XDMF sidecar of the 2-D result file ``results``; returns its path.

    Raises ``ValueError`` for a 1-D result file (its profiles need no viewer mesh).
    """
    results = Path(results)
    out = xdmf_path(results) if out is None else Path(out)
    with h5py.File(results, "r") as f:
        if int(f.attrs.get("dimension", 1)) != 2:
            raise ValueError(f"{results}: not a 2-D result file")
        x_edges = f["grid/x_edges"][()]
        y_edges = f["grid/y_edges"][()]
        ny, nx = y_edges.size - 1, x_edges.size - 1
        fields = []
        for name in sorted(f["fields"]):
            ds = f["fields"][name]
            base = name.removesuffix("_stderr")
            if ds.shape == (ny, nx):
                fields.append((name, "Scalar", ds.shape))
            elif ds.shape == (ny, nx, 3) and base in VECTOR_FIELDS:
                fields.append((name, "Vector", ds.shape))
        title = str(f.attrs.get("title", ""))
        surfaces = []
        for name, g in (f["bodies"].items() if "bodies" in f else ()):
            P = g["panel_center"].shape[0]
            scalars = [k for k in sorted(g) if g[k].shape == (P,) and not k.startswith("panel_")]
            surfaces.append((name, P, scalars))
    href = results.name  # the sidecar sits beside the result file

    root = ET.Element("Xdmf", Version="3.0")
    domain = ET.SubElement(root, "Domain")
    grid = ET.SubElement(domain, "Grid", Name=title or "fields", GridType="Uniform")
    ET.SubElement(grid, "Topology", TopologyType="2DRectMesh", Dimensions=f"{ny + 1} {nx + 1}")
    geo = ET.SubElement(grid, "Geometry", GeometryType="VXVY")
    for axis, count in (("x", nx + 1), ("y", ny + 1)):
        item = ET.SubElement(geo, "DataItem", Name=f"{axis}_edges", Dimensions=str(count),
                             NumberType="Float", Precision="8", Format="HDF")
        item.text = f"{href}:/grid/{axis}_edges"
    for name, kind, shape in fields:
        att = ET.SubElement(grid, "Attribute", Name=name, AttributeType=kind, Center="Cell")
        item = ET.SubElement(att, "DataItem", Dimensions=" ".join(str(s) for s in shape),
                             NumberType="Float", Precision="8", Format="HDF")
        item.text = f"{href}:/fields/{name}"
    for body, P, scalars in surfaces:
        grid = ET.SubElement(domain, "Grid", Name=body, GridType="Uniform")
        ET.SubElement(grid, "Topology", TopologyType="Polyvertex", NumberOfElements=str(P),
                      NodesPerElement="1")
        geo = ET.SubElement(grid, "Geometry", GeometryType="XY")
        item = ET.SubElement(geo, "DataItem", Dimensions=f"{P} 2", NumberType="Float",
                             Precision="8", Format="HDF")
        item.text = f"{href}:/bodies/{body}/panel_center"
        for name in scalars:
            att = ET.SubElement(grid, "Attribute", Name=name, AttributeType="Scalar", Center="Node")
            item = ET.SubElement(att, "DataItem", Dimensions=str(P), NumberType="Float",
                                 Precision="8", Format="HDF")
            item.text = f"{href}:/bodies/{body}/{name}"
    ET.indent(root)
    text = '<?xml version="1.0" ?>\n' + ET.tostring(root, encoding="unicode") + "\n"
    out.write_text(text)
    return out
