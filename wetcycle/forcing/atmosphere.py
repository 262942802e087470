"""The atmosphere above a site: its infrared emission, its temperature, the near-surface air.

wetcycle's column has no resolved atmosphere.  Two temperatures stand for it,
each carried per cell from step to step (:mod:`wetcycle.forcing.column`):

* ``T_atm`` -- the atmosphere as one grey layer (the one-layer grey
  atmosphere of planetary-climate textbooks, e.g. Pierrehumbert, R. T.
  (2010), Principles of Planetary Climate, Cambridge, sec. 4.3), heat capacity
  ``c_p p_s / g``, infrared emissivity ``eps_a``.  It absorbs ``eps_a`` of the
  ground's thermal emission and the sunlight the dust absorbs, exchanges heat
  with the near-surface air, and emits ``eps_a sigma T_atm**4`` up and down:

      C dT_atm/dt = eps_a eps_s sigma T_s**4 + A_dust + Q_air - 2 eps_a sigma T_atm**4

  (backward Euler, emission linearised about the old value).  It cannot fall
  below the CO2 frost point at the surface pressure: colder air would
  condense (snowfall), releasing latent heat.  There is no horizontal heat
  transport, which in the polar night keeps the real atmosphere warmer than
  this floor (a stated limitation).
* ``T_a`` -- the air at the sensor height, a layer of thermal depth ``h_a`` heated by
  the sensible heat flux from the ground (:mod:`wetcycle.forcing.surface_layer`) and
  relaxing towards its own running sol-mean temperature ``<T_a>`` (the residual air
  above the surface layer), with one depth and time constant while the ground is warmer
  than the air (a deep convective layer takes the heat) and another pair when it is
  colder (a shallow stable layer cools against the ground):

      rho c_p h_a dT_a/dt = H + rho c_p h_a (<T_a> - T_a) / tau_a

  solved implicitly together with the ground's energy balance; the heat of the
  relaxation goes to (or comes from) the grey atmosphere.  ``h_a`` and the two time
  constants stand for what a one-node air layer cannot resolve (radiative cooling of
  the air, mixing with the layers above); the project chose them by comparing the
  model's 1.6-m air temperature ranges with published lander records (Gale, Viking 1
  and 2, Phoenix, every case shown by ``scripts/validate_mars.py``) and Viking 1's noon
  sensible heat flux, which comes out about half the published value (a stated
  limitation; 120 m by day and 20 m at night: see
  :class:`~wetcycle.forcing.column.WaterSettings`).

Downwelling infrared at the ground (times the sky-view fraction of a slope):

    L = eps_CO2 sigma T_a**4 + (eps_a - eps_CO2) sigma T_atm**4

The 15-um CO2 band is opaque within tens of metres at its centre, so the part of the
sky's emission it carries comes from the air just above the ground, at the air's
temperature ``T_a``: warm by day, when the convective layer is heated from below,
cold at night (Savijarvi 1991's emissivity scheme puts most of the clear-sky downward
flux in the lowest few hundred metres, from memory).  The dust is spread over a scale
height of ~11 km (Lemmon et al. 2004, read) and emits at the grey layer's temperature
``T_atm``.  The grey layer pays for both parts of the downward emission (the air node's
own budget is its relaxation, which hands its heat to the grey layer).  Infrared
emissivity of the dusty CO2 atmosphere, effective-emissivity form with the dust in
parallel to the 15-um CO2 band (common practice):

    eps_a = 1 - (1 - eps_CO2) exp(-D tau_IR),   eps_CO2 = eps_0 (p / 610 Pa)**0.5,

``D = 1.66`` (diffusivity factor, common practice), ``tau_IR = r tau_vis``
with ``r = 0.25`` (:data:`DUST_IR_TO_VISIBLE`: broadband infrared absorption per
visible extinction), and a clear CO2 column
emissivity ``eps_0 = 0.17`` at 610 Pa with square-root pressure scaling
(order of magnitude of the 15-um band of a 6-8 hPa CO2 column, from memory;
a setting).  The sunlight the dust absorbs, in the air and after a bounce off the
ground, comes from the delta-Eddington layer of :mod:`wetcycle.forcing.scattering`.

Validity: surface pressure 10-2e5 Pa, optical depth 0-10, temperatures
100-400 K.
"""

from __future__ import annotations

import numpy as np

from ..errors import ConfigError

#: Specific heat of CO2 at constant pressure near 210 K [J kg-1 K-1] (from memory; NIST
#: tables give ~0.73-0.79 kJ kg-1 K-1 from 200 to 250 K).
CP_AIR_MARS = 735.0
#: Diffusivity factor for hemispheric infrared fluxes (common practice).
DIFFUSIVITY_FACTOR = 1.66
#: Broadband thermal-infrared *absorption* optical depth of dust per unit visible extinction
#: optical depth: 0.25 = a broadband infrared/visible extinction ratio of ~0.45 times an infrared
#: co-albedo of ~0.5 (both from memory), below the 9-um band-peak values (extinction ratio
#: 1 / (2.0 +- 0.2), Lemmon et al. 2004, Science 306, 1753, read; absorption-only 1 / 2.6 used by
#: orbital dust climatologies, from memory).  Emission goes with absorption.  A setting.  (0.18,
#: half the band-peak absorption ratio, brought Gale's ground within 8 K of the rover's in
#: southern spring but moved the southern cap's end 10-20 deg of Ls later than observed at
#: 75-85 deg S with the frost albedo law as fitted: scripts/validate_mars.py.)
DUST_IR_TO_VISIBLE = 0.25
#: Clear-sky CO2 infrared emissivity of the whole column at 610 Pa (from memory; a setting).
CO2_EMISSIVITY_610PA = 0.17


def column_ir_emissivity(tau_visible, pressure_pa, co2_emissivity_610=CO2_EMISSIVITY_610PA,
                         ir_ratio=DUST_IR_TO_VISIBLE):
    """Infrared emissivity of the dusty CO2 column (see the module notes) [-].

    Parameters
    ----------
    tau_visible : array [-], 0-10      visible dust optical depth
    pressure_pa : array [Pa], 10-2e5   surface pressure
    co2_emissivity_610 : float [-], 0-1
    ir_ratio : float [-], 0-2

    Returns
    -------
    ndarray [-], in [0, 1)

    Examples
    --------
    >>> round(float(column_ir_emissivity(0.0, 610.0)), 3)
    0.17
    >>> round(float(column_ir_emissivity(0.5, 610.0)), 3)   # 1 - 0.83 exp(-1.66 * 0.25 * 0.5)
    0.326
    """
    tau = np.asarray(tau_visible, dtype=float)
    p = np.asarray(pressure_pa, dtype=float)
    if not 0.0 <= co2_emissivity_610 < 1.0:
        raise ConfigError(f"co2_emissivity: {co2_emissivity_610!r} not allowed; allowed 0 to <1")
    if not 0.0 <= ir_ratio <= 2.0:
        raise ConfigError(f"dust_ir_ratio: {ir_ratio!r} not allowed; allowed 0 to 2")
    e_co2 = np.minimum(co2_emissivity_610 * np.sqrt(p / 610.0), 0.99)
    return 1.0 - (1.0 - e_co2) * np.exp(-DIFFUSIVITY_FACTOR * ir_ratio * tau)
