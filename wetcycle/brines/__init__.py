"""Mixed-salt brines: multicomponent Pitzer thermodynamics, equilibrium, freezing and evaporation paths.

>>> from wetcycle import brines
>>> ds = brines.freeze({"Na": 0.5, "Cl": 0.5})            # doctest: +SKIP
>>> brines.mutual_deliquescence_rh({"NaCl": 1, "KCl": 1}, 298.15)   # doctest: +SKIP

See :mod:`wetcycle.brines.chemistry` (the model and its parameters),
:mod:`wetcycle.brines.equilibrium` (the stable assemblage) and
:mod:`wetcycle.brines.paths` (paths, mutual deliquescence, chemical divides).
"""

from .chemistry import IONS, Chemistry, load
from .equilibrium import Equilibrium, equilibrate
from .paths import evaporate, freeze, mutual_deliquescence_rh

__all__ = ["IONS", "Chemistry", "load", "Equilibrium", "equilibrate", "freeze", "evaporate",
           "mutual_deliquescence_rh"]
