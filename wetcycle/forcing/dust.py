"""Seasonal dust optical depth for a year without a global dust storm.

Method
------
The visible column optical depth at a reference pressure of 610 Pa follows a
periodic table in Ls (:data:`DEFAULT_DUST_SEASON`) and is carried to the
site's pressure in proportion, ``tau = tau_610 p / 610 Pa`` (dust well mixed
with height, so the column scales with the air above the site; common
practice, e.g. the normalisation used by orbital dust climatologies such as
Montabone, L. et al. (2015), Icarus 251, 65-95, read as an abstract).

The default table is a reconstruction from memory of the low-latitude
records of a year without a global storm (orbital thermal-infrared
climatologies and the Mars Exploration Rover and Curiosity sky
photometry; Lemmon, M. T. et al. (2015), Icarus 251, 96-111, read as an
abstract: seasonal peaks in southern spring and summer, low and stable values
in autumn and winter): an aphelion minimum near 0.35, the "A" storms near Ls
220-250, a dip near the solstice, and the "C" storms near Ls 310-330.  Its
uncertainty is large (+-0.15 at least); it is a setting, and a constant
optical depth or a table of one's own can replace it.  Water-ice clouds
(aphelion cloud belt) are not included.

Validity: optical depth 0-10.
"""

from __future__ import annotations

import numpy as np

from ..errors import ConfigError
from .pressure import PeriodicTable

__all__ = ["DEFAULT_DUST_SEASON", "REFERENCE_PRESSURE_PA", "DustSeason", "dust_optical_depth"]

#: Reference pressure of the tabulated optical depths [Pa] (common practice).
REFERENCE_PRESSURE_PA = 610.0

#: Visible dust optical depth at 610 Pa against Ls, low latitudes, a year without a global
#: dust storm -- reconstructed from memory (see the module notes), not digitised.
DEFAULT_DUST_SEASON = PeriodicTable(
    ls_deg=[0, 30, 60, 90, 120, 150, 180, 210, 240, 270, 300, 330],
    values=[0.45, 0.40, 0.35, 0.35, 0.35, 0.45, 0.55, 0.70, 0.85, 0.75, 0.75, 0.85],
    name="default seasonal dust optical depth at 610 Pa (reconstructed from memory of "
         "orbital and rover records, year without a global storm)",
    lower=0.0, upper=10.0)


class DustSeason:
    """Optical depth at the site: a seasonal table (or a constant) at 610 Pa, carried to the
    site pressure.

    Parameters
    ----------
    table : PeriodicTable or float
        Optical depth at 610 Pa against Ls, or one constant value (0-10).
    scale_with_pressure : bool
        Multiply by p / 610 Pa (default True; False gives the table's value at any pressure).
    """

    def __init__(self, table=DEFAULT_DUST_SEASON, scale_with_pressure=True):
        if not callable(table):
            v = float(table)
            if not (np.isfinite(v) and 0.0 <= v <= 10.0):
                raise ConfigError(f"dust_optical_depth: {table!r} not allowed; allowed 0 to 10")
        self.table = table
        self.scale_with_pressure = bool(scale_with_pressure)

    @property
    def name(self):
        base = self.table.name if callable(self.table) else f"constant optical depth {float(self.table):g}"
        return base + (" x p / 610 Pa" if self.scale_with_pressure else "")

    def __call__(self, ls_deg, pressure_pa):
        """Optical depth [-] on ``[step, cell]``: Ls ``[step]``, pressure ``[step, cell]`` [Pa]."""
        ls = np.asarray(ls_deg, dtype=float)
        p = np.asarray(pressure_pa, dtype=float)
        base = (np.asarray(self.table(ls), dtype=float) if callable(self.table)
                else np.full(ls.shape, float(self.table)))
        tau = base[:, None] * (p / REFERENCE_PRESSURE_PA if self.scale_with_pressure else np.ones_like(p))
        return np.clip(tau, 0.0, 10.0)


def dust_optical_depth(ls_deg, pressure_pa, table=DEFAULT_DUST_SEASON):
    """Default seasonal optical depth at the site [-] (see :class:`DustSeason`)."""
    return DustSeason(table)(ls_deg, pressure_pa)
