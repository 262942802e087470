"""Forcing driver: orbit + surface energy balance + vapour for a chunk of cells.

Recipe for one block of steps (a sol by default), all cells of a chunk at once:

1. solar geometry per step from the clock (:mod:`wetcycle.orbit`);
2. surface pressure from elevation and the seasonal CO2 cycle
   (:mod:`wetcycle.forcing.pressure`);
3. surface temperature, CO2 frost and the temperature at the salt depth from
   the energy balance and conduction kernel (:mod:`wetcycle.forcing.energy`);
4. near-surface vapour pressure from a mixing ratio or a seasonal column
   table, then water-frost exchange at the surface
   (:mod:`wetcycle.forcing.vapour`);
5. relative humidity with respect to liquid water and ice at the salt
   temperature (the salt is taken to see the surface vapour pressure); above
   the triple point (273.16 K), where ice is not stable, the ice curve is
   continued by the liquid curve (as in :func:`~wetcycle.forcing.vapour.frost_kernel`),
   so ``relative_humidity_ice = relative_humidity`` there.

The state (temperature profile, CO2 frost, water frost, position in the
clock) is carried explicitly: :func:`forcing_block` takes a
:class:`ForcingState` and returns the next one, so runs can be restarted and
chained.  :func:`spin_up` repeats the year that ends at the clock's start
until the annual cycle is periodic.  Outputs are plain arrays ``[step, cell]``;
this module imports nothing from the phase kernel or the salt modules.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Callable, Union

import numpy as np

from ..clock import make_clock
from ..errors import ConfigError, UnknownNameError
from ..water import TRIPLE_POINT_T
from .energy import (STEFAN_BOLTZMANN, EnergyState, co2_frost_point, energy_block,
                     prepare_energy)
from .insolation import daily_mean_toa_insolation
from .pressure import DEMO_CO2_CYCLE, PeriodicTable, pressure_at_elevation, surface_pressure
from .regolith import build_columns, probe_weights
from .vapour import (DEFAULT_LAYER_THICKNESS_M, DEFAULT_TRANSFER_VELOCITY_M_S, DEMO_COLUMN_TABLE,
                     frost_exchange, relative_humidity, relative_humidity_ice,
                     vapor_pressure_from_column_table, vapor_pressure_from_vmr)

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

    @property
    def n_cells(self):
        return self.latitude_deg.size


def make_cells(latitude_deg, longitude_deg, *, elevation_m=0.0, albedo=0.25,
               thermal_inertia=250.0, emissivity=0.95, slope_deg=0.0, slope_azimuth_deg=0.0,
               salt_depth_m=0.0, density=1500.0, heat_capacity=800.0, layer2_depth_m=np.inf,
               layer2_inertia=2000.0, layer2_density=2000.0, layer2_heat_capacity=1000.0):
    """Broadcast per-cell properties to arrays ``[cell]``.

    Parameters
    ----------
    latitude_deg, longitude_deg : array [deg]   planetocentric latitude, east longitude
    elevation_m : array [m]                     height above the datum
    albedo, emissivity : array [-]              bare-surface values
    thermal_inertia : array [J m-2 K-1 s-1/2]   top material
    slope_deg, slope_azimuth_deg : array [deg]  slope; direction faced, clockwise from north
    salt_depth_m : array [m]                    0 for a surface crust
    density, heat_capacity : array [kg m-3], [J kg-1 K-1]   top material
    layer2_depth_m : array [m]                  top of a second material; inf for none
    layer2_inertia, layer2_density, layer2_heat_capacity : array
        Second material (defaults: an invented ice-cemented soil).

    Values are checked where they are used (ValidityError naming the field).
    """
    lat = np.atleast_1d(np.asarray(latitude_deg, dtype=float))
    n = np.broadcast(lat, np.atleast_1d(np.asarray(longitude_deg, dtype=float))).size
    vals = dict(latitude_deg=latitude_deg, longitude_deg=longitude_deg, elevation_m=elevation_m,
                albedo=albedo, thermal_inertia=thermal_inertia, emissivity=emissivity,
                slope_deg=slope_deg, slope_azimuth_deg=slope_azimuth_deg,
                salt_depth_m=salt_depth_m, density=density, heat_capacity=heat_capacity,
                layer2_depth_m=layer2_depth_m, layer2_inertia=layer2_inertia,
                layer2_density=layer2_density, layer2_heat_capacity=layer2_heat_capacity)
    out = {}
    for k, v in vals.items():
        a = np.asarray(v, dtype=float)
        try:
            out[k] = np.ascontiguousarray(np.broadcast_to(a, (n,))).copy()
        except ValueError:
            raise ConfigError(f"{k}: shape {a.shape} does not match {n} cells") from None
    return CellSet(**out)


def _vapour_vmr(model, ls, p):
    return vapor_pressure_from_vmr(model.options.vmr, p)


def _vapour_column(model, ls, p):
    e = vapor_pressure_from_column_table(ls, model.options.column_table, model.planet,
                                         model.options.confinement)
    return np.broadcast_to(np.asarray(e)[:, None], p.shape)


#: Registry of near-surface vapour sources: name -> function(model, ls [step], p [step, cell]).
VAPOUR_SOURCES: dict[str, Callable] = {"vmr": _vapour_vmr, "column": _vapour_column}


@dataclass(frozen=True)
class ForcingOptions:
    """Settings of the forcing (all SI).

    Attributes
    ----------
    tau : float or PeriodicTable        dust optical depth, or a table against Ls
    vapour : str                        key of :data:`VAPOUR_SOURCES` ("vmr", "column")
    vmr : float [mol mol-1]             near-surface water volume mixing ratio ("vmr")
    column_table : PeriodicTable [pr-um]  column water against Ls ("column")
    confinement : float [-]             near-surface / column-mean mixing ratio ("column")
    p_ref_pa, scale_height_m : float    datum pressure [Pa] and scale height [m]; None: planet's
    pressure_cycle : PeriodicTable or None   relative surface pressure against Ls
    theta : float [-]                   0.5 Crank-Nicolson ... 1 backward Euler
    first_layer_fraction, stretch, annual_depths, n_layers : grid (see regolith.build_columns)
    geothermal_flux : float [W m-2]
    frost_albedo, frost_emissivity : float [-]   CO2 frost radiative properties
    diffuse_fraction, ir_fraction : float [-]    see insolation
    co2_frost : bool
    transfer_velocity_m_s, layer_thickness_m : float   water-frost exchange (vapour.frost_exchange)
    """

    tau: Union[float, PeriodicTable] = 0.3
    vapour: str = "vmr"
    vmr: float = 1.5e-4
    column_table: PeriodicTable = DEMO_COLUMN_TABLE
    confinement: float = 1.0
    p_ref_pa: float | None = None
    scale_height_m: float | None = None
    pressure_cycle: PeriodicTable | None = DEMO_CO2_CYCLE
    theta: float = 0.5
    first_layer_fraction: float = 0.1
    stretch: float = 1.2
    annual_depths: float = 3.0
    n_layers: int | None = None
    geothermal_flux: float = 0.0
    frost_albedo: float = 0.6
    frost_emissivity: float = 0.9
    diffuse_fraction: float = 0.5
    ir_fraction: float = 0.04
    co2_frost: bool = True
    transfer_velocity_m_s: float = DEFAULT_TRANSFER_VELOCITY_M_S
    layer_thickness_m: float = DEFAULT_LAYER_THICKNESS_M


@dataclass(frozen=True)
class ForcingModel:
    """Everything fixed for a chunk: cells, options, planet, energy model (see :func:`prepare_forcing`)."""

    cells: CellSet
    options: ForcingOptions
    planet: object
    dt_s: float
    steps_per_sol: int
    energy: object
    p_datum: np.ndarray


@dataclass(frozen=True)
class ForcingState:
    """State between blocks: energy state, water frost ``[cell]`` [kg m-2], next clock step."""

    energy: EnergyState
    water_frost: np.ndarray
    step: int = 0


def prepare_forcing(cells, clock, options=ForcingOptions()):
    """Validate a chunk and precompute its regolith grids and factors.

    Parameters
    ----------
    cells : CellSet
    clock : wetcycle.orbit.Clock
        Fixes the planet and the time step ``clock.dt_s`` [s].
    options : ForcingOptions

    Returns
    -------
    ForcingModel
    """
    if options.vapour not in VAPOUR_SOURCES:
        raise UnknownNameError(f"vapour: {options.vapour!r} is not known; allowed: "
                               f"{', '.join(sorted(VAPOUR_SOURCES))}")
    planet = clock.planet
    year_s = planet.sol_s * planet.year_sols
    cols = build_columns(cells.thermal_inertia, cells.density, cells.heat_capacity, planet.sol_s,
                         year_s, first_layer_fraction=options.first_layer_fraction,
                         stretch=options.stretch, annual_depths=options.annual_depths,
                         n_layers=options.n_layers, layer2_depth=cells.layer2_depth_m,
                         layer2_inertia=cells.layer2_inertia, layer2_density=cells.layer2_density,
                         layer2_heat_capacity=cells.layer2_heat_capacity)
    energy = prepare_energy(
        cols, clock.dt_s, latitude_deg=cells.latitude_deg, longitude_deg=cells.longitude_deg,
        albedo=cells.albedo, emissivity=cells.emissivity, slope_deg=cells.slope_deg,
        slope_azimuth_deg=cells.slope_azimuth_deg, probe_depth=cells.salt_depth_m,
        theta=options.theta, geothermal_flux=options.geothermal_flux,
        frost_albedo=options.frost_albedo, frost_emissivity=options.frost_emissivity,
        diffuse_fraction=options.diffuse_fraction, ir_fraction=options.ir_fraction,
        co2_frost=options.co2_frost)
    p_ref = planet.mean_surface_pressure_pa if options.p_ref_pa is None else options.p_ref_pa
    h = planet.scale_height_m if options.scale_height_m is None else options.scale_height_m
    p_datum = np.asarray(pressure_at_elevation(cells.elevation_m, p_ref, h))
    model = ForcingModel(cells, options, planet, float(clock.dt_s), int(clock.steps_per_sol),
                         energy, np.atleast_1d(p_datum))
    return model


def _check_clock(model, clock):
    if clock.steps_per_sol != model.steps_per_sol or not np.isclose(clock.dt_s, model.dt_s):
        raise ConfigError(f"clock: dt_s {clock.dt_s} s does not match the prepared model's "
                          f"{model.dt_s} s; prepare the forcing with this clock")


def _pressure(model, ls):
    opt = model.options
    p_ref = model.planet.mean_surface_pressure_pa if opt.p_ref_pa is None else opt.p_ref_pa
    h = model.planet.scale_height_m if opt.scale_height_m is None else opt.scale_height_m
    return np.ascontiguousarray(surface_pressure(ls, model.cells.elevation_m, p_ref, h,
                                                 opt.pressure_cycle))


def _tau(model, ls):
    tau = model.options.tau
    return (np.asarray(tau(ls), dtype=float) if callable(tau) else np.full(ls.shape, float(tau)))


def _hour_angle0(clock, i0, i1):
    """Hour angle at east longitude 0 at the middle of steps ``i0:i1`` [rad].

    Same definition as ``Clock.hour_angle_rad`` (LTST = LMST + EOT, zero at noon),
    evaluated on the slice only; plus half a step of Earth/Mars rotation."""
    ltst = clock.mean_solar_time_h[i0:i1] + clock.equation_of_time_h[i0:i1]
    return (ltst - 12.0) * (np.pi / 12.0) + np.pi / clock.steps_per_sol


def _energy_inputs(model, clock, i0, i1):
    ls = np.asarray(clock.ls_deg[i0:i1])
    h0 = _hour_angle0(clock, i0, i1)
    return (ls, clock.declination_rad[i0:i1], clock.distance_au[i0:i1], h0,
            _tau(model, ls)[:, None], _pressure(model, ls))


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
        raised to the CO2 frost point where CO2 frost is on.

    Returns
    -------
    ForcingState
    """
    c = model.cells
    if temperature is None:
        n_year = int(round(model.planet.year_sols))
        yclock = make_clock(model.planet, steps_per_sol=1, n_sols=n_year,
                            start_jd_tt=float(clock.jd_tt[0]), align_to_midnight=False)
        q = _per_cell_mean(daily_mean_toa_insolation(np.deg2rad(c.latitude_deg)[None, :],
                                                     yclock.declination_rad[:, None],
                                                     yclock.distance_au[:, None]))
        temperature = ((1.0 - c.albedo) * q / (c.emissivity * STEFAN_BOLTZMANN)) ** 0.25
        if model.options.co2_frost:
            temperature = np.maximum(temperature, co2_frost_point(model.p_datum) + 1.0)
        temperature = np.maximum(temperature, 100.0)
    est = model.energy.initial_state(temperature)
    return ForcingState(est, np.zeros(c.n_cells), 0)


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
        Keys and units in :data:`OUTPUT_UNITS`; values at the end of each step.
    """
    _check_clock(model, clock)
    i0 = int(state.step)
    n = clock.steps_per_sol if n_steps is None else int(n_steps)
    i1 = min(i0 + n, clock.n_steps)
    if i1 <= i0:
        raise ConfigError(f"forcing_block: step {i0} is at or past the clock's end ({clock.n_steps} steps)")
    ls, dec, dist, h0, tau, p = _energy_inputs(model, clock, i0, i1)
    est, eo = energy_block(model.energy, state.energy, dec, dist, h0, tau, p)
    ts = eo["surface_temperature"]
    t_salt = eo["probe_temperature"]
    e_air = np.ascontiguousarray(VAPOUR_SOURCES[model.options.vapour](model, ls, p), dtype=float)
    fr = frost_exchange(e_air, ts, state.water_frost, model.dt_s,
                        model.options.transfer_velocity_m_s, model.options.layer_thickness_m)
    vp = fr.surface_vapor_pressure_pa
    rh = relative_humidity(vp, t_salt)
    cold = t_salt <= TRIPLE_POINT_T
    rh_ice = np.where(cold, relative_humidity_ice(vp, np.where(cold, t_salt, TRIPLE_POINT_T)), rh)
    out = {
        "surface_temperature": ts,
        "salt_temperature": t_salt,
        "vapor_pressure": vp,
        "relative_humidity": rh,
        "relative_humidity_ice": rh_ice,
        "surface_pressure": p,
        "water_frost": fr.frost_kg_m2,
        "co2_frost": eo["co2_frost"],
    }
    return ForcingState(est, fr.final_frost_kg_m2, i1), out


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


@dataclass(frozen=True)
class SpinUp:
    """Result of :func:`spin_up`: ``state`` at the clock's start, ``years`` run,
    ``converged``, and ``changes`` [K] (largest change of the daily min/mean/max
    surface temperature from the previous year, one per year after the first)."""

    state: ForcingState
    years: int
    converged: bool
    changes: tuple


def _year_stats(model, estate, yclock, spd, block_sols, bottom_model):
    """Run one year (energy only); return the state and per-sol min/mean/max, mean T."""
    n_sols = yclock.n_sols
    stats = np.empty((3, n_sols, model.cells.n_cells))
    ts_sum = np.zeros(model.cells.n_cells)
    bot_sum = np.zeros(model.cells.n_cells)
    for s0 in range(0, n_sols, block_sols):
        s1 = min(s0 + block_sols, n_sols)
        _, dec, dist, h0, tau, p = _energy_inputs(model, yclock, s0 * spd, s1 * spd)
        estate, eo = energy_block(bottom_model, estate, dec, dist, h0, tau, p)
        ts = eo["surface_temperature"].reshape(s1 - s0, spd, -1)
        stats[0, s0:s1] = ts.min(axis=1)
        # daily means over a contiguous last axis: the same summation order for any cell count
        stats[1, s0:s1] = np.ascontiguousarray(ts.transpose(0, 2, 1)).mean(axis=2)
        stats[2, s0:s1] = ts.max(axis=1)
        ts_sum += _per_cell_sum(ts.reshape(-1, ts.shape[-1]))
        bot_sum += _per_cell_sum(eo["probe_temperature"])
    n = n_sols * spd
    return estate, stats, ts_sum / n, bot_sum / n


def spin_up(model, clock, state=None, *, tol_k=0.1, max_years=30, lead_sols=5,
            accelerate=True, block_sols=10):
    """Repeat the year ending at the clock's start until the annual cycle is periodic.

    Method: (i) ``lead_sols`` repetitions of the first sol of that year settle
    the diurnal layer; (ii) whole years (``round(year_sols)`` sols) are
    repeated until the daily minimum, mean and maximum surface temperature of
    every sol and cell change by less than ``tol_k`` from the previous year;
    (iii) with ``accelerate``, after each year the whole profile is shifted so
    that the annual-mean bottom temperature matches the periodic-state value
    ``<T_s> + F_geo sum(dz / k)`` (in a periodic state with constant
    conductivities the annual-mean profile is exactly linear with that
    gradient: common practice), removing the slow deep transient.  Water
    frost starts at zero.

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
    accelerate : bool
    block_sols : int
        Sols per kernel call (memory ~ 24 bytes x steps x cells per call).

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
    yclock = make_clock(model.planet, steps_per_sol=spd, n_sols=n_year,
                        start_jd_tt=float(clock.jd_tt[0]) - n_year * model.planet.sol_s / 86400.0,
                        align_to_midnight=False)
    cols = model.energy.columns
    idx, w = probe_weights(cols, cols.depth[-1])
    bottom_model = dataclasses.replace(model.energy, probe_index=idx, probe_weight=w)
    geo_offset = model.options.geothermal_flux * np.sum(1.0 / cols.conductance[:-1], axis=0)
    estate = state.energy.copy()
    for _ in range(lead_sols):
        _, dec, dist, h0, tau, p = _energy_inputs(model, yclock, 0, spd)
        estate, _ = energy_block(model.energy, estate, dec, dist, h0, tau, p)
    prev = None
    changes = []
    converged = False
    years = 0
    for years in range(1, max_years + 1):
        estate, stats, ts_mean, bot_mean = _year_stats(model, estate, yclock, spd, block_sols,
                                                       bottom_model)
        if prev is not None:
            changes.append(float(np.max(np.abs(stats - prev))))
            if changes[-1] < tol_k:
                converged = True
                break
        prev = stats
        if accelerate:
            shift = ts_mean + geo_offset - bot_mean
            estate = EnergyState(estate.temperature + shift[None, :], estate.co2_frost)
    return SpinUp(ForcingState(estate, np.zeros(model.cells.n_cells), 0), years, converged,
                  tuple(changes))


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
