"""Gas data: the species table and equilibrium kinetic theory."""

from dsmc.gas.kinetic import (
    AMU,
    K_B,
    collision_rate,
    conductivity,
    equivalent_free_path,
    gas_summary,
    knudsen,
    mean_collision_time,
    mean_free_path,
    mean_speed,
    most_probable_speed,
    number_density,
    pair_constants,
    pair_constants_for,
    pressure,
    rms_speed,
    total_cross_section,
    viscosity,
    viscosity_mean_free_path,
    vhs_cross_section,
)
from dsmc.gas.species import MODELS, SPECIES, Species, check_model, get_species

__all__ = [
    "AMU", "K_B", "MODELS", "SPECIES", "Species", "check_model",
    "collision_rate", "conductivity", "equivalent_free_path", "gas_summary",
    "get_species", "knudsen", "mean_collision_time", "mean_free_path",
    "mean_speed", "most_probable_speed", "number_density", "pair_constants",
    "pair_constants_for", "pressure", "rms_speed", "total_cross_section",
    "viscosity", "viscosity_mean_free_path", "vhs_cross_section",
]
