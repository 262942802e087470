"""Orchestration: scenario -> clock -> forcing blocks -> phase kernel -> accumulators -> NetCDF.

The forcing and the phase model meet here, and only here, through plain
arrays [step, site].  Blocks of one sol (or a chamber's equivalent) stream
through the phase kernel while the accumulators keep running sums; full series
are kept only when the scenario asks for them.
"""

from __future__ import annotations

import json
import time
from dataclasses import dataclass

import numpy as np

from . import output
from .clock import make_clock
from .config import Scenario, load_scenario
from .errors import ConfigError, ValidityError, WetcycleError
from .block import PHASE_KEYS, phase_block, phase_outputs
from .phase import PhaseModel
from .stats import Accumulator
from .timescales import jd_tt_to_utc
from .water import LIQUID_T_RANGE, saturation_vapor_pressure_ice, saturation_vapor_pressure_liquid

FORCING_KEYS = ("surface_temperature", "salt_temperature", "vapor_pressure", "relative_humidity",
                "relative_humidity_ice", "surface_pressure", "water_frost", "co2_frost")
#: Outputs of the energy-balance forcing besides FORCING_KEYS (air at the sensor height, the
#: surface skin, fluxes, supply): saved in site series; absent for given series.
WATER_CYCLE_KEYS = ("air_temperature", "air_vapor_pressure", "air_relative_humidity_ice",
                    "surface_vapor_pressure", "sensible_heat_flux", "downwelling_longwave",
                    "surface_water_flux", "atmosphere_exchange", "dust_optical_depth",
                    "free_vapor_pressure")
#: Per-salt water-budget statistics of energy-balance runs (DESIGN decision 4).
WATER_CYCLE_STATS = ("salt_water_uptake", "surface_water_delivered", "uptake_exceeds_supply_steps")


@dataclass
class Block:
    """One block of forcing: step indices [i0, i1), arrays [step, site], per-step Ls, dt, LTST."""

    i0: int
    i1: int
    data: dict
    ls_deg: np.ndarray
    ltst_h: np.ndarray
    dt_s: np.ndarray


@dataclass
class ForcingSource:
    """A forcing ready to stream: ``blocks`` yields :class:`Block`; ``info`` describes it."""

    n_steps: int
    time_s: np.ndarray
    sol: np.ndarray
    ls_deg: np.ndarray
    ltst_h: np.ndarray     # [step, site]; or a clock.LocalTimes, sliced by the blocks
    years: float
    steps_per_sol: int
    blocks: object
    info: dict


def _sites(sc):
    g = lambda k: np.array([s[k] for s in sc.sites], dtype=float)
    return g


def _clock(sc):
    c = sc["clock"]
    planet = sc["scenario"]["planet"]
    from .orbit import get_planet
    p = get_planet(planet)
    n_sols = c["sols"] if c["sols"] is not None else c["years"] * p.year_sols
    n_sols = max(int(round(n_sols)), 1)
    kw = dict(steps_per_sol=c["steps_per_sol"], n_sols=n_sols)
    if c["start_utc"]:
        kw["start_utc"] = c["start_utc"]
    else:
        kw.update(start_ls=c["start_ls"], year=c["mars_year"] if planet == "mars" else None)
        if planet == "earth":
            raise ConfigError(f"{sc.source}: clock.start_utc: required for planet earth")
    return make_clock(planet, **kw), p


def _rh(e, T):
    from .forcing.vapour import relative_humidity_for_salt
    Tc = np.clip(T, *LIQUID_T_RANGE)
    rhi = e / np.where(Tc <= 273.16, saturation_vapor_pressure_ice(np.minimum(Tc, 273.16)),
                       saturation_vapor_pressure_liquid(Tc))
    return relative_humidity_for_salt(e, T), rhi


def _series_source(sc, clock, planet, T, e=None, rh=None, P=None, years=None, salt_T=None, frost=None):
    """A ForcingSource from full series [step, site] (prescribed or file forcing).

    ``salt_T`` is the temperature at the salt (default the surface temperature ``T``), ``frost``
    the surface water frost [kg m-2] (default none).
    """
    n = T.shape[0]
    # The salt sees the vapour pressure at its own temperature: a buried salt (``salt_T`` given)
    # gets the surface's vapour pressure (series forcing has no pore-vapour model) over the
    # saturation pressure at its depth.  A given RH is at the surface temperature.
    Ts = T if salt_T is None else salt_T
    if rh is None:
        rh, rhi = _rh(e, Ts)
    else:
        e = rh * saturation_vapor_pressure_liquid(np.clip(T, *LIQUID_T_RANGE))
        if salt_T is None:
            _, rhi = _rh(e, T)
        else:
            rh, rhi = _rh(e, Ts)
    P = np.broadcast_to(P if P is not None else planet.mean_surface_pressure_pa, T.shape)
    data = dict(surface_temperature=T, salt_temperature=T if salt_T is None else salt_T, vapor_pressure=e,
                relative_humidity=rh, relative_humidity_ice=rhi, surface_pressure=P,
                water_frost=np.zeros_like(T) if frost is None else frost, co2_frost=np.zeros_like(T))
    lon = _sites(sc)("longitude")
    ltst = clock.local_times(lon)     # each block's own steps, computed as they stream
    spd = clock.steps_per_sol

    def blocks():
        for i0 in range(0, n, spd):
            i1 = min(i0 + spd, n)
            yield Block(i0, i1, {k: np.ascontiguousarray(v[i0:i1]) for k, v in data.items()},
                        clock.ls_deg[i0:i1], ltst[i0:i1], np.full(i1 - i0, clock.dt_s))
    return ForcingSource(n, clock.time_s, clock.sol, clock.ls_deg, ltst,
                         years if years is not None else n * clock.dt_s / (planet.year_sols * planet.sol_s),
                         spd, blocks(), {"forcing": "series"})


#: Sols of energy-balance forcing per block of a run (one call of the forcing driver, then of the
#: phase model per salt): memory ~ (19 forcing + 8 per salt) arrays x steps x cells x 8 bytes.
FORCING_BLOCK_SOLS = 10


def energy_balance_options(sc):
    """The forcing options and their description for an energy-balance scenario.

    Returns ``(ForcingOptions, info)`` where ``info`` records, for the result's attributes,
    which water supply, dust and pressure drove the run (with the sha256 of a table file).
    """
    import dataclasses

    from .forcing import driver
    from .forcing.dust import DustSeason
    from .forcing.pressure import LanderPressureCycle
    from .forcing.supply import constant_mixing_ratio_table, read_column_table
    f = sc["forcing"]
    from .forcing.supply import default_climatology
    if f["water_column"] is not None:
        supply = read_column_table(sc.resolve(f["water_column"]), f["water_column_variable"])
    elif f["vapour_mixing_ratio"] is not None:
        supply = constant_mixing_ratio_table(f["vapour_mixing_ratio"])
    else:
        supply = default_climatology()
    if f["vapour_mixing_ratio"] is not None and f["water_column_scale"] != 1.0:
        raise ConfigError(f"{sc.source}: forcing.water_column_scale: applies to a column table, not to "
                          "vapour_mixing_ratio")
    supply = supply.scaled(f["water_column_scale"])
    dust = (DustSeason(f["dust_optical_depth"], scale_with_pressure=False) if f["dust_optical_depth"] is not None
            else DustSeason())
    a_dark = max(f["frost_albedo"], f["frost_albedo_south"])
    if f["frost_albedo_max"] < a_dark:
        raise ConfigError(f"{sc.source}: forcing.frost_albedo_max: {f['frost_albedo_max']!r} is below the frost "
                          f"albedo without sunlight; allowed {a_dark} to 1")
    base = driver.ForcingOptions()
    water = dataclasses.replace(
        base.water, wind_m_s=f["wind_speed"], sensor_height_m=f["sensor_height"],
        roughness_m=f["roughness_length"], thermal_roughness_m=f["roughness_length"],
        langmuir_k_ref_pa=f["adsorption_constant"], adsorption_heat_j_mol=f["adsorption_heat"],
        vapour_depth_m=f["water_column_depth"], dust_omega=f["dust_single_scattering_albedo"],
        dust_asymmetry=f["dust_asymmetry"])
    from .forcing.scattering import layer_constants
    try:
        layer_constants(water.dust_omega, water.dust_asymmetry)
    except ConfigError as exc:
        raise ConfigError(f"{sc.source}: {exc}") from None
    opts = driver.ForcingOptions(
        dust=dust, water_supply=supply,
        pressure=LanderPressureCycle(f["pressure_scale_height"], seasonal=f["seasonal_pressure_cycle"]),
        lapse_rate_k_m=f["lapse_rate"], co2_emissivity=f["co2_emissivity"],
        dust_ir_ratio=f["dust_infrared_ratio"], specific_surface_area_m2_kg=f["specific_surface_area"],
        water=water, n_layers=f["layers"], co2_frost=f["co2_frost"], frost_albedo=f["frost_albedo"],
        frost_emissivity=f["frost_emissivity"], frost_albedo_south=f["frost_albedo_south"],
        frost_emissivity_south=f["frost_emissivity_south"], frost_albedo_slope=f["frost_albedo_slope"],
        frost_albedo_max=f["frost_albedo_max"])
    sup = supply
    info = {"water_supply": sup.name, "dust_model": dust.name,
            "pressure_model": opts.pressure.name + ("" if f["seasonal_pressure_cycle"] else ", annual mean only")}
    if sup.sha256:
        info["water_supply_sha256"] = sup.sha256
    return opts, info


def _energy_source(sc, clock, planet, progress):
    from .forcing import driver
    g = _sites(sc)
    ice = [s["ice_table_depth"] for s in sc.sites]
    cells = driver.make_cells(
        g("latitude"), g("longitude"), elevation_m=g("elevation"), albedo=g("albedo"),
        thermal_inertia=g("thermal_inertia"), emissivity=g("emissivity"), slope_deg=g("slope"),
        slope_azimuth_deg=g("slope_azimuth"), salt_depth_m=g("salt_depth"), density=g("density"),
        heat_capacity=g("heat_capacity"),
        layer2_depth_m=np.array([np.inf if d is None else d for d in ice]),
        layer2_inertia=g("ice_table_thermal_inertia"), porosity=g("porosity"))
    opts, finfo = energy_balance_options(sc)
    try:
        model = driver.prepare_forcing(cells, clock, opts)
    except WetcycleError as exc:
        raise type(exc)(f"{sc.source}: {exc}") from None
    c = sc["clock"]
    info = {"forcing": "energy_balance", "spinup_years": 0, "spinup_converged": False, **finfo}
    if c["spinup_max_years"] > 0:
        if progress:
            print(f"spin-up of the surface energy balance and water (up to {c['spinup_max_years']} years)...",
                  flush=True)
        su = driver.spin_up(model, clock, tol_k=c["spinup_tolerance_K"], max_years=c["spinup_max_years"],
                            coarse_steps_per_sol=c["spinup_steps_per_sol"] or None,
                            settle_sols=c["spinup_settle_sols"],
                            accelerate="profile" if c["spinup_shift"] == "profile" else True)
        state = su.state
        info.update(spinup_years=su.years, spinup_converged=bool(su.converged))
    else:
        state = driver.initial_state(model, clock)
    ltst = clock.local_times(g("longitude"))     # each block's own steps, computed as they stream

    spd = clock.steps_per_sol

    def blocks():
        # blocks of FORCING_BLOCK_SOLS sols: the Python set-up of the forcing driver and of the phase
        # model is paid once per block (neither kernel's numbers depend on where blocks are cut)
        for i0, _, out in driver.iter_forcing(model, state, clock, FORCING_BLOCK_SOLS * spd):
            i1 = i0 + out["surface_temperature"].shape[0]
            yield Block(i0, i1, {k: out[k] for k in FORCING_KEYS + WATER_CYCLE_KEYS},
                        clock.ls_deg[i0:i1], ltst[i0:i1], np.full(i1 - i0, clock.dt_s))
    years = clock.n_steps * clock.dt_s / (planet.year_sols * planet.sol_s)
    return ForcingSource(clock.n_steps, clock.time_s, clock.sol, clock.ls_deg, ltst, years,
                         clock.steps_per_sol, blocks(), info)


def _chamber_source(sc):
    from .forcing.prescribed import load_chamber_programme
    f = sc["forcing"]
    prog = load_chamber_programme(sc.resolve(f["programme"]))
    step = sc["clock"]["step_s"]
    t = np.arange(0.0, prog.duration_s + 0.5 * step, step)
    t = t[t <= prog.duration_s + 1e-9]
    fs = prog.evaluate(t)
    n_sites = len(sc.sites)
    col = lambda a: np.repeat(np.asarray(a, dtype=float)[:, None], n_sites, axis=1)
    T = col(fs.temperature_K)
    P = col(fs.surface_pressure_Pa) if fs.surface_pressure_Pa is not None else np.full_like(T, 600.0)
    if fs.relative_humidity is not None:
        rh = col(fs.relative_humidity)
        e = rh * saturation_vapor_pressure_liquid(np.clip(T, *LIQUID_T_RANGE))
    else:
        e = col(fs.vapor_pressure_Pa)
        rh = None
    rh_, rhi = _rh(e, T)
    rh = rh_ if rh is None else rh
    data = dict(surface_temperature=T, salt_temperature=T, vapor_pressure=e, relative_humidity=rh,
                relative_humidity_ice=rhi, surface_pressure=P, water_frost=np.zeros_like(T),
                co2_frost=np.zeros_like(T))
    n = t.size
    ls = np.zeros(n)  # a chamber has no season; all time falls in the first Ls bin
    ltst = col((t / 3600.0) % 24.0)  # hours since the start of the programme, modulo 24
    bs = max(int(round(86400.0 / step)), 1)

    def blocks():
        for i0 in range(0, n, bs):
            i1 = min(i0 + bs, n)
            yield Block(i0, i1, {k: v[i0:i1] for k, v in data.items()}, ls[i0:i1], ltst[i0:i1],
                        np.full(i1 - i0, step))
    years = n * step / (365.25 * 86400.0)
    return ForcingSource(n, t, (t // 86400.0).astype(int), ls, ltst, years, bs, blocks(),
                         {"forcing": "chamber", "programme": str(f["programme"])})


def _file_record(path):
    """sha256 of a forcing file, so a result names exactly the data it was run on."""
    import hashlib
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return {"forcing_file": str(path), "forcing_file_sha256": h.hexdigest()}


def forcing_source(sc, progress=False):
    """Build the scenario's forcing as a :class:`ForcingSource`.

    ``info`` carries, besides the forcing kind: ``start_utc`` (ISO-8601, millisecond precision)
    when the run has a calendar start (every forcing but a chamber programme), and the path and
    sha256 of a forcing file or chamber programme (the programme's text too).
    """
    kind = sc["forcing"]["kind"]
    if kind == "chamber":
        src = _chamber_source(sc)
        path = sc.resolve(sc["forcing"]["programme"])
        src.info.update(_file_record(path), forcing_programme_text=path.read_text())
        return src
    clock, planet = _clock(sc)
    src = _forcing_from_clock(sc, clock, planet, kind, progress)
    try:
        start = np.datetime_as_string(jd_tt_to_utc(clock.jd_tt[0])[0], unit="ms")
        src.info["start_utc"] = start.replace("T", " ")
    except ValidityError:
        pass  # before 1960 (no UTC): times stay seconds since the start
    if kind == "file":
        src.info.update(_file_record(sc.resolve(sc["forcing"]["path"])))
    return src


def run_period(sc):
    """(end of the run [s after its start], length of its first step [s], info with ``start_utc``).

    The period a scenario's statistics cover, without computing any forcing.
    """
    if sc["forcing"]["kind"] == "chamber":
        src = _chamber_source(sc)
        return float(src.time_s[-1]), float(sc["clock"]["step_s"]), {"forcing": "chamber"}
    clock, _ = _clock(sc)
    info = {"forcing": sc["forcing"]["kind"]}
    try:
        start = np.datetime_as_string(jd_tt_to_utc(clock.jd_tt[0])[0], unit="ms")
        info["start_utc"] = start.replace("T", " ")
    except ValidityError:
        pass
    return float(clock.time_s[-1]), float(clock.dt_s), info


def _forcing_from_clock(sc, clock, planet, kind, progress):
    if kind == "energy_balance":
        return _energy_source(sc, clock, planet, progress)
    f = sc["forcing"]
    lon = _sites(sc)("longitude")
    if kind == "prescribed":
        from .forcing.prescribed import Sinusoid, prescribed_forcing
        temp = Sinusoid(f["temperature_mean"], f["temperature_diurnal_amplitude"], f["temperature_peak_hour"],
                        f["temperature_seasonal_amplitude"], f["temperature_peak_ls"])
        vap = Sinusoid(f["vapor_pressure_mean"], f["vapor_pressure_diurnal_amplitude"],
                       f["vapor_pressure_peak_hour"], 0.0, 0.0)
        fs = prescribed_forcing(clock, lon, temp, vapor_pressure=vap, surface_pressure_pa=f["surface_pressure"])
        T = np.asarray(fs.temperature_K, dtype=float)
        return _series_source(sc, clock, planet, T, e=np.asarray(fs.vapor_pressure_Pa, dtype=float),
                              P=None if fs.surface_pressure_Pa is None else np.asarray(fs.surface_pressure_Pa),
                              salt_T=_salt_T_below(sc, clock, planet, T))
    # file
    from .forcing.files import read_csv_forcing
    path = sc.resolve(f["path"])
    if path.suffix.lower() in NETCDF_SUFFIXES:
        return _netcdf_source(sc, clock, planet, path)
    fs = read_csv_forcing(path, clock, gap_policy=f["gap_policy"], max_gap_s=f["max_gap_s"])
    n_sites = len(sc.sites)
    col = lambda a: None if a is None else np.repeat(np.asarray(a, dtype=float).reshape(-1, 1), n_sites, axis=1) \
        if np.ndim(a) == 1 else np.asarray(a, dtype=float)
    T = col(fs.temperature_K)
    return _series_source(sc, clock, planet, T, e=col(fs.vapor_pressure_Pa), rh=col(fs.relative_humidity),
                          P=col(fs.surface_pressure_Pa), salt_T=_salt_T_below(sc, clock, planet, T))


def _salt_T_below(sc, clock, planet, T):
    """Temperature at each site's ``salt_depth`` from the regolith column driven by the surface
    temperature series ``T`` [step, site] (None when every salt lies at the surface)."""
    g = _sites(sc)
    if not np.any(g("salt_depth") > 0):
        return None
    from .forcing.files import salt_temperature_from_surface
    return salt_temperature_from_surface(T, clock.dt_s, g("salt_depth"), g("thermal_inertia"),
                                         _site_or(sc, "density", 1500.0), _site_or(sc, "heat_capacity", 800.0), planet)


NETCDF_SUFFIXES = (".nc", ".nc4", ".cdf", ".netcdf")


def _netcdf_source(sc, clock, planet, path):
    """Forcing of every site or grid cell from a NetCDF file on (time[, lat, lon]).

    The salt's temperature comes from the file's ``salt_temperature`` when mapped, otherwise from
    the regolith column driven by the file's surface temperature (sites with ``salt_depth`` > 0).
    """
    from .forcing.files import read_netcdf_cells
    f = sc["forcing"]
    if not f["variables"]:
        raise ConfigError(f"{sc.source}: forcing.variables: required for a NetCDF forcing.path; allowed: a table "
                          "of our name = the file's variable, e.g. { time = \"time\", temperature = \"ts\", "
                          "vapor_pressure = \"e\" }")
    g = _sites(sc)
    q = read_netcdf_cells(path, clock, f["variables"], g("latitude"), g("longitude"), gap_policy=f["gap_policy"],
                          max_gap_s=f["max_gap_s"])
    T = q["temperature_K"]
    salt_T = q.get("salt_temperature_K")
    if salt_T is None:
        salt_T = _salt_T_below(sc, clock, planet, T)
    return _series_source(sc, clock, planet, T, e=q.get("vapor_pressure_Pa"), rh=q.get("relative_humidity"),
                          P=q.get("surface_pressure_Pa"), salt_T=salt_T, frost=q.get("water_frost_kg_m2"))


def _site_or(sc, key, default):
    return np.array([s.get(key, default) for s in sc.sites], dtype=float)


def run(scenario, *, write=True, progress=False, output_path=None, tables=None):
    """Run a scenario and return its result as an ``xarray.Dataset``.

    Parameters
    ----------
    scenario : Scenario, str or Path
        A validated :class:`~wetcycle.config.Scenario` or the path of a TOML file.
    write : bool
        Write the NetCDF result (atomically: a temporary name, then renamed).
    progress : bool
        Show a progress bar (tqdm) over sols.
    output_path : path, optional
        Overrides the scenario's ``scenario.output``.
    tables : dict, optional
        Salt name -> PhaseTables to use instead of looking the salts up.
    """
    sc = scenario if isinstance(scenario, Scenario) else load_scenario(scenario)
    if write:  # refuse an unwritable result path before computing anything
        output.check_output_path(output_path or sc.output_path, "output_path" if output_path else "output")
    if progress:
        from .progress import stage
        stage("preparing the forcing and the salt tables (a first run also compiles numba kernels, "
              "~1 minute, cached after)")
    src = forcing_source(sc, progress=progress)
    models = phase_models(sc, tables)
    stats, series, phase_series = simulate(sc, src, models, keep_series=sc["output"]["series"], progress=progress)
    ds = output.build_dataset(sc, src, stats, series, phase_series)
    from .inputs import input_hashes
    ds.attrs["input_sha256"] = json.dumps(input_hashes(sc, {m.tables.name: m.tables for m in models}), sort_keys=True)
    if write:
        output.write_result(ds, output_path or sc.output_path)
    return ds


def statistics_frame(sc, src=None):
    """How a run's statistics are framed (design decision 7): ``(per_year, bin_duration_s, season_deg)``.

    * Mars: per-year figures per Mars year; season bins of solar longitude Ls, each bin's length
      in the Mars year of the run's start (Allison & McEwen 2000 through
      :func:`wetcycle.orbit.jd_tt_at_ls`); ``season_deg`` is Ls.
    * Earth: per-year figures per Earth year; the season bins are the 12 calendar months (UTC),
      each month's length in days; ``season_deg`` places each step in its month.
    * A chamber programme: totals only (no year, no season): ``(False, None, zeros)``.

    ``src`` (a :class:`ForcingSource`) gives the steps' ``season_deg``; without it only the first
    two are meaningful (``season_deg`` is None).
    """
    if sc["forcing"]["kind"] == "chamber":
        n = src.n_steps if src is not None else _chamber_source(sc).n_steps
        return False, None, np.zeros(n)
    planet = sc["scenario"]["planet"]
    n = sc["output"]["ls_bins"]
    clock, _ = _clock(sc)
    time_s = np.asarray(src.time_s if src is not None else clock.time_s, dtype=float)
    if planet == "earth":
        utc = jd_tt_to_utc(clock.jd_tt[:1])[0]
        year = int(str(utc)[:4])
        months = np.arange(f"{year}-01", f"{year + 1}-01", dtype="datetime64[M]")
        durations = ((months + 1).astype("datetime64[D]") - months.astype("datetime64[D]")).astype(float) * 86400.0
        dates = np.datetime64(utc, "ns") + (time_s * 1e9).astype("timedelta64[ns]")
        month = dates.astype("datetime64[M]").astype(int) % 12          # 0 = January
        return True, durations, (month + 0.5) * 30.0
    from .orbit import jd_tt_at_ls
    my = int(clock.year[0])
    edges = np.arange(n + 1) * 360.0 / n
    jd = [jd_tt_at_ls(e % 360.0, mars_year=my + (1 if e >= 360.0 else 0)) for e in edges]
    durations = np.diff(np.asarray(jd, dtype=float)) * 86400.0
    return True, durations, np.asarray(src.ls_deg if src is not None else clock.ls_deg, dtype=float)


def bin_coverage(sc, src=None):
    """Times each season bin was simulated [bin] (None for a chamber programme)."""
    per_year, durations, season = statistics_frame(sc, src)
    if durations is None:
        return None
    nb = durations.size
    t = np.asarray(src.time_s if src is not None else _clock(sc)[0].time_s, dtype=float)
    dt = np.full(t.size, float(t[1] - t[0]) if t.size > 1 else 0.0)
    b = np.minimum((season % 360.0 / (360.0 / nb)).astype(np.int64), nb - 1)
    return np.bincount(b, weights=dt, minlength=nb) / durations


def phase_models(sc, tables=None):
    """One :class:`PhaseModel` per ``[[salt]]`` of the scenario; ``tables`` (salt name -> PhaseTables)
    are used as given when passed (a worker process never looks a salt up by name)."""
    out = []
    for s in sc.salts:
        tb = None if tables is None else tables[s["name"]]
        if s.get("mixture"):  # a salt mixture (issue 13): equilibrium tables built once per mixture
            from .phase.mixture_model import MixtureModel
            out.append(MixtureModel.from_entry(s, sc["phase"], tables=tb))
        else:
            out.append(PhaseModel.from_settings(s["name"], sc["phase"], tables=tb))
    return out


def statistics(sc, tables=None, timings=None):
    """Statistics of a scenario's cells without series or dataset: (list per salt of dicts, source).

    ``timings``, a dict, receives the seconds spent on the forcing (set-up, spin-up and blocks)
    and on the phase model (kernel and accumulators) under "forcing" and "phase".
    """
    t0 = time.perf_counter()
    src = forcing_source(sc)
    if timings is not None:
        timings["forcing"] = timings.get("forcing", 0.0) + time.perf_counter() - t0
    stats, _, _ = simulate(sc, src, phase_models(sc, tables), keep_series=False, timings=timings)
    return stats, src


def _sum_steps(total, a):
    """``total`` [cell] plus the sum of a [step, cell] block over its steps, each cell's steps added
    in order after its total (so the result does not depend on where a run's blocks are cut).

    ``a.sum(axis=0)`` is not: NumPy sums pairwise along a contiguous axis, so a block of one cell
    and a block of many would round differently, and a cell's result would depend on its tile.
    """
    if not a.shape[0]:
        return total
    return np.cumsum(np.concatenate([np.asarray(total, dtype=float)[None], a]), axis=0)[-1]


def simulate(sc, src, models, *, keep_series, progress=False, timings=None):
    """Stream the forcing blocks of ``src`` through the phase models and the accumulators.

    Returns (statistics per salt, forcing series or None, phase series per salt or None).
    ``timings``: see :func:`statistics`.
    """
    ph = sc["phase"]
    hab = sc["habitability"]
    n_sites = len(sc.sites)
    frame = statistics_frame(sc, src)
    season = frame[2]
    accs = [Accumulator.new(n_sites, sc["output"]["ls_bins"], hab["min_water_activity"], hab["min_temperature"])
            for _ in models]
    keep = keep_series
    water_cycle = sc["forcing"]["kind"] == "energy_balance"
    series_keys = FORCING_KEYS + (WATER_CYCLE_KEYS if water_cycle else ())
    series = {k: [] for k in series_keys} if keep else None
    # salts are alternatives drawing on the same vapour and frost (DESIGN decision 4): compare
    # what each takes up with what the surface layer delivered, step by step
    uptake = np.zeros((len(models), n_sites))
    exceed = np.zeros((len(models), n_sites))
    delivered = np.zeros(n_sites)
    last_frost = np.zeros(n_sites)
    phase_series = [{k: [] for k in PHASE_KEYS} for _ in models] if keep else None
    states = [None] * len(models)
    initial_water = [None] * len(models)
    bar = None
    if progress:
        from .progress import bar as progress_bar
        bar = progress_bar(src.n_steps, "step", sc.name)
    clock = time.perf_counter
    t_forcing = t_phase = 0.0
    t_mark = clock()
    for blk in src.blocks:
        t_start_phase = clock()
        t_forcing += t_start_phase - t_mark
        d = blk.data
        frost = d["water_frost"] if ph["frost_contact"] else np.zeros_like(d["water_frost"])
        if water_cycle:
            supply = np.maximum(d["surface_water_flux"], 0.0)
            delivered = _sum_steps(delivered, supply)
            available = supply + np.concatenate([last_frost[None, :], frost[:-1]])
            last_frost = frost[-1].copy()
        for j, (m, acc) in enumerate(zip(models, accs)):
            if states[j] is None:
                states[j] = m.initial_state(n_sites, np.array([sc.salts[j]["loading"]] * n_sites),
                                            d["salt_temperature"][0], d["relative_humidity"][0])
                if keep:
                    initial_water[j] = states[j].total_water.copy()
            mix = keep and getattr(m, "is_mixture", False)  # a mixture's brine ions are saved with series
            r = phase_block(m, states[j], acc, d["salt_temperature"], d["relative_humidity"],
                            d["surface_pressure"], frost, blk.dt_s, season[blk.i0:blk.i1], blk.ltst_h,
                            ion_molality=mix)
            if water_cycle:
                gain = np.maximum(r.exchanged, 0.0)
                uptake[j] = _sum_steps(uptake[j], gain)
                exceed[j] += np.sum(gain > available * (1.0 + 1e-9) + 1e-15, axis=0)
            if keep:
                # site files store float32, except the water exchanged (float64: the water balance
                # closes to rounding)
                for k, v in phase_outputs(r).items():
                    phase_series[j][k].append(v if k == "water_exchanged" or v.dtype != np.float64
                                              else v.astype(np.float32))
                if mix:
                    phase_series[j].setdefault("_ion_molality", []).append(r.ion_molality.astype(np.float32))
                    phase_series[j]["_ions"] = m.ions
        if keep:
            for k in series_keys:
                series[k].append(np.asarray(d[k], dtype=np.float32))
        if bar is not None:
            bar.update(blk.i1 - blk.i0)
        t_mark = clock()
        t_phase += t_mark - t_start_phase
    if bar is not None:
        bar.close()
    if timings is not None:
        timings["forcing"] = timings.get("forcing", 0.0) + t_forcing
        timings["phase"] = timings.get("phase", 0.0) + t_phase
    per_year, durations, _ = frame
    if keep:
        for ps, w0 in zip(phase_series, initial_water):
            ps["_initial_water"] = w0
    stats = [acc.finish(src.years, per_year=per_year, bin_duration_s=durations) for acc in accs]
    if water_cycle:
        for j, st in enumerate(stats):
            st["salt_water_uptake"] = uptake[j]
            st["surface_water_delivered"] = delivered.copy()
            st["uptake_exceeds_supply_steps"] = exceed[j]
    return stats, series, phase_series
