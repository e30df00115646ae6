"""Case files: TOML text -> validated, frozen dataclasses.

Every user mistake in a case file is raised here as a :class:`CaseError`
whose one-line message reads ``FILE: key.path: what is wrong``.  The keys,
units, defaults and ranges are documented in ``docs/case-files.md``; the
tables below (``_SCHEMA`` and the ``_read_*`` functions) are the single place
that defines them.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from dsmc.errors import CaseError, UnknownNameError, nearest
from dsmc.gas.kinetic import K_B, relaxation_tables
from dsmc.gas.species import Species, get_species
from dsmc.gas.shock import shock_states
from dsmc import geometry
from dsmc.grid import SIDES_1D, SIDES_2D
from dsmc.models import BOUNDARY_KINDS, COLLISION_MODELS, OPEN_BOUNDARIES, WALL_MODELS



@dataclass(frozen=True)
class GasSpec:
    species: Species  # the first (for a simple gas the only) species
    collision_model: str
    temperature: float  # K, initial gas temperature
    number_density: float  # 1/m^3, mean over the domain
    velocity: tuple[float, float, float]  # m/s, initial drift
    mixture: tuple[Species, ...] = ()  # every species, in case-file order; () = (species,)
    mole_fractions: tuple[float, ...] = (1.0,)
    rotational_collision_number: float | str | None = None  # None: table value; "parker"
    vibration: tuple[str, ...] = ()  # names of the species whose vibration is active
    vibrational_collision_number: float = 50.0

    @property
    def pressure(self) -> float:
        return self.number_density * K_B * self.temperature

    @property
    def all_species(self) -> tuple[Species, ...]:
        return self.mixture or (self.species,)

    def relaxation_tables(self):
        """:func:`dsmc.gas.kinetic.relaxation_tables` of this gas."""
        return relaxation_tables(self.all_species, self.collision_model,
                                 self.rotational_collision_number, self.vibration,
                                 self.vibrational_collision_number)


@dataclass(frozen=True)
class DomainSpec:
    """A 1-D slab (``length``, ``cells``) or, with ``height`` > 0, a 2-D box
    ``length`` x ``height`` of ``cells`` x ``cells_y`` cells."""

    length: float  # m, extent in x
    cells: int  # cells in x
    height: float = 0.0  # m, extent in y (2-D only)
    cells_y: int = 0  # cells in y (2-D only)

    @property
    def dim(self) -> int:
        return 2 if self.cells_y else 1

    @property
    def n_cells(self) -> int:
        return self.cells * max(self.cells_y, 1)

    @property
    def sides(self) -> tuple[str, ...]:
        return SIDES_2D if self.dim == 2 else SIDES_1D


@dataclass(frozen=True)
class WallSpec:
    """A side of the slab or box: a wall (``WALL_MODELS``) or an open boundary
    (``OPEN_BOUNDARIES``).

    For an open side ``temperature``, ``velocity`` and ``number_density`` are
    the reservoir state (``velocity`` may then have any direction, including
    a component along the side's normal); ``drift`` is ``"local"`` or
    ``"none"`` for a pressure boundary.
    """

    model: str
    temperature: float  # K
    velocity: tuple[float, float, float]  # m/s, tangential (no normal component) for walls
    accommodation: float = 1.0
    normal_accommodation: float = 1.0
    tangential_accommodation: float = 1.0
    number_density: float = 0.0  # 1/m^3, reservoir of an open side
    drift: str = ""

    @property
    def is_open(self) -> bool:
        return self.model in OPEN_BOUNDARIES

    @property
    def injects(self) -> bool:
        return self.is_open and OPEN_BOUNDARIES[self.model].injects


@dataclass(frozen=True)
class BodySpec:
    """A body embedded in a 2-D domain (``[[body]]``): its shape, its wall and its panels."""

    name: str
    shape: geometry.Polygon | geometry.Circle
    wall: WallSpec  # a wall model at rest (no velocity)
    panels: int  # sampling panels (a polygon shares them out over its edges)
    reference_length: float  # m, of the force and heat coefficients (per unit depth)


@dataclass(frozen=True)
class ShockSpec:
    """A normal shock between Rankine-Hugoniot states (``[shock]``)."""

    mach: float
    position: float = 0.5  # fraction of the domain length where the shock is held
    recentre_interval: int = 20  # steps between re-centring shifts; 0 = none


@dataclass(frozen=True)
class InitialSpec:
    profile: str = "uniform"  # uniform | linear


@dataclass(frozen=True)
class NumericsSpec:
    particles_per_cell: float = 40.0
    time_step: float | None = None  # s; None = automatic
    collision_time_fraction: float = 0.25
    transit_fraction: float = 0.5


TARGET_QUANTITIES = ("bulk_shear_stress", "bulk_heat_flux", "bulk_temperature")


@dataclass(frozen=True)
class RunSpec:
    seed: int = 1
    transient_steps: int = 1000  # fixed transient, or the most it may take with steady_state = "auto"
    sample_steps: int = 5000  # sampling budget
    sample_interval: int = 1
    batches: int = 20  # batches in the full budget (batch length = sample_steps // batches)
    steady_state: str = "fixed"  # fixed | auto
    monitor_window: int = 50  # steps per steady-state monitor window
    target_error: float = 0.0  # relative standard error that stops sampling early; 0 = off
    target_quantities: tuple[str, ...] = ()  # () = chosen from the walls


@dataclass(frozen=True)
class Case:
    path: str
    text: str
    title: str
    gas: GasSpec
    domain: DomainSpec
    walls: tuple[WallSpec, ...]  # (xmin, xmax) in 1-D, (xmin, xmax, ymin, ymax) in 2-D
    initial: InitialSpec = field(default_factory=InitialSpec)
    numerics: NumericsSpec = field(default_factory=NumericsSpec)
    run: RunSpec = field(default_factory=RunSpec)
    shock: ShockSpec | None = None
    bodies: tuple[BodySpec, ...] = ()

    def with_run(self, **changes) -> "Case":
        """A copy with some ``[run]`` values replaced (e.g. a seed from the CLI)."""
        return replace(self, run=replace(self.run, **changes))


# ----------------------------------------------------------------------------
# reading helpers


class _Table:
    """One TOML table being read: typed getters, then a check for leftovers."""

    def __init__(self, data: Any, path: str, file: str):
        self.file = file
        self.path = path
        if not isinstance(data, dict):
            self.fail(f"must be a table, got {_type_name(data)}")
        self.data = data
        self.used: set[str] = set()

    def key(self, name: str) -> str:
        return f"{self.path}.{name}" if self.path else name

    def fail(self, message: str, key: str | None = None):
        where = self.key(key) if key is not None else (self.path or "(top level)")
        raise CaseError(_one_line(f"{self.file}: {where}: {message}"))

    def has(self, name: str) -> bool:
        self.used.add(name)  # a known key: finish() may suggest it for a misspelling
        return name in self.data

    def _raw(self, name: str, required: bool):
        self.used.add(name)
        if name not in self.data:
            if required:
                self.fail("required key is missing", name)
            return None
        return self.data[name]

    def number(self, name: str, default=None, *, required=False, positive=False,
               minimum=None, maximum=None, unit="") -> float:
        raw = self._raw(name, required)
        if raw is None:
            return default
        if isinstance(raw, bool) or not isinstance(raw, (int, float)):
            self.fail(f"expected a number{_unit(unit)}, got {_type_name(raw)}", name)
        try:
            value = float(raw)
        except OverflowError:  # a TOML integer beyond the double range
            self.fail(f"out of range{_unit(unit)}, got a {len(str(abs(raw)))}-digit number", name)
        if not math.isfinite(value):
            self.fail(f"must be finite, got {raw}", name)
        _check_range(self, name, value, positive, minimum, maximum, unit)
        return value

    def integer(self, name: str, default=None, *, required=False, minimum=None, maximum=None) -> int:
        raw = self._raw(name, required)
        if raw is None:
            return default
        if isinstance(raw, bool) or not isinstance(raw, int):
            self.fail(f"expected a whole number, got {_type_name(raw)}", name)
        _check_range(self, name, raw, False, minimum, maximum, "")
        return int(raw)

    def choice(self, name: str, choices, default=None, *, required=False) -> str:
        raw = self._raw(name, required)
        if raw is None:
            return default
        if not isinstance(raw, str):
            self.fail(f"expected one of {_list(choices)}, got {_type_name(raw)}", name)
        if raw not in choices:
            self.fail(f"'{raw}' is not one of {_list(choices)}{nearest(raw, choices)}", name)
        return raw

    def text(self, name: str, default=None) -> str:
        raw = self._raw(name, False)
        if raw is None:
            return default
        if not isinstance(raw, str):
            self.fail(f"expected a string, got {_type_name(raw)}", name)
        return raw

    def vector3(self, name: str, default=(0.0, 0.0, 0.0), unit="") -> tuple[float, float, float]:
        raw = self._raw(name, False)
        if raw is None:
            return tuple(default)
        if (not isinstance(raw, list) or len(raw) != 3
                or any(isinstance(c, bool) or not isinstance(c, (int, float)) for c in raw)):
            self.fail(f"expected a list of three numbers{_unit(unit)}, got {_short(raw)}", name)
        if not all(math.isfinite(c) for c in raw):
            self.fail(f"must be finite, got {raw}", name)
        return tuple(float(c) for c in raw)

    def table(self, name: str, *, required=False) -> "_Table | None":
        raw = self._raw(name, required)
        if raw is None:
            return None
        return _Table(raw, self.key(name), self.file)

    def finish(self, allowed=None):
        """Reject keys that were never read (or are not in ``allowed``)."""
        known = set(allowed) if allowed is not None else self.used
        for name in self.data:
            if name not in known:
                self.fail(f"unknown key{nearest(name, known)}", name)


def _check_range(t: _Table, name, value, positive, minimum, maximum, unit):
    if isinstance(value, int) and abs(value) > 10**300:  # formatting it with :g would overflow
        t.fail(f"out of range, got a {len(str(abs(value)))}-digit number", name)
    if positive and not value > 0:
        t.fail(f"must be positive{_unit(unit)}, got {value:g}", name)
    if minimum is not None and value < minimum:
        t.fail(f"must be at least {minimum:g}{_unit(unit)}, got {value:g}", name)
    if maximum is not None and value > maximum:
        t.fail(f"must be at most {maximum:g}{_unit(unit)}, got {value:g}", name)


def _one_line(text: str) -> str:
    """Escape line breaks and other unprintable characters echoed from the case file."""
    return "".join(c if c.isprintable() else repr(c)[1:-1] for c in text)


def _unit(unit: str) -> str:
    return f" (in {unit})" if unit else ""


def _list(choices) -> str:
    return ", ".join(f"'{c}'" for c in choices)


def _type_name(value) -> str:
    return {bool: "a boolean", str: "a string", int: "a whole number", float: "a number",
            list: "a list", dict: "a table"}.get(type(value), type(value).__name__)


def _short(value) -> str:
    text = repr(value)
    return text if len(text) <= 40 else text[:37] + "..."


# ----------------------------------------------------------------------------
# sections

_TOP_KEYS = ("title", "gas", "domain", "boundary", "body", "shock", "initial", "numerics", "run")


MAX_SPECIES = 255  # species indices are uint8


def _read_species(t: _Table) -> tuple[tuple[Species, ...], tuple[float, ...]]:
    raw = t._raw("species", True)
    names = [raw] if isinstance(raw, str) else raw
    if not isinstance(names, list):
        t.fail(f"expected a gas name, got {_type_name(raw)}", "species")
    if not names or not all(isinstance(x, str) for x in names):
        t.fail(f"expected a non-empty list of gas names, got {_short(raw)}", "species")
    if len(names) > MAX_SPECIES:
        t.fail(f"at most {MAX_SPECIES} species, got {len(names)}", "species")
    found = []
    for name in names:
        try:
            found.append(get_species(name))
        except UnknownNameError as err:
            t.fail(str(err), "species")
    canon = [s.name for s in found]
    for k, c in enumerate(canon):
        if c in canon[:k]:
            t.fail(f"'{c}' is listed twice", "species")
    if isinstance(raw, str):
        if t.has("mole_fractions"):
            t.fail("only for a list of species", "mole_fractions")
        return tuple(found), (1.0,)
    x = t._raw("mole_fractions", True)
    if (not isinstance(x, list) or len(x) != len(found)
            or any(isinstance(c, bool) or not isinstance(c, (int, float)) for c in x)):
        t.fail(f"expected a list of {len(found)} numbers (one per species), got {_short(x)}",
               "mole_fractions")
    if any(not math.isfinite(c) or c <= 0 for c in x):
        t.fail(f"every mole fraction must be positive and finite, got {_short(x)}", "mole_fractions")
    if abs(sum(x) - 1.0) > 1e-6:
        t.fail(f"must add up to 1, got {sum(x):.9g}", "mole_fractions")
    total = float(sum(x))
    return tuple(found), tuple(float(c) / total for c in x)


def _read_vibration(t: _Table, species) -> tuple[str, ...]:
    raw = t._raw("vibration", False)
    molecular = [s.name for s in species if s.vib_dof_char_T]
    if raw is None or raw is False:
        return ()
    if raw is True:
        chosen = molecular
    elif isinstance(raw, list) and all(isinstance(x, str) for x in raw):
        chosen = []
        for name in raw:
            try:
                c = get_species(name).name
            except UnknownNameError as err:
                t.fail(str(err), "vibration")
            if c not in [s.name for s in species]:
                t.fail(f"'{name}' is not one of the gas species", "vibration")
            if c not in molecular:
                t.fail(f"'{c}' has no vibrational mode", "vibration")
            chosen.append(c)
    else:
        t.fail(f"expected true, false or a list of species names, got {_short(raw)}", "vibration")
    return tuple(chosen)


def _read_gas(t: _Table) -> GasSpec:
    species, fractions = _read_species(t)
    model = t.choice("collision_model", COLLISION_MODELS, "vhs")
    temperature = t.number("temperature", required=True, positive=True, maximum=1e5, unit="K")
    if t.has("pressure") == t.has("number_density"):
        t.fail("give exactly one of 'pressure' (Pa) and 'number_density' (1/m^3)")
    if t.has("pressure"):
        p = t.number("pressure", positive=True, maximum=1e9, unit="Pa")
        n = p / (K_B * temperature)
    else:
        n = t.number("number_density", positive=True, maximum=1e30, unit="1/m^3")
    velocity = t.vector3("velocity", unit="m/s")
    if t.has("rotational_collision_number") and isinstance(t.data["rotational_collision_number"],
                                                               str):
        z_rot = t.choice("rotational_collision_number", ("parker",))
    else:
        z_rot = t.number("rotational_collision_number", None, minimum=1.0, maximum=1e6)
    vibration = _read_vibration(t, species)
    z_vib = t.number("vibrational_collision_number", 50.0, minimum=1.0, maximum=1e9)
    t.finish()
    gas = GasSpec(species[0], model, temperature, n, velocity,
                  species if len(species) > 1 else (), fractions, z_rot, vibration, z_vib)
    try:
        gas.relaxation_tables()
    except ValueError as err:
        t.fail(str(err), "vibration" if "vibration" in str(err) else "rotational_collision_number")
    return gas


def _read_domain(t: _Table) -> DomainSpec:
    """A number ``length`` and an integer ``cells``: a 1-D slab; lists of two
    (``[Lx, Ly]``, ``[nx, ny]``): a 2-D box."""
    if isinstance(t.data.get("length"), list) or isinstance(t.data.get("cells"), list):
        lengths = _pair(t, "length", float, "positive numbers (in m)")
        cells = _pair(t, "cells", int, "whole numbers")
        if any(not (0.0 < x <= 1e3) for x in lengths):
            t.fail(f"each length must be > 0 and at most 1000 (in m), got {_short(lengths)}",
                   "length")
        if any(not (1 <= c <= 100_000) for c in cells) or cells[0] * cells[1] > 10_000_000:
            t.fail(f"each count must be in [1, 100000] and their product at most 10000000, got "
                   f"{_short(cells)}", "cells")
        t.finish()
        return DomainSpec(lengths[0], cells[0], lengths[1], cells[1])
    length = t.number("length", required=True, positive=True, maximum=1e3, unit="m")
    cells = t.integer("cells", required=True, minimum=1, maximum=10_000_000)
    t.finish()
    return DomainSpec(length, cells)


def _pair(t: _Table, name: str, kind, what: str):
    raw = t._raw(name, True)
    ok = (isinstance(raw, list) and len(raw) == 2
          and all(not isinstance(c, bool) and isinstance(c, (int, float) if kind is float else int)
                  for c in raw))
    if not ok:
        t.fail(f"a 2-D domain needs a list of two {what} [x, y], got {_short(raw)}", name)
    if kind is float and not all(math.isfinite(c) for c in raw):
        t.fail(f"must be finite, got {_short(raw)}", name)
    return tuple(kind(c) for c in raw)


def _key_owners(name: str) -> list[str]:
    return ([m for m, w in WALL_MODELS.items() if name in w.keys]
            + [m for m, b in OPEN_BOUNDARIES.items() if name in b.state_keys])


def _read_wall(t: _Table, gas: GasSpec, axis: int = 0) -> WallSpec:
    """A side normal to ``axis`` (0: x, 1: y): a wall or an open side."""
    model = t.choice("model", BOUNDARY_KINDS, required=True)
    if model in OPEN_BOUNDARIES:
        return _read_open(t, gas, model)
    spec = WALL_MODELS[model]
    allowed = {"model", "temperature", "velocity", *spec.keys}
    for name in t.data:  # a key of another wall model: say whose it is
        owners = _key_owners(name)
        if name not in allowed and owners:
            t.fail(f"only used by model '{owners[0]}' (this wall is '{model}')", name)
    if model == "periodic":
        t.finish(allowed={"model"})
        return WallSpec(model, gas.temperature, (0.0, 0.0, 0.0))
    temperature = t.number("temperature", gas.temperature, positive=True, maximum=1e5, unit="K")
    velocity = t.vector3("velocity", unit="m/s")
    if velocity[axis] != 0.0:
        t.fail(f"the wall-normal ({'xy'[axis]}) component must be 0: walls slide, they do not "
               "move through the gas", "velocity")
    extra = {k: t.number(k, 1.0, minimum=0.0, maximum=1.0) for k in spec.keys}
    t.finish()
    return WallSpec(model, temperature, velocity, **extra)


def _read_open(t: _Table, gas: GasSpec, model: str) -> WallSpec:
    """An open side; the reservoir state defaults to the ``[gas]`` state."""
    spec = OPEN_BOUNDARIES[model]
    allowed = {"model", *spec.state_keys}
    for name in t.data:
        owners = _key_owners(name)
        if name not in allowed and owners:
            t.fail(f"only used by model '{owners[0]}' (this side is '{model}')", name)
    if not spec.injects:
        t.finish(allowed={"model"})
        return WallSpec(model, gas.temperature, (0.0, 0.0, 0.0))
    temperature = t.number("temperature", gas.temperature, positive=True, maximum=1e5, unit="K")
    if t.has("pressure") and t.has("number_density"):
        t.fail("give at most one of 'pressure' (Pa) and 'number_density' (1/m^3)")
    if t.has("pressure"):
        n = t.number("pressure", positive=True, maximum=1e9, unit="Pa") / (K_B * temperature)
    elif t.has("number_density"):
        n = t.number("number_density", positive=True, maximum=1e30, unit="1/m^3")
    else:
        n = gas.number_density
    drift = ""
    if spec.drift_from_gas:
        drift = t.choice("drift", ("local", "none"), "local")
        velocity = (0.0, 0.0, 0.0)
    else:
        velocity = t.vector3("velocity", gas.velocity, unit="m/s")
    t.finish()
    return WallSpec(model, temperature, velocity, number_density=n, drift=drift)


BODY_SHAPES = ("circle", "polygon")
MAX_VERTICES = 10_000
DEFAULT_PANELS = {"circle": 36, "polygon": 40}


def _point(t: _Table, raw, name: str, what: str) -> tuple[float, float]:
    if (not isinstance(raw, list) or len(raw) != 2
            or any(isinstance(c, bool) or not isinstance(c, (int, float)) for c in raw)
            or not all(math.isfinite(c) for c in raw)):
        t.fail(f"expected {what} as a list of two finite numbers [x, y] (in m), got {_short(raw)}",
               name)
    return float(raw[0]), float(raw[1])


def _read_body(t: _Table, gas: GasSpec, index: int) -> BodySpec:
    """One ``[[body]]`` table: shape, wall model (any wall but 'periodic', at rest), panels."""
    name = t.text("name", f"body{index + 1}")
    if not name or not name.replace("_", "").replace("-", "").isalnum():
        t.fail(f"expected letters, digits, '-' or '_', got {name!r}", "name")
    kind = t.choice("shape", BODY_SHAPES, required=True)
    if kind == "circle":
        center = _point(t, t._raw("center", True), "center", "the centre")
        radius = t.number("radius", required=True, positive=True, maximum=1e3, unit="m")
        shape = geometry.Circle(center, radius)
    else:
        raw = t._raw("vertices", True)
        if not isinstance(raw, list) or not 3 <= len(raw) <= MAX_VERTICES:
            t.fail(f"expected a list of 3 to {MAX_VERTICES} points [x, y] (in m), got "
                   f"{_short(raw)}", "vertices")
        pts = [_point(t, p, "vertices", f"vertex {k}") for k, p in enumerate(raw)]
        problem = geometry.polygon_problem(pts)
        if problem:
            t.fail(problem, "vertices")
        shape = geometry.Polygon.from_points(pts)
    model = t.choice("model", tuple(m for m in WALL_MODELS if m != "periodic"), required=True)
    spec = WALL_MODELS[model]
    if "velocity" in t.data:
        t.fail("bodies are at rest: leave 'velocity' out", "velocity")
    for key in t.data:  # a key of another model: say whose it is
        owners = _key_owners(key)
        if key not in spec.keys and owners and key != "temperature":
            t.fail(f"only used by model '{owners[0]}' (this body is '{model}')", key)
    temperature = t.number("temperature", gas.temperature, positive=True, maximum=1e5, unit="K")
    extra = {k: t.number(k, 1.0, minimum=0.0, maximum=1.0) for k in spec.keys}
    panels = t.integer("panels", DEFAULT_PANELS[kind], minimum=1, maximum=100_000)
    if kind == "polygon" and panels < len(shape.vertices):
        t.fail(f"a polygon needs at least one panel per edge ({len(shape.vertices)}), got {panels}",
               "panels")
    ref = t.number("reference_length", shape.size, positive=True, maximum=1e3, unit="m")
    t.finish()
    return BodySpec(name, shape, WallSpec(model, temperature, (0.0, 0.0, 0.0), **extra), panels, ref)


def _read_bodies(top: _Table, gas: GasSpec, domain: DomainSpec, walls) -> tuple[BodySpec, ...]:
    raw = top._raw("body", False)
    if raw is None:
        return ()
    if domain.dim != 2:
        top.fail("bodies need a 2-D domain (domain.length = [Lx, Ly], domain.cells = [nx, ny])",
                 "body")
    if not isinstance(raw, list) or not all(isinstance(b, dict) for b in raw):
        top.fail("expected one or more [[body]] tables", "body")
    bodies = []
    for k, data in enumerate(raw):
        t = _Table(data, f"body[{k}]", top.file)
        b = _read_body(t, gas, k)
        where = "center" if isinstance(b.shape, geometry.Circle) else "vertices"
        if geometry.outside_box(b.shape, domain.length, domain.height):
            t.fail(f"the body reaches outside the domain [0, {domain.length:g}] x "
                   f"[0, {domain.height:g}] m", where)
        x0, y0, x1, y1 = b.shape.box
        for side, w, touch in zip(domain.sides, walls, (x0 <= 0.0, x1 >= domain.length,
                                                        y0 <= 0.0, y1 >= domain.height)):
            if touch and w.is_open:
                t.fail(f"the body touches side {side}, which is open ('{w.model}'): molecules "
                       "enter there; keep bodies off open sides", where)
        for other in bodies:
            if other.name == b.name:
                t.fail(f"'{b.name}' is the name of another body", "name")
            if geometry.shapes_overlap(b.shape, other.shape):
                t.fail(f"overlaps or touches body '{other.name}': bodies must be apart", where)
        bodies.append(b)
    area = sum(b.shape.area for b in bodies)
    if area >= domain.length * domain.height * (1.0 - 1e-9):
        top.fail("the bodies fill the domain: no room for the gas", "body")
    return tuple(bodies)


def _read_shock(t: _Table | None) -> ShockSpec | None:
    if t is None:
        return None
    mach = t.number("mach", required=True, maximum=50.0)
    if not mach > 1.0:
        t.fail(f"a normal shock needs a Mach number above 1, got {mach:g}", "mach")
    d = ShockSpec(mach)
    spec = ShockSpec(mach,
                     position=t.number("position", d.position, minimum=0.1, maximum=0.9),
                     recentre_interval=t.integer("recentre_interval", d.recentre_interval,
                                                 minimum=0, maximum=10**9))
    t.finish()
    return spec


def _shock_walls(top: _Table, gas: GasSpec, shock: ShockSpec) -> tuple[WallSpec, WallSpec]:
    """Inflow sides at the Rankine-Hugoniot upstream (xmin) and downstream (xmax) states."""
    if top.has("boundary"):
        top.fail("the sides of a [shock] case are the Rankine-Hugoniot inflow states: "
                 "leave [boundary] out", "boundary")
    if any(c != 0.0 for c in gas.velocity):
        top.fail("the upstream drift of a [shock] case follows from its Mach number: "
                 "leave gas.velocity out", "gas")
    st = shock_states(shock.mach, gas.number_density, gas.temperature, gas.species.mass)
    return (WallSpec("inflow", st.T1, (st.u1, 0.0, 0.0), number_density=st.n1),
            WallSpec("inflow", st.T2, (st.u2, 0.0, 0.0), number_density=st.n2))


def _read_walls(top: _Table, gas: GasSpec, domain: DomainSpec) -> tuple[WallSpec, ...]:
    t = top.table("boundary", required=True)
    walls = []
    for k, side in enumerate(domain.sides):
        walls.append(_read_wall(t.table(side, required=True), gas, k // 2))
    t.finish()
    for lo, hi in zip(domain.sides[0::2], domain.sides[1::2]):
        a, b = walls[domain.sides.index(lo)], walls[domain.sides.index(hi)]
        if (a.model == "periodic") != (b.model == "periodic"):
            t.fail(f"'periodic' must be given on both {lo} and {hi}")
    return tuple(walls)


def _check_open_sides_gas(top: _Table, gas: GasSpec, walls, shock, sides):
    """Open sides inject molecules of one monatomic species only (the injection kernel
    draws no internal energy and no species mix yet)."""
    rot_dof, theta_vib = gas.relaxation_tables()[:2]
    if len(gas.all_species) == 1 and not rot_dof.any() and not theta_vib.any():
        return
    what = ("a gas mixture" if len(gas.all_species) > 1
            else f"'{gas.all_species[0].name}', whose internal energy is exchanged")
    if shock is not None:
        top.fail(f"the shock case needs a single monatomic gas, not {what}", "shock")
    for side, w in zip(sides, walls):
        if w.is_open:
            top.fail(f"open sides inject a single monatomic gas only, not {what}",
                     f"boundary.{side}.model")


def _read_initial(t: _Table | None) -> InitialSpec:
    if t is None:
        return InitialSpec()
    spec = InitialSpec(profile=t.choice("profile", ("uniform", "linear"), "uniform"))
    t.finish()
    return spec


def _read_numerics(t: _Table | None) -> NumericsSpec:
    if t is None:
        return NumericsSpec()
    d = NumericsSpec()
    ppc = t.number("particles_per_cell", d.particles_per_cell, minimum=1.0, maximum=1e6)
    dt = None
    if t.has("time_step"):
        raw = t.data["time_step"]
        if raw == "auto":
            t.used.add("time_step")
        else:
            dt = t.number("time_step", positive=True, unit="s")
    spec = NumericsSpec(
        particles_per_cell=ppc,
        time_step=dt,
        collision_time_fraction=t.number("collision_time_fraction", d.collision_time_fraction,
                                         positive=True, maximum=10.0),
        transit_fraction=t.number("transit_fraction", d.transit_fraction, positive=True, maximum=10.0),
    )
    t.finish()
    return spec


def _names(t: _Table, name: str, choices) -> tuple[str, ...]:
    raw = t._raw(name, False)
    if raw is None:
        return ()
    if not isinstance(raw, list) or not all(isinstance(x, str) for x in raw):
        t.fail(f"expected a list of names from {_list(choices)}, got {_short(raw)}", name)
    for x in raw:
        if x not in choices:
            t.fail(f"'{x}' is not one of {_list(choices)}{nearest(x, choices)}", name)
    return tuple(raw)


def _read_run(t: _Table | None) -> RunSpec:
    if t is None:
        return RunSpec()
    d = RunSpec()
    spec = RunSpec(
        seed=t.integer("seed", d.seed, minimum=0, maximum=2**63 - 1),
        transient_steps=t.integer("transient_steps", d.transient_steps, minimum=0, maximum=10**12),
        sample_steps=t.integer("sample_steps", d.sample_steps, minimum=1, maximum=10**12),
        sample_interval=t.integer("sample_interval", d.sample_interval, minimum=1, maximum=10**9),
        batches=t.integer("batches", d.batches, minimum=2, maximum=10_000),
        steady_state=t.choice("steady_state", ("fixed", "auto"), d.steady_state),
        monitor_window=t.integer("monitor_window", d.monitor_window, minimum=1, maximum=10**9),
        target_error=t.number("target_error", d.target_error, minimum=0.0, maximum=1.0),
        target_quantities=_names(t, "target_quantities", TARGET_QUANTITIES),
    )
    t.finish()
    if spec.sample_steps // spec.sample_interval < spec.batches:
        t.fail(f"sample_steps / sample_interval = {spec.sample_steps // spec.sample_interval} samples "
               f"cannot fill {spec.batches} batches")
    return spec


# ----------------------------------------------------------------------------
# entry points


def parse_case(text: str, path: str = "<case>") -> Case:
    """Parse and validate case-file text; ``path`` names it in error messages."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise CaseError(f"{path}: not valid TOML: {err}") from None
    top = _Table(data, "", path)
    for name in data:
        if name not in _TOP_KEYS:
            top.fail(f"unknown section{nearest(name, _TOP_KEYS)}", name)
    title = top.text("title", Path(path).stem)
    gas = _read_gas(top.table("gas", required=True))
    domain = _read_domain(top.table("domain", required=True))
    shock = _read_shock(top.table("shock"))
    if shock is not None and domain.dim == 2:
        top.fail("the shock case is 1-D: give domain.length and domain.cells as single values",
                 "shock")
    walls = _read_walls(top, gas, domain) if shock is None else _shock_walls(top, gas, shock)
    bodies = _read_bodies(top, gas, domain, walls)
    _check_open_sides_gas(top, gas, walls, shock, domain.sides)
    initial = _read_initial(top.table("initial"))
    if domain.dim == 2 and initial.profile != "uniform":
        top.fail("a 2-D domain starts from the uniform [gas] state only", "initial.profile")
    numerics = _read_numerics(top.table("numerics"))
    run = _read_run(top.table("run"))
    top.finish()
    return Case(path, text, title, gas, domain, walls, initial, numerics, run, shock, bodies)


def load_case(path: str | Path) -> Case:
    """Read and validate a case file."""
    p = Path(path)
    try:
        raw = p.read_bytes()
    except FileNotFoundError:
        raise CaseError(f"{p}: no such case file") from None
    except IsADirectoryError:
        raise CaseError(f"{p}: is a directory, not a case file") from None
    except OSError as err:
        raise CaseError(f"{p}: cannot read: {err.strerror}") from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise CaseError(f"{p}: not a UTF-8 text file") from None
    return parse_case(text, str(p))
