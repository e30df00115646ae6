"""HDF5 result files: a versioned schema written atomically, read back with checks.

The layout is documented in ``docs/output.md``.  The writer takes a plain
tree: a dict whose values are sub-trees (HDF5 groups), :class:`Data` entries
(datasets, each with a ``units`` attribute) or, under the key ``"@attrs"``, a
dict of attributes for that group.  It knows nothing of the engine, so any
layer can build a tree and the analysis layer can read files without numba.

Files are written to a temporary name in the target directory and renamed
into place, so a crash never leaves a half-written result under the final
name.
"""

from __future__ import annotations

import os
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import h5py
import numpy as np

from dsmc.errors import UserError

SCHEMA_NAME = "dsmc-results"
SCHEMA_VERSION = 1


@dataclass(frozen=True)
class Data:
    """A dataset value and its unit (``"1"`` for dimensionless)."""

    value: Any
    units: str


def _write_tree(group: h5py.Group, tree: dict):
    for key, val in tree.items():
        if key == "@attrs":
            for name, a in val.items():
                group.attrs[name] = a
        elif isinstance(val, Data):
            ds = group.create_dataset(key, data=np.asarray(val.value))
            ds.attrs["units"] = val.units
        elif isinstance(val, dict):
            _write_tree(group.create_group(key), val)
        else:
            raise TypeError(f"{group.name.rstrip('/')}/{key}: expected Data or dict, got {type(val).__name__}")


def write_results(path: str | Path, tree: dict, overwrite: bool = False,
                  schema: tuple[str, int] = (SCHEMA_NAME, SCHEMA_VERSION)) -> Path:
    """Write ``tree`` to ``path`` atomically; refuse to replace a file unless ``overwrite``.

    ``schema`` (name, version) is stamped on the file; checkpoints use their own.
    """
    path = Path(path)
    if path.exists() and not overwrite:
        raise UserError(f"{path}: exists already (use --force to replace it)")
    directory = path.parent if str(path.parent) else Path(".")
    if not directory.is_dir():
        raise UserError(f"{path}: directory {directory} does not exist")
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=directory)
    os.close(fd)
    try:
        os.chmod(tmp, 0o666 & ~_umask())  # mkstemp makes it 0600; give it an ordinary file's mode
        with h5py.File(tmp, "w") as f:
            f.attrs["schema"] = schema[0]
            f.attrs["schema_version"] = schema[1]
            _write_tree(f, tree)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return path


def _umask() -> int:
    mask = os.umask(0o077)  # only way to read it; the restrictive value is harmless meanwhile
    os.umask(mask)
    return mask


def _read_tree(group: h5py.Group) -> dict:
    out: dict[str, Any] = {}
    if group.attrs:
        out["@attrs"] = {k: _plain(v) for k, v in group.attrs.items()}
    for key, item in group.items():
        if isinstance(item, h5py.Group):
            out[key] = _read_tree(item)
        else:
            out[key] = Data(item[()], _plain(item.attrs.get("units", "")))
    return out


def _plain(v):
    if isinstance(v, bytes):
        return v.decode()
    if isinstance(v, np.generic):
        return v.item()
    return v


def read_results(path: str | Path, schema: tuple[str, int] = (SCHEMA_NAME, SCHEMA_VERSION),
                 what: str = "result") -> dict:
    """Read a result file into a tree of :class:`Data` and ``"@attrs"`` dicts."""
    path = Path(path)
    if not path.is_file():
        raise UserError(f"{path}: no such {what} file")
    try:
        with h5py.File(path, "r") as f:
            name = _plain(f.attrs.get("schema", ""))
            version = _plain(f.attrs.get("schema_version", -1))
            if name != schema[0]:
                raise UserError(f"{path}: not a {what} file of this program (schema '{name}')")
            if version != schema[1]:
                raise UserError(f"{path}: {what} schema version {version}, this program reads "
                                f"version {schema[1]}")
            return _read_tree(f)
    except UserError:
        raise
    except (OSError, KeyError, ValueError) as err:
        raise UserError(f"{path}: unreadable or damaged HDF5 file ({err})") from None


def value(tree: dict, path: str):
    """The array (or scalar) at ``"group/sub/name"`` of a tree from :func:`read_results`."""
    node: Any = tree
    for part in path.strip("/").split("/"):
        node = node[part]
    return node.value if isinstance(node, Data) else node
