"""Forcing driver: orbit + surface energy balance + near-surface water for a chunk of cells.

Recipe for one block of steps (a sol by default), all cells of a chunk at once:

1. solar geometry per step from the clock (:mod:`wetcycle.orbit`);
2. surface pressure from the landers' seasonal cycle carried to each cell's
   elevation and latitude (:mod:`wetcycle.forcing.pressure`), the seasonal
   dust optical depth (:mod:`wetcycle.forcing.dust`) and the infrared
   emissivity of the dusty atmosphere (:mod:`wetcycle.forcing.atmosphere`);
3. the water supply: the atmospheric water column at the cell's latitude and
   season (:mod:`wetcycle.forcing.supply`: the default climatology, a table of
   the user's own, or a constant mixing ratio), turned into the mixing ratio
   of the free atmosphere above the near-surface air by the well-mixed-below-
   condensation-level distribution (evaluated once per block, with the
   background air temperature at the block's start);
4. the coupled column kernel (:mod:`wetcycle.forcing.column`): ground heat
   and CO2 frost, air temperature at the sensor height, the atmosphere's
   temperature, the near-surface air layer, pore vapour, adsorbed water,
   pore ice and surface water frost;
5. relative humidity with respect to liquid water and ice at the salt (its
   temperature and the pore vapour pressure at its depth) and at the sensor
   height.  Above the triple point (273.16 K), where ice is not stable, the
   ice curve is continued by the liquid curve, so
   ``relative_humidity_ice = relative_humidity`` there.

The state (:class:`ForcingState`: the column state and the position in the
clock) is carried explicitly: :func:`forcing_block` takes one and returns the
next, so runs can be restarted and chained.  :func:`spin_up` repeats the year
that ends at the clock's start until each cell's annual cycle is periodic (optionally
at fewer steps per sol, then settling sols at the run's step).
Outputs are plain arrays ``[step, cell]``; this module imports nothing from
the phase kernel or the salt modules.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field

import numpy as np

from ..clock import make_clock
from ..errors import ConfigError
from ..water import MOLAR_MASS_WATER, TRIPLE_POINT_T
from .atmosphere import CO2_EMISSIVITY_610PA, DUST_IR_TO_VISIBLE, column_ir_emissivity
from .column import ColumnState, WaterSettings, column_block, prepare_column
from .column import initial_state as column_initial_state
from .dust import DustSeason
from .energy import (STEFAN_BOLTZMANN, co2_frost_point, largest_time_step, prepare_energy,
                     surface_time_constant)
from .insolation import daily_mean_toa_insolation
from .pressure import LanderPressureCycle
from .regolith import build_columns
from .regolith_vapour import R_VAPOUR
from .supply import DEFAULT_LAPSE_RATE_K_M, WaterColumnTable, default_climatology, near_surface_mixing_ratio
from .vapour import relative_humidity, relative_humidity_ice

#: Names of the arrays returned per block, each ``[step, cell]``, with units.
OUTPUT_UNITS = {
    "surface_temperature": "K",
    "salt_temperature": "K",
    "vapor_pressure": "Pa",
    "relative_humidity": "1",
    "relative_humidity_ice": "1",
    "surface_pressure": "Pa",
    "water_frost": "kg m-2",
    "co2_frost": "kg m-2",
    "air_temperature": "K",
    "air_vapor_pressure": "Pa",
    "air_relative_humidity_ice": "1",
    "surface_vapor_pressure": "Pa",
    "sensible_heat_flux": "W m-2",
    "downwelling_longwave": "W m-2",
    "surface_water_flux": "kg m-2",
    "atmosphere_exchange": "kg m-2",
    "dust_optical_depth": "1",
    "free_vapor_pressure": "Pa",
    "ground_heat_flux": "W m-2",
}


@dataclass(frozen=True)
class CellSet:
    """Properties of a chunk of cells, each an array ``[cell]`` (build with :func:`make_cells`)."""

    latitude_deg: np.ndarray
    longitude_deg: np.ndarray
    elevation_m: np.ndarray
    albedo: np.ndarray
    thermal_inertia: np.ndarray
    emissivity: np.ndarray
    slope_deg: np.ndarray
    slope_azimuth_deg: np.ndarray
    salt_depth_m: np.ndarray
    density: np.ndarray
    heat_capacity: np.ndarray
    layer2_depth_m: np.ndarray
    layer2_inertia: np.ndarray
    layer2_density: np.ndarray
    layer2_heat_capacity: np.ndarray
    porosity: np.ndarray

    @property
    def n_cells(self):
        return self.latitude_deg.size


def make_cells(latitude_deg, longitude_deg, *, elevation_m=0.0, albedo=0.25,
               thermal_inertia=250.0, emissivity=0.95, slope_deg=0.0, slope_azimuth_deg=0.0,
               salt_depth_m=0.0, density=1500.0, heat_capacity=800.0, layer2_depth_m=np.inf,
               layer2_inertia=2000.0, layer2_density=2000.0, layer2_heat_capacity=1000.0,
               porosity=0.35):
    """Broadcast per-cell properties to arrays ``[cell]``.

    Parameters
    ----------
    latitude_deg, longitude_deg : array [deg]   planetocentric latitude, east longitude
    elevation_m : array [m]                     height above the areoid
    albedo, emissivity : array [-]              bare-surface values
    thermal_inertia : array [J m-2 K-1 s-1/2]   top material
    slope_deg, slope_azimuth_deg : array [deg]  slope; direction faced, clockwise from north
    salt_depth_m : array [m]                    0 for a surface crust
    density, heat_capacity : array [kg m-3], [J kg-1 K-1]   top material (bulk)
    layer2_depth_m : array [m]                  top of a second material; inf for none
    layer2_inertia, layer2_density, layer2_heat_capacity : array
        Second material; defaults an ice-cemented soil: thermal inertia 2000 (ice-cemented
        soils 1500-2500, e.g. Mellon et al. 2004, Icarus 169, 324; from memory), density
        2000 kg m-3 and heat capacity 1000 J kg-1 K-1 (a 1500 kg m-3 soil with ~40 % of its
        volume filled by ice; mass-weighted rock ~800 and ice ~1500 J kg-1 K-1 near 200 K;
        derived here from values recalled from handbooks).
    porosity : array [-]                        regolith porosity, 0.01-0.9 (default 0.35:
        Gale's 35-40 %, Savijärvi et al. 2016, Icarus 265, 63, read as an abstract)

    Values are checked where they are used (ValidityError naming the field).
    """
    lat = np.atleast_1d(np.asarray(latitude_deg, dtype=float))
    n = np.broadcast(lat, np.atleast_1d(np.asarray(longitude_deg, dtype=float))).size
    vals = dict(latitude_deg=latitude_deg, longitude_deg=longitude_deg, elevation_m=elevation_m,
                albedo=albedo, thermal_inertia=thermal_inertia, emissivity=emissivity,
                slope_deg=slope_deg, slope_azimuth_deg=slope_azimuth_deg,
                salt_depth_m=salt_depth_m, density=density, heat_capacity=heat_capacity,
                layer2_depth_m=layer2_depth_m, layer2_inertia=layer2_inertia,
                layer2_density=layer2_density, layer2_heat_capacity=layer2_heat_capacity,
                porosity=porosity)
    out = {}
    for k, v in vals.items():
        a = np.asarray(v, dtype=float)
        try:
            out[k] = np.ascontiguousarray(np.broadcast_to(a, (n,))).copy()
        except ValueError:
            raise ConfigError(f"{k}: shape {a.shape} does not match {n} cells") from None
    return CellSet(**out)


#: Water held by a full monolayer per unit area of grain surface [kg m-2]: 2.8e-7, one water
#: molecule (2.99e-26 kg) per 10.6 A^2 (the common-practice cross-section of adsorbed water).
MONOLAYER_MASS_KG_M2 = 2.8e-7


#: CO2 frost radiative properties (defaults of :class:`ForcingOptions`).  The form -- frost that
#: brightens with the sunlight it receives -- is published (Paige 1985, LPI Terrestrial Planets,
#: read as an abstract; Kieffer, Titus et al. 2000, J. Geophys. Res. 105, 9653, from memory); its
#: published coefficients could not be read.  The north cap's emissivity is near 1 because its
#: frost outside the polar night is mostly slab ice with a spectrum close to a blackbody (Titus,
#: Kieffer, Mullins & Christensen 2001, J. Geophys. Res. 106, 23181, read as an abstract);
#: low-emissivity deposits and CO2 clouds lower the south cap's (Hayne et al. 2012, J. Geophys.
#: Res. 117, E08014, read as an abstract).  The numbers are this project's fit: the end dates of
#: the seasonal frost at 65, 75 and 85 deg N and S (scripts/validate_mars.py; 60, 70 and 80 deg
#: held out, see the README) and, for the south emissivity, the seasonal caps' masses at their
#: maxima, (3.8 +- 0.4)e15 kg north and (6.3 +- 0.6)e15 kg south (Litvak et al. 2005, Adv. Space
#: Res., neutron spectroscopy, read as an abstract): with 0.7 the south cap came out 30 % light.
FROST_ALBEDO_DARK = 0.12
FROST_ALBEDO_DARK_SOUTH = 0.0
FROST_ALBEDO_SLOPE = 0.0028      # W-1 m2 (0.0022 before the delta-Eddington sunlight and the air-emitted sky infrared)
FROST_ALBEDO_MAX = 0.85
FROST_EMISSIVITY_NORTH = 0.95
FROST_EMISSIVITY_SOUTH = 0.9


@dataclass(frozen=True)
class ForcingOptions:
    """Settings of the forcing (all SI).  Defaults are for present-day Mars; each names its
    source in the module that uses it.

    Attributes
    ----------
    dust : DustSeason or float           dust optical depth (default: the seasonal curve at
                                         610 Pa, carried to the site pressure)
    water_supply : WaterColumnTable or None   atmospheric water column (None: the default
                                         climatology, :func:`~wetcycle.forcing.supply.default_climatology`)
    pressure : LanderPressureCycle       seasonal surface pressure at the cells
    lapse_rate_k_m : float [K m-1]       background lapse rate (vertical water distribution and
                                         the air's background temperature)
    co2_emissivity : float [-]           clear CO2 column emissivity at 610 Pa
    dust_ir_ratio : float [-]            infrared / visible dust extinction
    specific_surface_area_m2_kg : float  of the regolith grains (adsorption capacity =
                                         bulk density x area x monolayer mass); default
                                         17 m2 g-1 (Ballou et al. 1978, Nature 271, 644, read
                                         as an abstract)
    water : WaterSettings                 near-surface air and regolith water settings
    theta : float [-]                    0.5 Crank-Nicolson ... 1 backward Euler (heat)
    first_layer_fraction, stretch, annual_depths, n_layers : grid (see regolith.build_columns)
    geothermal_flux : float [W m-2]
    frost_albedo, frost_albedo_slope, frost_albedo_max : CO2 frost albedo law
                                         ``min(A_0 + B Q, A_max)`` in the daily-mean insolation Q
                                         (:func:`~wetcycle.forcing.energy.frost_albedo_law`):
                                         A_0 [-] at latitudes >= 0 (``frost_albedo_south``: A_0
                                         at latitudes < 0, None: the same), B [W-1 m2], A_max [-];
                                         defaults :data:`FROST_ALBEDO_DARK`,
                                         :data:`FROST_ALBEDO_DARK_SOUTH`, :data:`FROST_ALBEDO_SLOPE`,
                                         :data:`FROST_ALBEDO_MAX` (see there for their basis)
    frost_emissivity, frost_emissivity_south : float [-]   CO2 frost emissivity at latitudes
                                         >= 0 and < 0: :data:`FROST_EMISSIVITY_NORTH`,
                                         :data:`FROST_EMISSIVITY_SOUTH`
    diffuse_fraction : float [-]         see insolation
    co2_frost : bool
    """

    dust: object = field(default_factory=DustSeason)
    water_supply: WaterColumnTable | None = None
    pressure: object = field(default_factory=LanderPressureCycle)
    lapse_rate_k_m: float = DEFAULT_LAPSE_RATE_K_M
    co2_emissivity: float = CO2_EMISSIVITY_610PA
    dust_ir_ratio: float = DUST_IR_TO_VISIBLE
    specific_surface_area_m2_kg: float = 1.7e4
    water: WaterSettings = field(default_factory=WaterSettings)
    theta: float = 0.5
    first_layer_fraction: float = 0.1
    stretch: float = 1.2
    annual_depths: float = 3.0
    n_layers: int | None = None
    geothermal_flux: float = 0.0
    frost_albedo: float = FROST_ALBEDO_DARK
    frost_emissivity: float = FROST_EMISSIVITY_NORTH
    frost_albedo_south: float | None = FROST_ALBEDO_DARK_SOUTH
    frost_emissivity_south: float = FROST_EMISSIVITY_SOUTH
    frost_albedo_slope: float = FROST_ALBEDO_SLOPE
    frost_albedo_max: float = FROST_ALBEDO_MAX
    diffuse_fraction: float = 0.5
    co2_frost: bool = True


@dataclass(frozen=True)
class ForcingModel:
    """Everything fixed for a chunk: cells, options, planet, column model (see :func:`prepare_forcing`)."""

    cells: CellSet
    options: ForcingOptions
    planet: object
    dt_s: float
    steps_per_sol: int
    column: object
    supply: WaterColumnTable
    dust: DustSeason

    @property
    def energy(self):
        return self.column.energy


@dataclass(frozen=True)
class ForcingState:
    """State between blocks: the column state and the next clock step."""

    column: ColumnState
    step: int = 0


def prepare_forcing(cells, clock, options=ForcingOptions()):
    """Validate a chunk and precompute its regolith grids and factors.

    Parameters
    ----------
    cells : CellSet
    clock : wetcycle.clock.Clock
        Fixes the planet and the time step ``clock.dt_s`` [s].
    options : ForcingOptions

    Returns
    -------
    ForcingModel
    """
    planet = clock.planet
    if planet.name != "mars":
        raise ConfigError(f"forcing: the energy-balance forcing is for Mars; planet {planet.name!r} "
                          "needs prescribed or file forcing")
    year_s = planet.sol_s * planet.year_sols
    if not 0.5e-3 <= options.lapse_rate_k_m <= 9e-3:
        raise ConfigError(f"lapse_rate: {options.lapse_rate_k_m!r} K/m not allowed; allowed 0.0005 to 0.009")
    if not 1e2 <= options.specific_surface_area_m2_kg <= 1e6:
        raise ConfigError(f"specific_surface_area: {options.specific_surface_area_m2_kg!r} m2/kg not allowed; "
                          "allowed 100 to 1e6")
    cols = build_columns(cells.thermal_inertia, cells.density, cells.heat_capacity, planet.sol_s,
                         year_s, first_layer_fraction=options.first_layer_fraction,
                         stretch=options.stretch, annual_depths=options.annual_depths,
                         n_layers=options.n_layers, layer2_depth=cells.layer2_depth_m,
                         layer2_inertia=cells.layer2_inertia, layer2_density=cells.layer2_density,
                         layer2_heat_capacity=cells.layer2_heat_capacity)
    # ir_fraction = 1: the kernel's radiative row then holds the sky-view fraction of a slope,
    # which multiplies the atmosphere's own downwelling infrared
    energy = prepare_energy(
        cols, clock.dt_s, latitude_deg=cells.latitude_deg, longitude_deg=cells.longitude_deg,
        albedo=cells.albedo, emissivity=cells.emissivity, slope_deg=cells.slope_deg,
        slope_azimuth_deg=cells.slope_azimuth_deg, probe_depth=cells.salt_depth_m,
        theta=options.theta, geothermal_flux=options.geothermal_flux,
        frost_albedo=_by_hemisphere(cells, options.frost_albedo, options.frost_albedo_south),
        frost_emissivity=_by_hemisphere(cells, options.frost_emissivity, options.frost_emissivity_south),
        frost_albedo_slope=options.frost_albedo_slope, frost_albedo_max=options.frost_albedo_max,
        diffuse_fraction=options.diffuse_fraction, ir_fraction=1.0, co2_frost=options.co2_frost)
    dt_max = largest_time_step(cols, cells.emissivity, options.theta)
    if np.any(clock.dt_s > dt_max):
        i = int(np.argmin(dt_max))
        need = int(np.ceil(planet.sol_s / dt_max[i]))
        raise ConfigError(
            f"clock.steps_per_sol: {clock.steps_per_sol} is too few for the cell at latitude "
            f"{cells.latitude_deg[i]:g} (thermal inertia {cells.thermal_inertia[i]:g}): its surface layer "
            f"relaxes in {float(surface_time_constant(cols, cells.emissivity)[i]):.0f} s and a step of "
            f"{clock.dt_s:.0f} s would make its temperature zig-zag; allowed: at least {need} steps per sol")
    capacity = cells.density * options.specific_surface_area_m2_kg * MONOLAYER_MASS_KG_M2
    supply = options.water_supply if options.water_supply is not None else default_climatology()
    eps = MOLAR_MASS_WATER / planet.molar_mass_air_kg_mol
    settings = dataclasses.replace(options.water, sol_s=planet.sol_s, steps_per_sol=int(clock.steps_per_sol),
                                   lapse_rate_k_m=options.lapse_rate_k_m, co2_emissivity_610=options.co2_emissivity,
                                   constant_mixing_ratio=-1.0 if supply.vmr is None else supply.vmr * eps)
    column = prepare_column(energy, settings, cells.porosity, gravity=planet.gravity_m_s2,
                            molar_mass_air=planet.molar_mass_air_kg_mol, monolayer_kg_m3=capacity)
    dust = options.dust if isinstance(options.dust, DustSeason) else DustSeason(options.dust)
    return ForcingModel(cells, options, planet, float(clock.dt_s), int(clock.steps_per_sol), column,
                        supply, dust)


def _by_hemisphere(cells, north, south):
    """Per-cell value: ``north`` at latitudes >= 0, ``south`` (``None``: as north) below."""
    return np.where(cells.latitude_deg >= 0.0, north, north if south is None else south)


def _check_clock(model, clock):
    if clock.steps_per_sol != model.steps_per_sol or not np.isclose(clock.dt_s, model.dt_s):
        raise ConfigError(f"clock: dt_s {clock.dt_s} s does not match the prepared model's "
                          f"{model.dt_s} s; prepare the forcing with this clock")


def _hour_angle0(clock, i0, i1):
    """Hour angle at east longitude 0 at the middle of steps ``i0:i1`` [rad].

    Same definition as ``Clock.hour_angle_rad`` (LTST = LMST + EOT, zero at noon),
    evaluated on the slice only; plus half a step of rotation."""
    ltst = clock.mean_solar_time_h[i0:i1] + clock.equation_of_time_h[i0:i1]
    return (ltst - 12.0) * (np.pi / 12.0) + np.pi / clock.steps_per_sol


def _atmosphere_inputs(model, ls):
    """Pressure, optical depth, infrared emissivity and CO2 frost point ``[step, cell]``."""
    c, opt = model.cells, model.options
    p = np.ascontiguousarray(model.options.pressure(ls, c.latitude_deg, c.elevation_m))
    tau = model.dust(ls, p)
    eps = column_ir_emissivity(tau, p, opt.co2_emissivity, opt.dust_ir_ratio)
    tf = co2_frost_point(p) if opt.co2_frost else np.full(p.shape, -1.0)
    return p, tau, eps, tf


def free_mixing_ratio(model, ls_deg, pressure_pa, background_temperature_k):
    """Mixing ratio of the free atmosphere above the near-surface air [kg kg-1], ``[cell]``.

    Parameters
    ----------
    model : ForcingModel
    ls_deg : float [deg]               season of the block
    pressure_pa : array [cell] [Pa]
    background_temperature_k : array [cell] [K]   near-surface background air temperature

    Returns
    -------
    ndarray [cell]: the constant mixing ratio of a ``vmr`` supply, else the column of the
    supply at the cells, distributed by :func:`~wetcycle.forcing.supply.near_surface_mixing_ratio`.
    """
    planet = model.planet
    sup = model.supply
    eps = MOLAR_MASS_WATER / planet.molar_mass_air_kg_mol
    if sup.vmr is not None:
        return np.full(model.cells.n_cells, sup.vmr * eps)
    c = model.cells
    w = sup.column(np.array([ls_deg]), c.latitude_deg, c.longitude_deg)[0]
    t0 = np.clip(background_temperature_k, 120.0, 300.0)
    q0, _ = near_surface_mixing_ratio(w, pressure_pa, t0, model.options.lapse_rate_k_m,
                                      planet.gravity_m_s2, planet.molar_mass_air_kg_mol)
    return q0


def initial_state(model, clock, temperature=None):
    """A first-guess state at the start of ``clock``.

    Parameters
    ----------
    model : ForcingModel
    clock : Clock
    temperature : array [cell] [K], optional
        Isothermal profile; default the annual-mean radiative-equilibrium
        temperature ``((1 - A) <Q> / (eps sigma))**0.25`` from the diurnal-mean
        top-of-atmosphere insolation sampled once per sol over a year
        (:func:`~wetcycle.forcing.insolation.daily_mean_toa_insolation`),
        raised to the CO2 frost point where CO2 frost is on.  The pores hold
        water in equilibrium with the free atmosphere's vapour at the start.

    Returns
    -------
    ForcingState
    """
    c = model.cells
    p, _, _, _ = _atmosphere_inputs(model, np.asarray(clock.ls_deg[:1]))
    if temperature is None:
        n_year = int(round(model.planet.year_sols))
        yclock = make_clock(model.planet, steps_per_sol=1, n_sols=n_year,
                            start_jd_tt=float(clock.jd_tt[0]), align_to_midnight=False)
        q = _per_cell_mean(daily_mean_toa_insolation(np.deg2rad(c.latitude_deg)[None, :],
                                                     yclock.declination_rad[:, None],
                                                     yclock.distance_au[:, None]))
        temperature = ((1.0 - c.albedo) * q / (c.emissivity * STEFAN_BOLTZMANN)) ** 0.25
        if model.options.co2_frost:
            temperature = np.maximum(temperature, co2_frost_point(p[0]) + 1.0)
        temperature = np.maximum(temperature, 120.0)
    temperature = np.broadcast_to(np.asarray(temperature, dtype=float), (c.n_cells,))
    q0 = free_mixing_ratio(model, float(clock.ls_deg[0]), p[0], temperature)
    return ForcingState(column_initial_state(model.column, temperature, q0, p[0], c.layer2_depth_m), 0)


def _per_cell_sum(a):
    """Sum of ``a[..., cell]`` over every axis but the last, cell by cell, in an order that does
    not depend on how many cells there are (each cell's values summed as one contiguous row),
    so that a chunk's results do not depend on the chunking."""
    a = np.asarray(a, dtype=float)
    rows = np.ascontiguousarray(np.moveaxis(a, -1, 0).reshape(a.shape[-1], -1))
    return rows.sum(axis=1)


def _per_cell_mean(a):
    a = np.asarray(a, dtype=float)
    return _per_cell_sum(a) / (a.size // a.shape[-1])


def _advance(model, state, clock, i0, i1):
    """Run steps ``i0:i1`` of ``clock`` from ``state.column``; return the column state and the
    kernel's outputs plus the per-step atmosphere inputs."""
    ls = np.asarray(clock.ls_deg[i0:i1])
    p, tau, eps, tf = _atmosphere_inputs(model, ls)
    c = model.cells
    w = model.supply.column(ls, c.latitude_deg, c.longitude_deg) if model.supply.vmr is None else np.zeros(p.shape)
    new, out = column_block(model.column, state.column, clock.declination_rad[i0:i1], clock.distance_au[i0:i1],
                            _hour_angle0(clock, i0, i1), tau, p, eps, w, tf, step0=i0)
    out["surface_pressure"] = p
    out["dust_optical_depth"] = tau
    return new, out


def _humidities(out):
    """Relative humidities at the salt and at the sensor height (see the module notes)."""
    t_salt = out["salt_temperature"]
    vp = out["vapor_pressure"]
    rh = relative_humidity(vp, np.clip(t_salt, 123.0, 332.0))
    cold = t_salt <= TRIPLE_POINT_T
    rh_ice = np.where(cold, relative_humidity_ice(vp, np.clip(t_salt, 110.0, TRIPLE_POINT_T)), rh)
    ta = out["air_temperature"]
    ea = out["air_vapor_pressure"]
    cold_a = ta <= TRIPLE_POINT_T
    rha_l = relative_humidity(ea, np.clip(ta, 123.0, 332.0))
    rha = np.where(cold_a, relative_humidity_ice(ea, np.clip(ta, 110.0, TRIPLE_POINT_T)), rha_l)
    return rh, rh_ice, rha


def forcing_block(model, state, clock, n_steps=None):
    """Advance the forcing over ``n_steps`` steps of ``clock`` from ``state.step``.

    Parameters
    ----------
    model : ForcingModel
    state : ForcingState
        Not modified.
    clock : Clock
        The run's clock (same ``dt_s`` as the model).
    n_steps : int, optional
        Default one sol (``clock.steps_per_sol``); truncated at the clock's end.

    Returns
    -------
    state : ForcingState
        After the block (``step`` advanced).
    out : dict of ndarray [step, cell]
        Keys and units in :data:`OUTPUT_UNITS`; values at the end of each step (the two
        water fluxes: amounts over the step).
    """
    _check_clock(model, clock)
    i0 = int(state.step)
    n = clock.steps_per_sol if n_steps is None else int(n_steps)
    i1 = min(i0 + n, clock.n_steps)
    if i1 <= i0:
        raise ConfigError(f"forcing_block: step {i0} is at or past the clock's end ({clock.n_steps} steps)")
    col, out = _advance(model, state, clock, i0, i1)
    rh, rh_ice, rha = _humidities(out)
    out["relative_humidity"] = rh
    out["relative_humidity_ice"] = rh_ice
    out["air_relative_humidity_ice"] = rha
    return ForcingState(col, i1), {k: out[k] for k in OUTPUT_UNITS}


def iter_forcing(model, state, clock, block_steps=None):
    """Stream the clock in blocks from ``state.step`` to the end.

    Yields
    ------
    (start, state, out)
        First step index of the block, the state after it, and its outputs
        (see :func:`forcing_block`).
    """
    while state.step < clock.n_steps:
        start = state.step
        state, out = forcing_block(model, state, clock, block_steps)
        yield start, state, out


#: Sols run at the clock's own step at the end of a coarse-step spin-up (see :func:`spin_up`).
SETTLE_SOLS = 30


@dataclass(frozen=True)
class SpinUp:
    """Result of :func:`spin_up`.

    ``state`` at the clock's start; ``years`` run (the most any cell needed); ``converged``
    (every cell); ``changes`` [K] (largest change over cells of the daily min/mean/max surface
    temperature from the previous year, one per year after the first); ``cell_years`` and
    ``cell_converged`` per cell."""

    state: ForcingState
    years: int
    converged: bool
    changes: tuple
    cell_years: np.ndarray = None
    cell_converged: np.ndarray = None


def _year(model, cstate, yclock, block_sols, snap_sol=None):
    """Run one year; per-sol min/mean/max surface temperature and mean surface vapour density,
    the annual mean of the surface temperature and of every node's temperature sampled at the
    blocks' ends ``[node, cell]``, and (``snap_sol``) the column state at the start of sol
    ``snap_sol`` (else None)."""
    spd = yclock.steps_per_sol
    n_sols = yclock.n_sols
    nc = model.cells.n_cells
    stats = np.empty((4, n_sols, nc))
    ts_sum = np.zeros(nc)
    prof_sum = np.zeros_like(cstate.temperature)
    n_blocks = 0
    st = ForcingState(cstate, 0)
    snap = None
    starts = list(range(0, n_sols, block_sols))
    if snap_sol is not None and 0 < snap_sol < n_sols and snap_sol not in starts:
        starts = sorted(starts + [snap_sol])    # (blocks cut anywhere give the same numbers)
    for s0, s1 in zip(starts, starts[1:] + [n_sols]):
        if s0 == snap_sol:
            snap = st.column.copy()
        col, out = _advance(model, st, yclock, s0 * spd, s1 * spd)
        st = ForcingState(col, s1 * spd)
        ts = out["surface_temperature"].reshape(s1 - s0, spd, -1)
        stats[0, s0:s1] = ts.min(axis=1)
        stats[1, s0:s1] = np.ascontiguousarray(ts.transpose(0, 2, 1)).mean(axis=2)
        stats[2, s0:s1] = ts.max(axis=1)
        # daily mean surface vapour density [g m-3] joins the periodicity test (1e-3 g m-3 ~
        # 1 % of a typical value counts as 0.1 of the temperature tolerance's unit)
        rv = (out["surface_vapor_pressure"] / (R_VAPOUR * out["surface_temperature"])).reshape(s1 - s0, spd, -1)
        stats[3, s0:s1] = np.ascontiguousarray(rv.transpose(0, 2, 1)).mean(axis=2) * 1e5
        ts_sum += _per_cell_sum(ts.reshape(-1, ts.shape[-1]))
        # nodes below the diurnal layer barely move within a block: their values at each block's
        # end sample their annual means
        prof_sum += col.temperature
        n_blocks += 1
    return st.column, stats, ts_sum / (n_sols * spd), prof_sum / n_blocks, snap


def spin_up(model, clock, state=None, *, tol_k=0.1, max_years=30, lead_sols=5,
            accelerate=True, block_sols=10, coarse_steps_per_sol=None, settle_sols=SETTLE_SOLS):
    """Repeat the year ending at the clock's start until each cell's annual cycle is periodic.

    Method: (i) ``lead_sols`` repetitions of the first sol of that year settle the diurnal
    layer; (ii) whole years (``round(year_sols)`` sols) are repeated until, for a cell, the
    daily minimum, mean and maximum surface temperature of every sol change by less than
    ``tol_k`` from the previous year, and its daily-mean surface vapour density by less than
    ``tol_k`` x 1e-5 kg m-3 per kelvin of tolerance (1e-6 kg m-3 at the default 0.1 K: a few
    per cent of typical night values); that cell's state is kept from then on, so a cell's
    result never depends on the other cells of its chunk; (iii) with ``accelerate``, after
    each year the whole temperature profile is shifted so that the annual-mean bottom
    temperature matches the periodic-state value ``<T_s> + F_geo sum(dz / k)`` (in a periodic
    state with constant conductivities the annual-mean profile is exactly linear with that
    gradient: common practice), removing the slow deep transient.  With ``accelerate="profile"``
    each node deeper than :data:`PROFILE_SHIFT_SKIN_DEPTHS` diurnal skin depths is shifted by
    its own distance from that periodic-state mean profile (its annual mean sampled at the ends
    of the year's blocks), and the nodes above by the first such node's: the part of the profile
    the year has already brought to its mean stays in place, where the uniform shift moves it
    off again by the bottom's offset.  On the grid benchmark's cells (``scripts/compare_spinup.py``,
    README "Performance") three coarse years so shifted came as close to the periodic state as
    four with the uniform shift before the radiation revision, not after it.

    With ``coarse_steps_per_sol`` (fewer than the clock's), steps (i) and (ii) run at that
    coarser step with backward Euler for the heat (theta = 1, which damps every mode at any
    step, so the step is not limited by the surface node's relaxation time; the run's own
    Crank-Nicolson is limited, see :func:`~wetcycle.forcing.energy.largest_time_step`), and
    the last ``settle_sols`` sols of the final year are run again at the clock's step and
    theta from the coarse state at that sol, so the diurnal layer, the air and the pore
    water start the run in the run's own discretisation.  Periodicity is judged on the
    coarse years.  The deep, annual part of the state is what the years build; ``scripts/
    compare_spinup.py`` measures how far the counted year moves from the full-step spin-up.

    Parameters
    ----------
    model : ForcingModel
    clock : Clock
        The run's clock; its first step is where the returned state applies.
    state : ForcingState, optional
        Starting guess (default :func:`initial_state`).
    tol_k : float [K], > 0
    max_years : int, >= 2
    lead_sols : int, >= 0
    accelerate : bool or "profile"
        Shift the profile after each year: True (by the bottom's offset), "profile" (node by
        node, see above) or False.
    block_sols : int
        Sols per kernel call (memory ~ 150 bytes x steps x cells per call).
    coarse_steps_per_sol : int, optional
        1 <= n < clock.steps_per_sol; None (or the clock's own) for full-step years.
    settle_sols : int, 1 <= n < year sols
        Sols run at the clock's step after coarse years.

    Returns
    -------
    SpinUp
    """
    if not tol_k > 0:
        raise ConfigError(f"tol_k: received {tol_k}; allowed > 0 K")
    if not (isinstance(max_years, int) and max_years >= 2):
        raise ConfigError(f"max_years: received {max_years!r}; allowed a whole number >= 2")
    _check_clock(model, clock)
    state = initial_state(model, clock) if state is None else state
    spd = clock.steps_per_sol
    n_year = int(round(model.planet.year_sols))
    start_year = float(clock.jd_tt[0]) - n_year * model.planet.sol_s / 86400.0
    yclock = make_clock(model.planet, steps_per_sol=spd, n_sols=n_year, start_jd_tt=start_year,
                        align_to_midnight=False)
    coarse = coarse_steps_per_sol is not None and int(coarse_steps_per_sol) != spd
    snap_sol = None
    smodel, sclock = model, yclock
    if coarse:
        cspd = coarse_steps_per_sol
        if not (isinstance(cspd, (int, np.integer)) and 1 <= cspd < spd):
            raise ConfigError(f"clock.spinup_steps_per_sol: {cspd!r} not allowed; allowed a whole number "
                              f"from 1 to the run's steps_per_sol ({spd})")
        if not (isinstance(settle_sols, (int, np.integer)) and 1 <= settle_sols < n_year):
            raise ConfigError(f"settle_sols: {settle_sols!r} not allowed; allowed 1 to {n_year - 1}")
        sclock = make_clock(model.planet, steps_per_sol=int(cspd), n_sols=n_year, start_jd_tt=start_year,
                            align_to_midnight=False)
        smodel = prepare_forcing(model.cells, sclock, dataclasses.replace(model.options, theta=1.0))
        snap_sol = n_year - int(settle_sols)
    sspd = sclock.steps_per_sol
    cols = model.energy.columns
    geo_offset = model.options.geothermal_flux * np.sum(1.0 / cols.conductance[:-1], axis=0)
    cs = state.column.copy()
    for _ in range(lead_sols):
        cs, _ = _advance(smodel, ForcingState(cs, 0), sclock, 0, sspd)
    nc = model.cells.n_cells
    prev = None
    changes = []
    done = np.zeros(nc, dtype=bool)
    cell_years = np.zeros(nc, dtype=int)
    kept = None
    kept_snap = None
    years = 0
    for years in range(1, max_years + 1):
        cs, stats, ts_mean, prof_mean, snap = _year(smodel, cs, sclock, block_sols, snap_sol)
        cell_years[~done] = years
        if prev is not None:
            d = np.abs(stats - prev)
            per_cell = np.maximum(d[:3].max(axis=(0, 1)), d[3].max(axis=0) * 0.1)
            changes.append(float(per_cell[~done].max()) if np.any(~done) else 0.0)
            now = (per_cell < tol_k) & ~done
            if np.any(now):
                kept = _keep(kept, cs, now)
                if coarse:
                    kept_snap = _keep(kept_snap, snap, now)
                done |= now
            if done.all():
                break
        prev = stats
        if accelerate == "profile":
            shift = np.where(done[None, :], 0.0, _profile_shift(model, ts_mean, prof_mean))
        elif accelerate:
            shift = np.where(done, 0.0, ts_mean + geo_offset - prof_mean[-1])[None, :]
        if accelerate:
            cs = dataclasses.replace(cs, temperature=cs.temperature + shift)
            if coarse:
                snap = dataclasses.replace(snap, temperature=snap.temperature + shift)
    if coarse:
        # the last settle_sols sols of the year again, at the run's step, from the coarse state
        start = _keep(kept_snap, snap, ~done) if kept_snap is not None else snap
        st = ForcingState(start, snap_sol * spd)
        for s0 in range(snap_sol, n_year, block_sols):
            s1 = min(s0 + block_sols, n_year)
            col, _ = _advance(model, st, yclock, s0 * spd, s1 * spd)
            st = ForcingState(col, s1 * spd)
        final = st.column
    else:
        final = _keep(kept, cs, ~done) if kept is not None else cs
    return SpinUp(ForcingState(final, 0), int(cell_years.max()), bool(done.all()), tuple(changes),
                  cell_years, done)


#: Nodes deeper than this many diurnal skin depths take the per-node shift of
#: ``spin_up(accelerate="profile")``; their block-end samples (every ``block_sols`` sols, at one time
#: of day) then miss the diurnal cycle by less than e^-5 (0.7 %) of its surface amplitude.
PROFILE_SHIFT_SKIN_DEPTHS = 5.0


def _profile_shift(model, ts_mean, prof_mean):
    """Per-node shift ``[node, cell]`` [K] that puts each node's annual mean on the periodic-state
    profile ``<T_s> + F_geo sum(dz / k)`` (linear in a periodic state with constant conductivities:
    the annual-mean heat flux is the same through every element); nodes within
    :data:`PROFILE_SHIFT_SKIN_DEPTHS` diurnal skin depths take the shift of the first node below."""
    from .regolith import skin_depth
    c = model.cells
    cols = model.energy.columns
    depth = cols.depth
    geo = model.options.geothermal_flux * np.concatenate(
        [np.zeros((1, depth.shape[1])), np.cumsum(1.0 / cols.conductance[:-1], axis=0)])[:depth.shape[0]]
    want = ts_mean[None, :] + geo - prof_mean
    z0 = PROFILE_SHIFT_SKIN_DEPTHS * skin_depth(c.thermal_inertia, c.density, c.heat_capacity, model.planet.sol_s)
    deep = depth >= np.minimum(z0, depth[-1])[None, :]
    j0 = np.argmax(deep, axis=0)
    return np.where(deep, want, want[j0, np.arange(depth.shape[1])][None, :])


def _keep(kept, cs, mask):
    """Copy the cells ``mask`` of column state ``cs`` into ``kept`` (a new state)."""
    if kept is None:
        kept = cs.copy()
    fields = {}
    for f in dataclasses.fields(cs):
        a = np.array(getattr(kept, f.name), copy=True)
        b = getattr(cs, f.name)
        a[..., mask] = b[..., mask]
        fields[f.name] = a
    return ColumnState(**fields)


def run_forcing(cells, clock, options=ForcingOptions(), *, spin=True, tol_k=0.1, max_years=30,
                block_steps=None):
    """Prepare, spin up and run a chunk over the whole clock, returning full series.

    For long runs over many cells prefer :func:`iter_forcing` (bounded memory).

    Returns
    -------
    out : dict of ndarray [step, cell]   keys of :data:`OUTPUT_UNITS`
    info : dict   ``spinup_years``, ``spinup_converged``, ``spinup_changes`` [K], ``final_state``
    """
    model = prepare_forcing(cells, clock, options)
    if spin:
        su = spin_up(model, clock, tol_k=tol_k, max_years=max_years)
        state = su.state
    else:
        su = None
        state = initial_state(model, clock)
    parts = {k: [] for k in OUTPUT_UNITS}
    for _, state, out in iter_forcing(model, state, clock, block_steps):
        for k in OUTPUT_UNITS:
            parts[k].append(out[k])
    res = {k: np.concatenate(v, axis=0) for k, v in parts.items()}
    info = {"spinup_years": su.years if su else 0, "spinup_converged": su.converged if su else False,
            "spinup_changes": su.changes if su else (), "final_state": state}
    return res, info

