"""The phase-state model of salts: states, the numba kernel, and its Python wrapper."""

from .model import TIME_LAWS, BlockResult, ParcelState, PhaseModel, phase_tables, time_law
from .states import FLAG_MEANINGS, FLAG_VALUES, LIQUID, NAMES

__all__ = ["PhaseModel", "ParcelState", "BlockResult", "TIME_LAWS", "time_law", "phase_tables",
           "NAMES", "FLAG_VALUES", "FLAG_MEANINGS", "LIQUID"]
