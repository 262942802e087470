"""Surface energy balance with regolith conduction and seasonal CO2 frost.

Method
------
The surface node (node 0 of :mod:`wetcycle.forcing.regolith`, heat capacity
``H_0`` of half the first element) obeys, with the theta method,

    H_0 (T' - T) / dt = S + eps L_down - eps sigma [theta T'^4 + (1-theta) T^4]
                        - G_0 [theta (T' - T_1') + (1-theta) (T - T_1)] + L_CO2 dm / dt

where ``S`` is the absorbed solar flux (:mod:`wetcycle.forcing.insolation`),
``L_down`` the atmospheric infrared, ``dm`` the CO2 frost condensed in the
step [kg m-2].  Eliminating the column bottom-up gives ``T_1' = e_1 + f_1 T'``,
so the balance is one scalar equation ``P T' + Q T'^4 = K + q`` per cell,
solved by Newton iteration (convex and increasing: converges from any start
above 0 K).  CO2 frost logic (one pass, exact energy bookkeeping):

1. evaluate the residual at the frost point ``T_f(p)``,
   ``r_f = P T_f + Q T_f^4 - K``;
2. if ``r_f > -L m / dt`` (the balance cannot be met above ``T_f`` even if all
   existing frost ``m`` sublimes), the surface is held at ``T_f`` and
   ``dm = r_f dt / L`` (condensation if positive; never more sublimation
   than ``m``);
3. otherwise all frost sublimes (``dm = -m``) and Newton gives ``T' >= T_f``.

While frost covers the surface (``m > 0`` at the start of a step) the frost
albedo and emissivity apply.

CO2 frost point: ``T_f = 3167.8 / (23.23 - ln(0.01 p))`` [K, p in Pa], a
Clausius-Clapeyron fit quoted by James, P. B., Kieffer, H. H. and Paige,
D. A. (1992), "The seasonal cycle of carbon dioxide on Mars", in Mars (Kieffer
et al., eds.), Univ. Arizona Press, 934-968 (from memory).  It gives 148 K at
610 Pa and 194.2 K at 101325 Pa (handbook sublimation point 194.7 K).
Latent heat of sublimation of CO2, ``L_CO2 = 5.9e5 J kg-1`` (from memory;
cf. 25.2 kJ mol-1 = 5.73e5 J kg-1 at 194.7 K, CRC Handbook of Chemistry and
Physics).  Stefan-Boltzmann constant: CODATA 2018.

Validity: surface pressure 10-1.2e5 Pa for the frost point (Mars surface
range); temperatures 50-400 K.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from numba import njit

from ..errors import ValidityError
from .insolation import top_of_atmosphere_flux
from .regolith import (CELL_BLOCK, Columns, Factors, factorize, from_blocks, probe_weights,
                       sweep_down, sweep_up, to_blocks)

#: Stefan-Boltzmann constant [W m-2 K-4] (CODATA 2018, exact).
STEFAN_BOLTZMANN = 5.670374419e-8
#: Latent heat of sublimation of CO2 [J kg-1] (from memory; see module docstring).
LATENT_HEAT_CO2 = 5.9e5
#: Pressure range of the CO2 frost-point fit [Pa] (Mars surface to above 1 atm; 0.5 K from
#: the handbook sublimation point at 1 atm).
CO2_PRESSURE_RANGE = (10.0, 1.2e5)
#: Newton iteration on the surface equation: each cell stops when its own update is below
#: NEWTON_TOL [K] (so results do not depend on which cells share a block); at most NEWTON_MAXIT.
NEWTON_TOL = 1e-7
NEWTON_MAXIT = 30


#: Largest magnitude of the Crank-Nicolson amplification factor of the surface node allowed for a
#: time step (see :func:`largest_time_step`): oscillations must decay by at least 10 % a step.
MAX_AMPLIFICATION = 0.9
#: Surface temperature at which the radiative stiffness of the surface node is judged [K]
#: (warm Mars ground; the node is stiffer the warmer it is).
STIFFNESS_TEMPERATURE = 280.0


def surface_time_constant(columns, emissivity, temperature=STIFFNESS_TEMPERATURE):
    """Relaxation time of the surface node, ``H_0 / (G_0 + 4 eps sigma T**3)`` [s], per cell.

    ``H_0`` is the node's areal heat capacity and ``G_0`` the conductance to the node below
    (:class:`wetcycle.forcing.regolith.Columns`); the radiative term linearises the thermal
    emission at ``temperature`` [K].  This is the fastest mode of the discretised surface
    balance (a property of the grid, common practice in the analysis of implicit schemes).
    """
    eps = np.broadcast_to(np.asarray(emissivity, dtype=float), (columns.n_cells,))
    return columns.node_capacity[0] / (columns.conductance[0] + 4.0 * eps * STEFAN_BOLTZMANN * temperature**3)


def largest_time_step(columns, emissivity, theta=0.5, max_amplification=MAX_AMPLIFICATION):
    """Largest step [s] per cell at which the theta scheme damps the surface node's fastest mode.

    The theta method multiplies a mode of relaxation time ``tau`` by
    ``A = (1 - (1 - theta) x) / (1 + theta x)``, ``x = dt / tau`` each step (e.g. Press et al.
    2007, Numerical Recipes, sec. 20.2).  For Crank-Nicolson (theta = 0.5) ``A -> -1`` as
    ``dt / tau`` grows: the surface temperature zig-zags from step to step instead of relaxing.
    Requiring ``|A| <= max_amplification`` gives ``x <= (1 + A_max) / (theta - (1 - theta) A_max)``
    for ``A < 0`` (always met for backward Euler, theta = 1).

    Returns
    -------
    ndarray [s] per cell (inf when any step is allowed)
    """
    tau = surface_time_constant(columns, emissivity)
    if theta >= 1.0:             # backward Euler: A = 1 / (1 + x) in (0, 1], never negative
        return np.full(tau.shape, np.inf)
    den = theta - (1.0 - theta) * max_amplification
    if den <= 0.0:
        return tau * 0.0
    return tau * (1.0 + max_amplification) / den


def co2_frost_point(pressure):
    """CO2 frost (condensation) temperature at a partial pressure of CO2.

    Parameters
    ----------
    pressure : array_like [Pa]
        10-120000 Pa.

    Returns
    -------
    ndarray [K]
        ``3167.8 / (23.23 - ln(0.01 p))`` (James, Kieffer & Paige 1992; from memory).

    Examples
    --------
    >>> round(float(co2_frost_point(610.0)), 1)
    147.9
    """
    p = np.asarray(pressure, dtype=float)
    lo, hi = CO2_PRESSURE_RANGE
    ok = np.isfinite(p) & (p >= lo) & (p <= hi)
    if not np.all(ok):
        raise ValidityError(f"surface_pressure: received {p[~ok].ravel()[0]} Pa; allowed {lo} to {hi} Pa")
    return 3167.8 / (23.23 - np.log(0.01 * p))


@njit(cache=True, fastmath=True, error_model="numpy", inline="always")
def daily_mean_insolation(sin_lat, cos_lat, sin_dec, cos_dec, flux):
    """Daily-mean solar flux on a horizontal surface at the top of the atmosphere [W m-2].

    ``Q = (F / pi) (h0 sin(lat) sin(dec) + cos(lat) cos(dec) sin(h0))`` with the sunset
    hour angle ``cos(h0) = -tan(lat) tan(dec)`` (clamped to [-1, 1]: polar day and night);
    the textbook result for a body rotating in a fixed sun direction (e.g. Liou 2002, An
    Introduction to Atmospheric Radiation, eq. 2.2.21; common practice).  ``flux`` [W m-2] is
    the solar flux at the planet's distance; all angles as sines and cosines.  Valid for any
    latitude and declination; the declination is held for the sol.
    """
    den = max(cos_lat * cos_dec, 1e-12)
    x = min(max(-(sin_lat * sin_dec) / den, -1.0), 1.0)
    h0 = math.acos(x)
    return flux * (1.0 / math.pi) * (h0 * sin_lat * sin_dec + cos_lat * cos_dec * math.sqrt(1.0 - x * x))


@njit(cache=True, fastmath=True, error_model="numpy", inline="always")
def frost_albedo_law(albedo_dark, slope, albedo_max, insolation):
    """Albedo of CO2 frost that brightens with the sunlight it receives [-].

    ``A = min(A_0 + B Q, A_max)``: linear in the daily-mean insolation ``Q`` [W m-2], the form
    found in the orbital records of the seasonal caps (frost brightens as insolation grows:
    Paige 1985, LPI Terrestrial Planets, read as an abstract, explained by dust sinking into the
    frost at a rate set by the solar flux; Kieffer, Titus et al. 2000, J. Geophys. Res. 105, 9653
    and Kieffer & Titus 2001, Icarus 154, 162, from memory).  ``A_0`` [-] the albedo without
    sunlight, ``B`` [W-1 m2] the slope, ``A_max`` [-] the cap; the coefficients are this
    project's (see :class:`wetcycle.forcing.driver.ForcingOptions`).  ``B = 0`` gives a
    constant albedo ``min(A_0, A_max)``.
    """
    return min(albedo_dark + slope * insolation, albedo_max)


@njit(cache=True, fastmath=True, error_model="numpy", inline="always")
def exp_neg(x):
    """``exp(x)`` for ``x <= 0`` by scaling and squaring, vectorisable.

    ``exp(x) = (exp(x / 1024))**1024`` with a degree-6 Taylor polynomial for the
    small argument (|x / 1024| <= 0.05 after clamping x to [-50, 0]), then ten
    squarings: relative error < 1e-9 on [-50, 0] (checked in the tests against
    ``math.exp``); ``exp(-50) = 2e-22`` stands in for anything smaller.  Used for
    the slant-path transmission ``exp(-tau / mu0)``; a plain polynomial keeps the
    loop over cells a SIMD loop where a libm call would not.
    """
    y = max(x, -50.0) * (1.0 / 1024.0)
    p = 1.0 + y * (1.0 + y * (0.5 + y * (1.0 / 6.0 + y * (1.0 / 24.0 + y * (1.0 / 120.0
                                                                          + y * (1.0 / 720.0))))))
    for _ in range(10):
        p = p * p
    return p


@njit(cache=True, fastmath=True, boundscheck=False, error_model="numpy", nogil=True)
def energy_block_kernel(temp, co2, fa, fd, ff, fg, theta, dt, cellp, diffuse_fraction,
                        sin_dec, cos_dec, toa_flux, sin_h0, cos_h0, tau, frost_point,
                        probe_idx, probe_w, ts_out, probe_out, co2_out, diag_out):
    """Advance surface energy balance + conduction over a block of steps.

    Blocked layout (:func:`wetcycle.forcing.regolith.to_blocks`): ``b`` block,
    ``c`` cell within the block.  Per step and block: upward elimination, a
    few SIMD loops over cells for geometry, the absorbed flux, the frost test
    and the Newton iteration (per cell, until its update is below ``NEWTON_TOL``;
    sweeps end when every cell has converged), back substitution, then the outputs.  The
    slant-path exponential is :func:`exp_neg` (a polynomial, so that loop
    stays SIMD too).

    Parameters
    ----------
    temp : [b, node, c] [K]              profile, updated in place
    co2 : [b, c] [kg m-2]                CO2 frost, updated in place
    fa, fd, ff, fg : [b, node, c]        elimination factors (regolith.Factors)
    theta, dt : float [-], [s]
    cellp : [b, 13, c]                   per-cell constants, rows: sin/cos latitude,
        sin/cos east longitude, surface normal (east, north, up), cos slope,
        f_IR times the sky-view factor, albedo, emissivity, frost albedo, frost emissivity
    diffuse_fraction : float [-]
    sin_dec, cos_dec, toa_flux, sin_h0, cos_h0 : [step]
        Declination terms [-], S0/r^2 [W m-2], hour angle at longitude 0 (mid-step).
    tau, frost_point : [step, b * c]     dust optical depth [-]; CO2 frost point [K]
        (a negative value disables CO2 frost); cells padded to whole blocks
    probe_idx, probe_w : [b, c]          node index and weight of the salt depth
    ts_out, probe_out, co2_out : [step, cell]  outputs [K], [K], [kg m-2]
    diag_out : [6, step, cell] or [0, 0, 0]  optional fluxes [W m-2]: absorbed
        (solar + infrared), emitted, conducted into the ground, latent released,
        stored in the surface node, incident solar.
    """
    nb, nn, cb = temp.shape
    ns = sin_dec.size
    sigma = STEFAN_BOLTZMANN
    lat_heat = LATENT_HEAT_CO2
    om = 1.0 - theta
    r = om / theta
    want_diag = diag_out.shape[0] > 0
    e = np.empty((nn, cb))
    wk = np.empty((10, cb))   # scratch rows
    sw, s_in, qq, rhs, r_f, hold, tn, t1o, tprobe, act = (wk[0], wk[1], wk[2], wk[3], wk[4], wk[5],
                                                          wk[6], wk[7], wk[8], wk[9])
    nc = ts_out.shape[1]
    dg = np.empty((6, cb))
    for b in range(nb):
        o = b * cb
        cmax = min(cb, nc - o)
        for s in range(ns):
            sd, cd, fl, sh0, ch0 = sin_dec[s], cos_dec[s], toa_flux[s], sin_h0[s], cos_h0[s]
            sweep_up(temp, e, fa, fd, ff, fg, r, b)
            for c in range(cb):        # geometry, absorbed flux, surface equation, frost test
                slat, clat = cellp[b, 0, c], cellp[b, 1, c]
                slon, clon = cellp[b, 2, c], cellp[b, 3, c]
                ch = ch0 * clon - sh0 * slon
                sh = sh0 * clon + ch0 * slon
                u = slat * sd + clat * cd * ch
                cosi = (-cd * sh * cellp[b, 4, c] + (clat * sd - slat * cd * ch) * cellp[b, 5, c]
                        + u * cellp[b, 6, c])
                mun = max(clat * cd + slat * sd, 0.0)
                tr = exp_neg(-tau[s, o + c] / max(u, 1e-6))
                uu = max(u, 0.0)
                beam = fl * tr
                diff_h = diffuse_fraction * fl * uu * (1.0 - tr)
                fr = co2[b, c] > 0.0
                alb = cellp[b, 11, c] if fr else cellp[b, 9, c]
                eps = cellp[b, 12, c] if fr else cellp[b, 10, c]
                cs = cellp[b, 7, c]
                sww = (beam * max(cosi, 0.0)
                       + 0.5 * (diff_h * (1.0 + cs) + alb * (beam * uu + diff_h) * (1.0 - cs)))
                sww = sww if u > 0.0 else 0.0
                sw[c] = sww
                s_abs = (1.0 - alb) * sww + eps * fl * mun * cellp[b, 8, c]
                s_in[c] = s_abs
                q = theta * eps * sigma
                qq[c] = q
                t0 = temp[b, 0, c]
                t1 = temp[b, 1, c]
                g0 = fd[b, 0, c]
                kk = (fa[b, 0, c] * t0 + s_abs - r * q * t0 * t0 * t0 * t0
                      - om * g0 * (t0 - t1) + theta * g0 * e[1, c])
                tf = frost_point[s, o + c]
                ql = -lat_heat * co2[b, c] / dt             # all existing frost sublimes
                rf = ff[b, 0, c] * tf + q * tf * tf * tf * tf - kk  # residual held at T_f
                hold[c] = 1.0 if (rf > ql) & (tf > 0.0) else 0.0
                r_f[c] = rf
                rhs[c] = kk + ql
                tn[c] = max(t0, tf)
                t1o[c] = t1
            # Newton on P T + Q T^4 = rhs (convex, increasing)
            # per-cell convergence (a cell's iterations never depend on its block-mates, so a
            # result is the same whatever the chunking); branch-free to stay SIMD
            for c in range(cb):
                act[c] = 1.0
            for it in range(NEWTON_MAXIT):
                nact = 0.0
                for c in range(cb):
                    t = tn[c]
                    pp = ff[b, 0, c]
                    t3 = t * t * t
                    d = (pp * t + qq[c] * t3 * t - rhs[c]) / (pp + 4.0 * qq[c] * t3)
                    a = act[c]
                    tn[c] = t - a * d
                    a = a * (1.0 if d * d >= NEWTON_TOL * NEWTON_TOL else 0.0)
                    act[c] = a
                    nact += a
                if nact == 0.0:
                    break
            for c in range(cb):
                hd = hold[c] > 0.0
                t0 = temp[b, 0, c]
                tnew = frost_point[s, o + c] if hd else tn[c]
                m_old = co2[b, c]
                m_new = m_old + r_f[c] * dt / lat_heat if hd else 0.0
                temp[b, 0, c] = tnew
                co2[b, c] = m_new
                if want_diag:
                    dg[0, c] = s_in[c]
                    dg[1, c] = qq[c] / theta * (theta * tnew ** 4 + om * t0 ** 4)
                    dg[3, c] = lat_heat * (m_new - m_old) / dt
                    dg[4, c] = fa[b, 0, c] * (tnew - t0)
                    dg[5, c] = sw[c]
                    dg[2, c] = t0                      # old surface value, used below
            sweep_down(temp, e, ff, b)
            for c in range(cb):                      # salt-depth temperature (gather)
                i = probe_idx[b, c]
                w = probe_w[b, c]
                tprobe[c] = (1.0 - w) * temp[b, i, c] + w * temp[b, i + 1, c]
            for c in range(cmax):                    # outputs, [step, cell] layout
                probe_out[s, o + c] = tprobe[c]
                ts_out[s, o + c] = temp[b, 0, c]
                co2_out[s, o + c] = co2[b, c]
            if want_diag:
                for c in range(cmax):
                    dg[2, c] = fd[b, 0, c] * (theta * (temp[b, 0, c] - temp[b, 1, c])
                                              + om * (dg[2, c] - t1o[c]))
                    for k in range(6):
                        diag_out[k, s, o + c] = dg[k, c]


# --------------------------------------------------------------------------------------
# Parameter object, state, and the block call
# --------------------------------------------------------------------------------------
@dataclass(frozen=True)
class EnergyState:
    """State carried between blocks: profile ``temperature [node, cell]`` [K] and
    ``co2_frost [cell]`` [kg m-2]."""

    temperature: np.ndarray
    co2_frost: np.ndarray

    def copy(self):
        return EnergyState(self.temperature.copy(), self.co2_frost.copy())


@dataclass(frozen=True)
class EnergyModel:
    """Validated per-cell surface properties, regolith columns and factors (build with
    :func:`prepare_energy`)."""

    columns: Columns
    factors: Factors
    latitude_rad: np.ndarray
    longitude_rad: np.ndarray
    albedo: np.ndarray
    emissivity: np.ndarray
    slope_rad: np.ndarray
    slope_azimuth_rad: np.ndarray
    frost_albedo: np.ndarray
    frost_emissivity: np.ndarray
    probe_index: np.ndarray
    probe_weight: np.ndarray
    diffuse_fraction: float
    ir_fraction: float
    co2_on: bool
    geothermal_flux: np.ndarray
    frost_albedo_slope: float = 0.0
    frost_albedo_max: float = 1.0
    _blocked: dict = field(default_factory=dict, init=False, repr=False, compare=False)

    @property
    def n_cells(self):
        return self.latitude_rad.size

    def initial_state(self, temperature):
        """Isothermal state at ``temperature`` [K] (scalar or [cell]), no frost."""
        t = np.broadcast_to(np.asarray(temperature, dtype=float), (self.n_cells,))
        prof = np.ascontiguousarray(np.broadcast_to(t, (self.columns.n_nodes, self.n_cells)))
        return EnergyState(prof.copy(), np.zeros(self.n_cells))


def _cellarray(name, value, n, lo, hi):
    v = np.ascontiguousarray(np.broadcast_to(np.asarray(value, dtype=float), (n,)), dtype=float)
    ok = np.isfinite(v) & (v >= lo) & (v <= hi)
    if not np.all(ok):
        raise ValidityError(f"{name}: received {v[~ok][0]}; allowed {lo} to {hi}")
    return v.copy()


def prepare_energy(columns, dt, *, latitude_deg, longitude_deg, albedo, emissivity,
                   slope_deg=0.0, slope_azimuth_deg=0.0, probe_depth=0.0, theta=0.5,
                   geothermal_flux=0.0, frost_albedo=0.6, frost_emissivity=0.9,
                   diffuse_fraction=0.5, ir_fraction=0.04, co2_frost=True, frost_albedo_slope=0.0,
                   frost_albedo_max=1.0):
    """Validate surface properties and precompute the conduction factors.

    Parameters
    ----------
    columns : Columns
        From :func:`wetcycle.forcing.regolith.build_columns`.
    dt : float [s]
        Time step (the clock's ``dt_s``).
    latitude_deg : array [cell] [deg], -90-90.
    longitude_deg : array [cell] [deg], east, -360-360.
    albedo, emissivity : array [cell] [-], 0-1 (emissivity 0.5-1).
    slope_deg : array [cell] [deg], 0-90.
    slope_azimuth_deg : array [cell] [deg]
        Direction the slope faces, clockwise from north, 0-360.
    probe_depth : array [cell] [m]
        Depth of the salt (0 for a surface crust).
    theta : float [-], 0.5 (Crank-Nicolson, default) to 1 (backward Euler).
    geothermal_flux : array [cell] [W m-2], 0-1.
    frost_albedo, frost_emissivity : array [cell] [-]
        Radiative properties while CO2 frost covers the surface (defaults of this
        low-level function 0.6 and 0.9; the Mars driver passes its own, see
        :class:`wetcycle.forcing.driver.ForcingOptions`); ``frost_albedo`` is the albedo
        without sunlight, ``A_0`` of :func:`frost_albedo_law`.
    frost_albedo_slope : float [W-1 m2], 0-0.01
        ``B`` of :func:`frost_albedo_law` (0: a constant frost albedo).  Only the coupled
        column (:mod:`wetcycle.forcing.column`) applies it; :func:`energy_block` refuses a
        non-zero slope.
    frost_albedo_max : float [-], 0-1, at least every cell's ``frost_albedo``
        ``A_max`` of :func:`frost_albedo_law`.
    diffuse_fraction, ir_fraction : float [-]
        See :mod:`wetcycle.forcing.insolation`.
    co2_frost : bool
        Allow CO2 frost (False for Earth).

    Returns
    -------
    EnergyModel
    """
    n = columns.n_cells
    model_probe = probe_weights(columns, probe_depth)
    return EnergyModel(
        columns=columns,
        factors=factorize(columns, dt, theta, _cellarray("geothermal_flux", geothermal_flux, n, 0, 1)),
        latitude_rad=np.deg2rad(_cellarray("latitude_deg", latitude_deg, n, -90, 90)),
        longitude_rad=np.deg2rad(_cellarray("longitude_deg", longitude_deg, n, -360, 360)),
        albedo=_cellarray("albedo", albedo, n, 0, 1),
        emissivity=_cellarray("emissivity", emissivity, n, 0.5, 1),
        slope_rad=np.deg2rad(_cellarray("slope_deg", slope_deg, n, 0, 90)),
        slope_azimuth_rad=np.deg2rad(_cellarray("slope_azimuth_deg", slope_azimuth_deg, n, 0, 360)),
        frost_albedo=_cellarray("frost_albedo", frost_albedo, n, 0, 1),
        frost_emissivity=_cellarray("frost_emissivity", frost_emissivity, n, 0.5, 1),
        probe_index=model_probe[0], probe_weight=model_probe[1],
        diffuse_fraction=float(_cellarray("diffuse_fraction", diffuse_fraction, 1, 0, 1)[0]),
        ir_fraction=float(_cellarray("ir_fraction", ir_fraction, 1, 0, 1)[0]),
        co2_on=bool(co2_frost),
        geothermal_flux=_cellarray("geothermal_flux", geothermal_flux, n, 0, 1),
        frost_albedo_slope=float(_cellarray("frost_albedo_slope", frost_albedo_slope, 1, 0, 0.01)[0]),
        frost_albedo_max=_frost_albedo_max(frost_albedo_max, frost_albedo),
    )


def _frost_albedo_max(albedo_max, albedo_dark):
    amax = float(_cellarray("frost_albedo_max", albedo_max, 1, 0, 1)[0])
    low = float(np.max(albedo_dark))
    if amax < low:
        raise ValidityError(f"frost_albedo_max: received {amax}; allowed {low} (the largest frost_albedo) to 1")
    return amax


def _step_inputs(model, declination_rad, distance_au, hour_angle0_rad, tau, pressure):
    dec = np.ascontiguousarray(declination_rad, dtype=float)
    ns = dec.size
    shape = (ns, model.n_cells)
    tau2 = np.ascontiguousarray(np.broadcast_to(np.asarray(tau, dtype=float), shape))
    p2 = np.ascontiguousarray(np.broadcast_to(np.asarray(pressure, dtype=float), shape))
    if not np.all((tau2 >= 0.0) & (tau2 <= 10.0)):
        raise ValidityError(f"tau: received {tau2[~((tau2 >= 0) & (tau2 <= 10))][0]}; allowed 0 to 10")
    if model.co2_on:
        co2_frost_point(p2)  # validates the pressure range
    flux = np.ascontiguousarray(top_of_atmosphere_flux(distance_au) * np.ones(ns))
    h0 = np.asarray(hour_angle0_rad, dtype=float) * np.ones(ns)
    return dec, flux, h0, tau2, p2


def _padded(x, ns, nc, ncp):
    """Broadcast ``x`` to ``[step, cell]`` and pad the cells to ``ncp`` (one copy)."""
    out = np.empty((ns, ncp))
    out[:, :nc] = np.broadcast_to(np.asarray(x, dtype=float), (ns, nc))
    out[:, nc:] = out[:, nc - 1:nc]
    return out


def _kernel_step_inputs(model, tau, pressure, ns):
    """tau and the CO2 frost point ``[step, padded cell]``, validated."""
    nc = model.n_cells
    ncp = -(-nc // CELL_BLOCK) * CELL_BLOCK
    taup = _padded(tau, ns, nc, ncp)
    if not (taup.size == 0 or (taup.min() >= 0.0 and taup.max() <= 10.0)):
        bad = taup[~((taup >= 0.0) & (taup <= 10.0))].ravel()[0]
        raise ValidityError(f"tau: received {bad}; allowed 0 to 10")
    if not model.co2_on:
        return taup, np.full(taup.shape, -1.0)
    tf = _padded(pressure, ns, nc, ncp)
    lo, hi = CO2_PRESSURE_RANGE
    if not (tf.min() >= lo and tf.max() <= hi):
        co2_frost_point(tf)                       # raises with the offending value
    np.multiply(tf, 0.01, out=tf)                 # frost point in place, see co2_frost_point
    np.log(tf, out=tf)
    np.subtract(23.23, tf, out=tf)
    np.divide(3167.8, tf, out=tf)
    return taup, tf


def _blocked_constants(model):
    """Per-cell kernel constants and factors in blocked layout (cached on the model)."""
    cached = model._blocked
    if cached:
        return cached
    lat, lon = model.latitude_rad, model.longitude_rad
    b, a = model.slope_rad, model.slope_azimuth_rad
    cellp = np.stack([np.sin(lat), np.cos(lat), np.sin(lon), np.cos(lon),
                      np.sin(b) * np.sin(a), np.sin(b) * np.cos(a), np.cos(b), np.cos(b),
                      model.ir_fraction * 0.5 * (1.0 + np.cos(b)),
                      model.albedo, model.emissivity, model.frost_albedo, model.frost_emissivity])
    fz = model.factors
    cached["cellp"] = to_blocks(cellp)
    cached["factors"] = tuple(to_blocks(x) for x in (fz.a, fz.d, fz.f, fz.g))
    cached["probe_idx"] = to_blocks(model.probe_index).astype(np.int64)
    cached["probe_w"] = to_blocks(model.probe_weight)
    return cached


def energy_block(model, state, declination_rad, distance_au, hour_angle0_rad, tau, pressure,
                 diagnostics=False):
    """Advance the surface energy balance over a block of steps (numba kernel).

    Parameters
    ----------
    model : EnergyModel
    state : EnergyState
        State at the start of the block (not modified).
    declination_rad, distance_au, hour_angle0_rad : array [step]
        Solar declination [rad], distance [AU], and hour angle at east longitude 0
        at the middle of each step [rad].
    tau : array [step, cell] or broadcastable [-]
        Dust optical depth, 0-10.
    pressure : array [step, cell] or broadcastable [Pa]
        Surface pressure (CO2 frost point), 10-1.2e5 Pa.
    diagnostics : bool
        Also return the surface fluxes [W m-2], each [step, cell]: ``absorbed``
        (solar + infrared), ``emitted``, ``conducted`` (into the ground),
        ``latent`` (released by CO2 condensation; negative when subliming),
        ``stored`` (in the surface node), ``incident_solar``.  By construction
        absorbed - emitted - conducted + latent - stored = 0 to rounding.

    Returns
    -------
    state : EnergyState
        At the end of the block.
    out : dict of ndarray [step, cell]
        ``surface_temperature`` [K], ``probe_temperature`` [K] (at the salt
        depth), ``co2_frost`` [kg m-2], at the end of each step, plus fluxes.
    """
    if model.frost_albedo_slope != 0.0:
        raise ValidityError(f"frost_albedo_slope: received {model.frost_albedo_slope}; this kernel has a "
                            "constant frost albedo, allowed 0 (the coupled column applies the slope)")
    dec = np.ascontiguousarray(declination_rad, dtype=float)
    ns, nc = dec.size, model.n_cells
    flux = np.ascontiguousarray(top_of_atmosphere_flux(distance_au) * np.ones(ns))
    h0 = np.asarray(hour_angle0_rad, dtype=float) * np.ones(ns)
    taup, tfp = _kernel_step_inputs(model, tau, pressure, ns)
    k = _blocked_constants(model)
    temp = to_blocks(state.temperature)
    co2 = to_blocks(state.co2_frost)
    ts = np.empty((ns, nc))
    probe = np.empty((ns, nc))
    co2_out = np.empty((ns, nc))
    diag = np.empty((6, ns, nc)) if diagnostics else np.empty((0, 0, 0))
    fz = model.factors
    energy_block_kernel(temp, co2, *k["factors"], fz.theta, fz.dt, k["cellp"],
                        model.diffuse_fraction, np.sin(dec), np.cos(dec), flux, np.sin(h0),
                        np.cos(h0), taup, tfp, k["probe_idx"], k["probe_w"],
                        ts, probe, co2_out, diag)
    out = {"surface_temperature": ts, "probe_temperature": probe, "co2_frost": co2_out}
    if diagnostics:
        for i, name in enumerate(("absorbed", "emitted", "conducted", "latent", "stored",
                                  "incident_solar")):
            out[name] = diag[i]
    return EnergyState(from_blocks(temp, nc), from_blocks(co2, nc)), out


def energy_block_reference(model, state, declination_rad, distance_au, hour_angle0_rad, tau,
                           pressure, newton_iterations=4):
    """The same physics written the straightforward way (reference and benchmark path).

    A Python loop over time steps; per step one banded solve
    (:func:`scipy.linalg.solve_banded`) of the whole stacked tridiagonal system
    of all cells with the surface row held at the CO2 frost point, then
    ``newton_iterations`` solves with the emission linearised about the
    current surface temperature (NumPy for the insolation and frost logic).
    Same arguments and outputs (without diagnostics) as :func:`energy_block`.
    """
    from scipy.linalg import solve_banded

    from .insolation import shortwave_on_slope

    dec, flux, h0, tau2, p2 = _step_inputs(model, declination_rad, distance_au, hour_angle0_rad,
                                           tau, pressure)
    ns, nc = tau2.shape
    cols, fz = model.columns, model.factors
    theta, dt, om = fz.theta, fz.dt, 1.0 - fz.theta
    nn = cols.n_nodes
    hdt = cols.node_capacity / dt                       # [node, cell]
    g = cols.conductance
    gm = np.zeros_like(g)
    gm[1:] = g[:-1]
    geo = model.geothermal_flux
    # banded matrix of the stacked system, cell-major ordering (index = cell * nn + node)
    ab = np.zeros((3, nn * nc))
    ab[0] = (-theta * g).T.ravel()                      # upper diagonal, entry i couples i-1 -> i
    ab[0] = np.roll(ab[0], 1)
    ab[1] = (hdt + theta * (gm + g)).T.ravel()
    ab[2] = np.roll((-theta * gm).T.ravel(), -1)
    row0 = np.arange(nc) * nn
    diag0 = ab[1, row0].copy()
    temp = np.array(state.temperature, dtype=float, copy=True)
    co2 = np.array(state.co2_frost, dtype=float, copy=True)
    sigma, lat_heat = STEFAN_BOLTZMANN, LATENT_HEAT_CO2
    ts = np.empty((ns, nc))
    probe = np.empty((ns, nc))
    co2_out = np.empty((ns, nc))
    lat = model.latitude_rad
    cb = np.cos(model.slope_rad)
    cells = np.arange(nc)
    for s in range(ns):
        h = h0[s] + model.longitude_rad
        frosted = co2 > 0.0
        alb = np.where(frosted, model.frost_albedo, model.albedo)
        eps = np.where(frosted, model.frost_emissivity, model.emissivity)
        direct, diffuse = shortwave_on_slope(lat, dec[s], h, 1.0, tau2[s], model.slope_rad,
                                             model.slope_azimuth_rad, alb, model.diffuse_fraction,
                                             flux[s])
        mu_noon = np.maximum(np.cos(lat - dec[s]), 0.0)
        s_in = (1.0 - alb) * (direct + diffuse) + eps * model.ir_fraction * flux[s] * mu_noon * 0.5 * (1 + cb)
        tp = np.vstack([temp[:1], temp, temp[-1:]])     # padded for neighbours
        rhs = hdt * temp + om * (gm * (tp[:-2] - temp) - g * (temp - tp[2:]))
        rhs[-1] += geo
        t0, t1 = temp[0], temp[1]
        rhs0 = hdt[0] * t0 + s_in - om * eps * sigma * t0**4 - om * g[0] * (t0 - t1)
        q_lat = -lat_heat * co2 / dt
        if model.co2_on:
            tf = 3167.8 / (23.23 - np.log(0.01 * p2[s]))
            # surface held at the frost point: Dirichlet row
            ab[1, row0] = 1.0
            ab[0, row0 + 1] = 0.0
            r = rhs.copy()
            r[0] = tf
            x = solve_banded((1, 1), ab, r.T.ravel()).reshape(nc, nn).T
            ab[0, row0 + 1] = -theta * g[0]
            r_f = (hdt[0] + theta * g[0]) * tf - theta * g[0] * x[1] + theta * eps * sigma * tf**4 - rhs0
            hold = r_f > q_lat
        else:
            hold = np.zeros(nc, dtype=bool)
            q_lat = np.zeros(nc)
        tn = np.where(hold, 0.0, np.maximum(t0, tf) if model.co2_on else t0)
        new = temp
        for _ in range(newton_iterations):
            # emission linearised about tn: theta eps sigma (4 tn^3 T - 3 tn^4)
            ab[1, row0] = diag0 + 4.0 * theta * eps * sigma * tn**3
            r = rhs.copy()
            r[0] = rhs0 + q_lat + 3.0 * theta * eps * sigma * tn**4
            new = solve_banded((1, 1), ab, r.T.ravel()).reshape(nc, nn).T
            tn = new[0]
        if model.co2_on and np.any(hold):
            new = np.where(hold[None, :], x, new)
            co2 = np.where(hold, co2 + r_f * dt / lat_heat, 0.0)
        else:
            co2 = np.zeros(nc) if model.co2_on else co2
        temp = new
        ab[1, row0] = diag0
        ts[s] = temp[0]
        co2_out[s] = co2
        i = model.probe_index
        probe[s] = (1 - model.probe_weight) * temp[i, cells] + model.probe_weight * temp[i + 1, cells]
    return EnergyState(np.ascontiguousarray(temp), co2), {
        "surface_temperature": ts, "probe_temperature": probe, "co2_frost": co2_out}
