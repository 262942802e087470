"""The phase-state model of salts: states, the numba kernel, and its Python wrapper."""

from .model import (DEFAULTS, HYDRATE_KINETICS, TIME_LAWS, BlockResult, ParcelState, PhaseModel, hydrate_kinetics,
                    phase_tables, time_law)
from .states import FLAG_MEANINGS, FLAG_VALUES, LIQUID, NAMES

__all__ = ["PhaseModel", "ParcelState", "BlockResult", "TIME_LAWS", "time_law", "phase_tables", "DEFAULTS",
           "HYDRATE_KINETICS", "hydrate_kinetics",
           "NAMES", "FLAG_VALUES", "FLAG_MEANINGS", "LIQUID"]
