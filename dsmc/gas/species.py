"""Species data: molecular mass, collision-model parameters, internal modes.

Collision parameters are those of Bird (1994), *Molecular Gas Dynamics and
the Direct Simulation of Gas Flows*, Appendix A: Table A1 (variable hard
sphere, VHS, and variable soft sphere, VSS, at the reference temperature
T_ref = 273 K) and Table A2 (rotational and vibrational modes).  Every table
value below was recalled from memory, not copied from the book; the test
suite checks each VHS diameter against the viscosity coefficient that goes
with it and each VSS diameter against its VHS diameter (the two models are
fitted to the same viscosity), which catches a wrongly remembered figure.

Masses are not Bird's three-figure values: they are the IUPAC standard
atomic weights (from memory) times the atomic mass constant, so that they
are as exact as the constants in :mod:`dsmc.gas.kinetic`.

Row by row (d in 1e-10 m; mu_ref is the 273 K viscosity, 1e-5 Pa s, that the
VHS diameter was fitted to, listed here for the record only):

=====  =========  =======  =====  =====  =====  =====  ===================
name   M (g/mol)  mu_ref   omega  d_VHS  alpha  d_VSS  source
=====  =========  =======  =====  =====  =====  =====  ===================
He     4.002602   1.865    0.66   2.33   1.26   2.30   Bird A1 (memory)
Ne     20.1797    2.975    0.66   2.77   1.31   2.72   Bird A1 (memory)
Ar     39.948     2.117    0.81   4.17   1.40   4.11   Bird A1 (memory)
Kr     83.798     2.328    0.80   4.76   1.32   4.70   Bird A1 (memory)
Xe     131.293    2.107    0.85   5.74   1.44   5.65   Bird A1 (memory)
H2     2.01588    0.845    0.67   2.92   1.35   2.88   Bird A1 (memory)
N2     28.0134    1.656    0.74   4.17   1.36   4.11   Bird A1 (memory)
O2     31.9988    1.919    0.77   4.07   1.40   4.01   Bird A1 (memory)
air    28.9647    1.719    0.77   4.19   1.57   4.13   Bird A1 (memory),
                                                       d_VSS derived (below)
CO2    44.0095    1.380    0.93   5.62   1.61   5.54   Bird A1 (memory)
CH4    16.0425    1.024    0.84   4.83   1.60   4.78   Bird A1 (memory)
=====  =========  =======  =====  =====  =====  =====  ===================

Air: the VSS diameter remembered for air, 4.08e-10 m, cannot go with
d_VHS = 4.19e-10 m and the same omega, since d_VSS/d_VHS =
sqrt((alpha+1)(alpha+2)/(6 alpha)) >= 0.9856 for every alpha.  The stored
4.13e-10 m is that relation evaluated with alpha = 1.57 (itself uncertain).
Air is one pseudo-species with N2's vibrational temperature.

Internal modes (rot_dof, vibrational characteristic temperatures, Z_rot):

=====  =======  ================================  =====  ==================
name   rot_dof  theta_vib (K)                     Z_rot  source
=====  =======  ================================  =====  ==================
N2     2        3371                              5      Bird A2 (memory);
                                                         Z_rot 5 common
                                                         practice
O2     2        2256                              5      sources as N2
air    2        3371 (N2's)                       5      sources as N2
H2     2        6159                              300    Bird A2 (memory);
                                                         Z_rot from memory,
                                                         order of magnitude
CO2    2        945, 945, 1903, 3329              2      values in common
                                                         use (memory); Z_rot
                                                         from memory
CH4    3        4197, 2207 x2, 4344 x3, 1879 x3   15     Herzberg (1945)
                                                         fundamentals
                                                         2917, 1534, 3019,
                                                         1306 cm^-1 (memory)
                                                         times hc/k =
                                                         1.438777 cm K;
                                                         Z_rot from memory
=====  =======  ================================  =====  ==================

``vib_dof_char_T`` lists a degenerate mode once per degeneracy.
Monatomic gases have rot_dof = 0, no vibrational modes and Z_rot = 0.0.
"""

from __future__ import annotations

from dataclasses import dataclass

from dsmc.errors import UnknownNameError, nearest
from dsmc.gas.kinetic import AMU

#: Collision models understood by :meth:`Species.parameters`.
MODELS = ("hs", "vhs", "vss")


def check_model(model: str) -> str:
    """Return ``model`` lower-cased, or raise :class:`UnknownNameError`."""
    key = str(model).lower()
    if key not in MODELS:
        raise UnknownNameError(
            f"unknown collision model '{model}'{nearest(key, MODELS)}; "
            f"known: {', '.join(MODELS)}"
        )
    return key


@dataclass(frozen=True)
class Species:
    """One gas species and its collision-model parameters (SI units).

    ``d_ref_vhs``/``d_ref_vss`` are the VHS/VSS diameters at ``T_ref``;
    ``omega`` is the viscosity-temperature index (mu ~ T**omega), shared by
    both models; ``alpha_vss`` is the VSS scattering exponent (1 gives VHS).
    """

    name: str
    description: str
    mass: float
    d_ref_vhs: float
    d_ref_vss: float
    omega: float
    alpha_vss: float
    T_ref: float
    rot_dof: int
    vib_dof_char_T: tuple[float, ...]
    Z_rot: float
    source: str

    def diameter(self, model: str = "vhs") -> float:
        """Reference diameter d_ref (m) for ``model`` ("hs", "vhs" or "vss").

        "hs" returns the VHS diameter: the hard-sphere model here is VHS
        with omega forced to 0.5, and forcing omega is the caller's business
        (:meth:`parameters` does it).
        """
        return self.parameters(model)[0]

    def parameters(self, model: str = "vhs") -> tuple[float, float, float]:
        """``(d_ref, omega, alpha)`` for ``model``.

        hs:  (d_ref_vhs, 0.5, 1.0)   VHS diameter, constant cross-section
        vhs: (d_ref_vhs, omega, 1.0) isotropic scattering
        vss: (d_ref_vss, omega, alpha_vss)

        With the VHS diameter the hard-sphere viscosity at T_ref is
        (5 - 2 omega)(7 - 2 omega) / 24 times the VHS one, i.e. 13-33 %
        low for the table's omega = 0.66-0.93.
        """
        key = check_model(model)
        if key == "hs":
            return self.d_ref_vhs, 0.5, 1.0
        if key == "vhs":
            return self.d_ref_vhs, self.omega, 1.0
        return self.d_ref_vss, self.omega, self.alpha_vss


_TABLE = "Bird (1994) App. A, Tables A1/A2, recalled from memory"
_MASS = "mass from IUPAC standard atomic weights (from memory)"


def _monatomic(name, description, molar_mass, omega, d_vhs, alpha, d_vss):
    return Species(
        name=name,
        description=description,
        mass=molar_mass * AMU,
        d_ref_vhs=d_vhs * 1e-10,
        d_ref_vss=d_vss * 1e-10,
        omega=omega,
        alpha_vss=alpha,
        T_ref=273.0,
        rot_dof=0,
        vib_dof_char_T=(),
        Z_rot=0.0,
        source=f"{_TABLE}; {_MASS}",
    )


def _molecular(name, description, molar_mass, omega, d_vhs, alpha, d_vss,
               rot_dof, theta_vib, Z_rot, note):
    return Species(
        name=name,
        description=description,
        mass=molar_mass * AMU,
        d_ref_vhs=d_vhs * 1e-10,
        d_ref_vss=d_vss * 1e-10,
        omega=omega,
        alpha_vss=alpha,
        T_ref=273.0,
        rot_dof=rot_dof,
        vib_dof_char_T=tuple(float(t) for t in theta_vib),
        Z_rot=float(Z_rot),
        source=f"{_TABLE}; {_MASS}; {note}",
    )


_ALL = (
    _monatomic("He", "helium", 4.002602, 0.66, 2.33, 1.26, 2.30),
    _monatomic("Ne", "neon", 20.1797, 0.66, 2.77, 1.31, 2.72),
    _monatomic("Ar", "argon", 39.948, 0.81, 4.17, 1.40, 4.11),
    _monatomic("Kr", "krypton", 83.798, 0.80, 4.76, 1.32, 4.70),
    _monatomic("Xe", "xenon", 131.293, 0.85, 5.74, 1.44, 5.65),
    _molecular("H2", "hydrogen", 2.01588, 0.67, 2.92, 1.35, 2.88,
               2, (6159,), 300,
               "theta_vib Bird A2 (memory); Z_rot from memory, order of "
               "magnitude only"),
    _molecular("N2", "nitrogen", 28.0134, 0.74, 4.17, 1.36, 4.11,
               2, (3371,), 5,
               "theta_vib Bird A2 (memory); Z_rot = 5 common practice"),
    _molecular("O2", "oxygen", 31.9988, 0.77, 4.07, 1.40, 4.01,
               2, (2256,), 5,
               "theta_vib Bird A2 (memory); Z_rot = 5 common practice"),
    _molecular("air", "air", 28.9647, 0.77, 4.19, 1.57, 4.13,
               2, (3371,), 5,
               "single pseudo-species; d_VSS derived from d_VHS and alpha "
               "via the VSS viscosity relation (remembered 4.08e-10 m is "
               "inconsistent); theta_vib taken as N2's; Z_rot = 5 common "
               "practice"),
    _molecular("CO2", "carbon dioxide", 44.0095, 0.93, 5.62, 1.61, 5.54,
               2, (945, 945, 1903, 3329), 2,
               "theta_vib: values in common use (from memory), bending mode "
               "doubly degenerate; Z_rot from memory"),
    _molecular("CH4", "methane", 16.0425, 0.84, 4.83, 1.60, 4.78,
               3, (4197, 2207, 2207, 4344, 4344, 4344, 1879, 1879, 1879), 15,
               "theta_vib from Herzberg (1945) fundamentals (from memory) "
               "times hc/k = 1.438777 cm K; Z_rot from memory"),
)

#: Registry of built-in species, keyed by their canonical ``name``.
SPECIES: dict[str, Species] = {sp.name: sp for sp in _ALL}

# Lower-cased names and descriptions -> canonical name.
_ALIASES: dict[str, str] = {}
for _sp in _ALL:
    _ALIASES[_sp.name.lower()] = _sp.name
    _ALIASES[_sp.description.lower()] = _sp.name
del _sp


def get_species(name: str) -> Species:
    """Look up a species by name or description, ignoring case.

    ``get_species("Ar")``, ``get_species("argon")`` and ``get_species("AR")``
    all return the argon entry.  A miss raises :class:`UnknownNameError`
    naming the closest match and listing the known species.
    """
    key = str(name).strip().lower()
    if key in _ALIASES:
        return SPECIES[_ALIASES[key]]
    hint = nearest(key, _ALIASES)
    if hint:  # suggest the canonical name, not the lower-cased alias
        alias = hint.split("'")[1]
        hint = hint.replace(f"'{alias}'", f"'{_ALIASES[alias]}'")
    raise UnknownNameError(
        f"unknown gas '{name}'{hint}; known: {', '.join(SPECIES)}"
    )
