"""The coupled column: ground heat, near-surface air, atmosphere and water, step by step.

One numba kernel advances, for a block of steps and a chunk of cells, every
process of the site column together, in this order within each step:

1. sunlight on the (sloped) ground and in the dusty atmosphere (geometry:
   :mod:`wetcycle.forcing.insolation`; the dust's scattering and absorption, bounces
   between ground and sky included: the delta-Eddington layer of
   :mod:`wetcycle.forcing.scattering`); the sky's infrared, its CO2 band from the
   near-surface air and its dust from the grey atmosphere
   (:mod:`wetcycle.forcing.atmosphere`);
2. the ground's energy balance -- absorbed sunlight, downwelling infrared from
   the atmosphere, thermal emission, conduction into the layered regolith,
   sensible heat to the air, CO2 frost -- solved implicitly together with the
   air temperature at the sensor height (:mod:`wetcycle.forcing.energy` for the
   ground, :mod:`wetcycle.forcing.surface_layer` for the turbulent exchange,
   :mod:`wetcycle.forcing.atmosphere` for the air and the atmosphere);
3. the atmosphere's grey-layer temperature (:mod:`wetcycle.forcing.atmosphere`);
4. the near-surface air layer's depth: convective by day (``day_layer_depth``,
   reached at a rate ``day_layer_depth / growth_time``, entraining air of the
   free-atmosphere mixing ratio), a shallow stable layer at night
   (``night_layer_depth``; the air above it is returned to the free
   atmosphere);
5. water: one implicit tridiagonal solve for the vapour in the near-surface
   air (exchanging with the free atmosphere at ``depth / mixing_time`` while
   convective) and in the pores of the regolith nodes, with adsorption and
   pore ice (:mod:`wetcycle.forcing.regolith_vapour`).  The regolith's top
   node is the surface: its ice is the surface water frost, a finite
   reservoir fed and drained by the surface-layer flux.  Air supersaturated
   with respect to ice at its own temperature drops the excess onto the
   ground (fog).

Water is conserved to rounding: every store changes only by fluxes that
another store or the free atmosphere loses (``atmosphere_exchange`` records
the latter).  The salt at depth z sees the temperature and the pore vapour
pressure at z; a surface salt (z = 0) sees the surface node: ice saturation
over frost, the value the exchange gives otherwise.

State, parameters and outputs are plain arrays (see :class:`ColumnState`,
:func:`prepare_column`); the kernel works on the blocked layout of
:mod:`wetcycle.forcing.regolith` (blocks of :data:`COLUMN_BLOCK` cells) and, within a
block, on local workspaces laid out for SIMD loops over the block's cells.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from numba import njit

from ..errors import ConfigError, ValidityError
from .atmosphere import CO2_EMISSIVITY_610PA, CP_AIR_MARS
from .energy import (CO2_PRESSURE_RANGE, LATENT_HEAT_CO2, NEWTON_MAXIT, NEWTON_TOL,
                     STEFAN_BOLTZMANN, _cellarray, daily_mean_insolation, exp_neg, frost_albedo_law)
from .insolation import top_of_atmosphere_flux
from .scattering import (DUST_SOLAR_ASYMMETRY, DUST_SOLAR_SINGLE_SCATTERING_ALBEDO, beam_layer_kernel,
                         diffuse_layer_kernel, layer_constants)
from .regolith import CELL_BLOCK, factorize, from_blocks, probe_weights, to_blocks
from .regolith_vapour import (ICE_CAPACITY, R_GAS, R_VAPOUR, RHO_SAT_DT, RHO_SAT_T0, RHO_SAT_TABLE,
                              TABLE_T, effective_diffusivity, water_tables)
from .supply import PROFILE_LEVELS, free_mixing_ratio_kernel
from .surface_layer import neutral_coefficient, transfer_velocity, unstable_constant

# ---- indices ------------------------------------------------------------------------
#: rows of the per-step input array ``[row, step, padded cell]``
IN_TAU, IN_FROST_POINT, IN_EPS_ATM, IN_COLUMN, IN_PRESSURE = range(5)
N_IN = 5
#: rows of the air/atmosphere state ``[block, row, cb]``
A_TATM, A_TAIR, A_RHO_AIR, A_DEPTH, A_HFLUX, A_TMEAN, A_QFREE = range(7)
N_ATM = 7
#: rows of the per-cell vapour and exchange parameters ``[block, row, cb]``
V_PHI, V_PHI_TAU, V_PORE, V_CAPA, V_CN, V_LOUIS, V_WIND, V_NODES = range(8)
N_VAP = 8
#: scalar parameters ``par[...]``
(P_DT, P_THETA, P_CP, P_RAIR, P_G, P_HAIR, P_TAUAIR, P_SOL, P_HDAY,
 P_HNIGHT, P_TGROW, P_TMIX, P_ZREF, P_TAUNIGHT, P_QCONST, P_LAPSE, P_EPSW, P_SPD, P_TMIXST,
 #: CO2 frost albedo law (energy.frost_albedo_law): slope [W-1 m2] and cap [-]
 P_FROST_SLOPE, P_FROST_AMAX,
 #: delta-Eddington constants of the dust layer (scattering.layer_constants): omega', g', the
 #: optical-depth scale, gamma_1, gamma_2, k; the clear CO2 column emissivity at 610 Pa
 P_DE_W, P_DE_G, P_DE_S, P_DE_G1, P_DE_G2, P_DE_K, P_ECO2,
 #: share of the air's departure from its sol mean at the CO2 band's emitting height [-]
 P_WCO2,
 #: depth of the air node while the ground is colder than the air (stable, night) [m]
 P_HAIRN) = range(30)
N_PAR = 30
#: rows of the output array ``[row, step, cell]``
OUTPUTS = ("surface_temperature", "salt_temperature", "co2_frost", "water_frost",
           "vapor_pressure", "surface_vapor_pressure", "air_temperature", "air_vapor_pressure",
           "sensible_heat_flux", "downwelling_longwave", "surface_water_flux",
           "atmosphere_exchange", "ground_heat_flux", "free_vapor_pressure")
(O_TS, O_TPROBE, O_CO2, O_FROST, O_ESALT, O_ESURF, O_TAIR, O_EAIR, O_H, O_LDOWN, O_FSURF,
 O_FATM, O_G, O_EFREE) = range(len(OUTPUTS))
#: Cells per block of the column kernel (its workspace rows): wider than the dry kernel's
#: :data:`~wetcycle.forcing.regolith.CELL_BLOCK` because its many short loops over a block's
#: cells each pay a fixed start-up cost (measured: 64 beats 32 and 128).  Chunks of at most
#: CELL_BLOCK cells use blocks of CELL_BLOCK (less padding for a single site).  Both widths
#: are whole multiples of every SIMD loop's step, so a cell always takes the same code path.
COLUMN_BLOCK = 64
#: A second solve of the water column (rare) runs only over the groups of this many cells that
#: need it; a multiple of every SIMD loop's step, so a cell takes the same code path wherever
#: its group lies (its numbers never depend on its block-mates).
_SOLVE_GROUP = CELL_BLOCK
#: Most solves of the water column per step (a new solve only where pore ice appeared or ran out).
VAPOUR_MAXIT = 4
#: units of the outputs
OUTPUT_UNITS = dict(zip(OUTPUTS, ("K", "K", "kg m-2", "kg m-2", "Pa", "Pa", "K", "Pa", "W m-2",
                                  "W m-2", "kg m-2", "kg m-2", "W m-2", "Pa")))


# ---- the kernel's block workspace -----------------------------------------------------
# The kernel copies one block's state and constants into three local arrays with
# compile-time strides (rows of COLUMN_BLOCK cells): per-cell rows ``cw[row, c]``, thermal
# nodes ``tw[node, row, c]`` and vapour nodes ``vw[node, row, c]``.  Every loop over the
# cells of a block then reads and writes a few arrays at known distances, which the
# compiler turns into SIMD code without run-time aliasing checks; the block's state goes
# back to the caller's arrays after its last step.
#: per-cell rows: block constants, state, step inputs, scratch, outputs
_C_CELLP = 0                                     # 13 rows, as cellp
_C_VAPP = 13                                     # N_VAP rows, as vapp
_C_PW = 21                                       # weight of the salt depth
_C_SURF = 22                                     # 1: a surface salt (node 0, weight 0)
_C_CO2 = 23                                      # CO2 frost [kg m-2]
_C_ATM = 24                                      # N_ATM rows, as atm
_C_IN = 31                                       # N_IN rows, this step's inputs
(_C_WST, _C_EPS, _C_SW, _C_ATMSW, _C_LDW, _C_SIN, _C_WTR, _C_CW, _C_TAUR, _C_ALPHA, _C_BETA0,
 _C_QQ, _C_PP, _C_RF, _C_HOLD, _C_RHS, _C_TN, _C_ACT, _C_HFLUX, _C_GNET, _C_RFREE, _C_XCH,
 _C_WTOP, _C_G0V, _C_RA0, _C_FS, _C_FSKEEP, _C_XAKEEP, _C_TAKE, _C_DONE, _C_BAD, _C_FOG,
 _C_PWI, _C_PWJ, _C_PSI, _C_PKI, _C_PSJ, _C_PKJ, _C_PTI, _C_PTJ) = range(36, 76)
_C_HAIR = 76                                     # this step's air-node depth [m]
_C_ECO2 = 77                                     # this step's CO2 band emissivity [-]
_C_OUT = 78                                      # len(OUTPUTS) rows, this step's outputs
_N_CW = _C_OUT + len(OUTPUTS)
#: thermal node rows: temperature, the elimination factors, the upward sweep's e
_T_T, _T_FA, _T_FD, _T_FF, _T_FG, _T_E = range(6)
_N_TW = 6
#: vapour node rows (node j): total water at the step's start (the state), the iterate, the
#: estimate from the fluxes, the kept estimate, Langmuir k, W at saturation, ice flag,
#: control volume, cv / dt, dt / cv, 1 / (distance to the next node); the table look-up
#: (index, fraction, the two bracketing entries of each table); the branch-change flag;
#: solver rows (row i = node i - 1, row 0 the air): the eliminated upper diagonal and
#: right-hand side, the solution, the conductance between rows i - 1 and i
(_W_W, _W_LIN, _W_EST, _W_KEEP, _W_K, _W_SAT, _W_ICE, _W_CV, _W_CVDT, _W_DTCV, _W_IDZN,
 _W_TI, _W_TF, _W_RS0, _W_RS1, _W_K0, _W_K1, _W_BAD,
 _R_CP, _R_DP, _R_X, _R_G) = range(22)
_N_VW = 22


def _paired_tables(tab):
    """The tables of :func:`~wetcycle.forcing.regolith_vapour.water_tables` ``[2, n]`` as rows
    ``(rho_sat[i], rho_sat[i + 1], k[i], k[i + 1])`` ``[n - 1, 4]``: a kernel look-up reads 32
    contiguous bytes (one cache line) instead of four scattered values."""
    out = np.empty((tab.shape[1] - 1, 4))
    out[:, 0] = tab[0, :-1]
    out[:, 1] = tab[0, 1:]
    out[:, 2] = tab[1, :-1]
    out[:, 3] = tab[1, 1:]
    return out


@njit(cache=True, fastmath=True, inline="always")
def _table_position(t, top):
    """Index (as a float) and fraction of temperature ``t`` in the tables, as
    :func:`~wetcycle.forcing.regolith_vapour.table_lookup` computes them."""
    x = (t - RHO_SAT_T0) * (1.0 / RHO_SAT_DT)
    x = min(max(x, 0.0), top)
    xi = float(int(x))
    return xi, x - xi


@njit(cache=True, fastmath=True, inline="always")
def _paired_lookup(t, tabp):
    """(rho_sat, k) at ``t`` from :func:`_paired_tables`: the numbers of
    :func:`~wetcycle.forcing.regolith_vapour.table_lookup`."""
    xi, f = _table_position(t, tabp.shape[0] - 1.0)
    i = int(xi)
    a0, a1, k0, k1 = tabp[i, 0], tabp[i, 1], tabp[i, 2], tabp[i, 3]
    return a0 + f * (a1 - a0), k0 + f * (k1 - k0)


@njit(cache=True, fastmath=True, inline="always")
def _saturated_water(phi, cap_a, k, rs):
    """W at ice saturation [kg m-3]: the ``w_sat`` of :func:`_partition`."""
    ks = k * rs
    return phi * rs + cap_a * ks / (1.0 + ks)


# powers of two for _cube_root's range reduction: 2**n and 8**n = 2**(3n), n = 1, 2, 4, ... 256
(_P2_1, _P2_2, _P2_3, _P2_4, _P2_6, _P2_8, _P2_12, _P2_16, _P2_24, _P2_32, _P2_48, _P2_64, _P2_96,
 _P2_128, _P2_192, _P2_256, _P2_384, _P2_768) = (2.0 ** k for k in (1, 2, 3, 4, 6, 8, 12, 16, 24, 32, 48, 64,
                                                                      96, 128, 192, 256, 384, 768))


@njit(cache=True, fastmath=True, inline="always")
def _cube_root_step(y, s, k8, k2):
    """Scale ``y`` into range by ``k8`` = 8**n and ``s`` by ``k2`` = 2**n (exponents only: exact)."""
    big = y >= k8
    y = y * (1.0 / k8) if big else y
    s = s * k2 if big else s
    tiny = y * k8 < 8.0
    y = y * k8 if tiny else y
    s = s * (1.0 / k2) if tiny else s
    return y, s


@njit(cache=True, fastmath=True, inline="always")
def _cube_root(x):
    """``x**(1/3)`` for ``x > 0``, 0 for ``x <= 0``, in a form that stays in SIMD loops (a libm
    call would not).  Method: exact range reduction to ``[1, 8)`` by powers of 8 (nine
    branch-free steps cover every double), a cubic initial guess fitted to the cube root on
    ``[1, 8)`` (1.4 % at worst), three Halley steps ``r (r^3 + 2y) / (2 r^3 + y)`` (cubic
    convergence: 1e-2, 1e-6, 1e-18).  Within 3 ulp of the correctly rounded root over the
    whole double range (checked against ``numpy.cbrt`` on 2e6 points, 1e-307 to 1e307), as
    ``x ** (1/3)`` is."""
    y = x if x > 0.0 else 1.0
    s = 1.0
    y, s = _cube_root_step(y, s, _P2_768, _P2_256)
    y, s = _cube_root_step(y, s, _P2_384, _P2_128)
    y, s = _cube_root_step(y, s, _P2_192, _P2_64)
    y, s = _cube_root_step(y, s, _P2_96, _P2_32)
    y, s = _cube_root_step(y, s, _P2_48, _P2_16)
    y, s = _cube_root_step(y, s, _P2_24, _P2_8)
    y, s = _cube_root_step(y, s, _P2_12, _P2_4)
    y, s = _cube_root_step(y, s, _P2_6, _P2_2)
    y, s = _cube_root_step(y, s, _P2_3, _P2_1)
    r = 0.7091206995822162 + y * (0.3400291293011452 + y * (-0.03749812135376207 + y * 0.001916834543139507))
    for _ in range(3):
        r3 = r * r * r
        r = r * (r3 + 2.0 * y) / (2.0 * r3 + y)
    return s * r if x > 0.0 else 0.0


@njit(cache=True, fastmath=True, inline="always")
def _vapour_pressure(rho_v, t):
    """Vapour pressure [Pa] of vapour density ``rho_v`` [kg m-3] at ``t`` [K]."""
    return rho_v * R_VAPOUR * t


@njit(cache=True, fastmath=True, inline="always")
def _partition(w, phi, cap_a, k, wsat):
    """Branch-free form of :func:`~wetcycle.forcing.regolith_vapour.partition` for SIMD loops,
    given ``wsat`` (:func:`_saturated_water`): (rho_v, ice, capacity); a transiently negative
    ``w`` gives ``rho_v = w / phi``.  One division serves both branches."""
    wl = min(max(w, 0.0), wsat)
    bq = phi + cap_a * k - wl * k
    pos = w > 0.0
    num = 2.0 * wl if pos else w
    den = bq + math.sqrt(bq * bq + 4.0 * phi * k * wl) if pos else phi
    x = num / den
    dn = 1.0 + k * x
    cap = ICE_CAPACITY if w > wsat else phi + cap_a * k / (dn * dn)
    return x, max(w - wsat, 0.0), cap


@njit(cache=True, fastmath=True, boundscheck=False, error_model="numpy", nogil=True)
def column_kernel(temp, co2, atm, water, fa, fd, ff, fg, cellp, vapp, cv, idzn, par,
                  sin_dec, cos_dec, toa_flux, sin_h0, cos_h0, stepin, tabp,
                  probe_idx, probe_w, step0, out):
    """Advance the coupled column over a block of steps (see the module notes).

    Parameters (blocked layout ``[b, ..., c]``, see :func:`wetcycle.forcing.regolith.to_blocks`)
    ----------
    temp : [b, node, c] [K]          ground temperature profile, updated in place
    co2 : [b, c] [kg m-2]            CO2 frost, updated in place
    atm : [b, N_ATM, c]              T_atm [K], T_air [K], air vapour density [kg m-3],
                                     air layer depth [m], last sensible heat flux [W m-2],
                                     running sol-mean of T_air [K]
    water : [b, nv, c] [kg m-3]      total water per bulk volume of the top nv nodes
    fa, fd, ff, fg : [b, node, c]    conduction factors (regolith.Factors)
    cellp : [b, 13, c]               radiative constants (as energy.energy_block_kernel; row 8
                                     the sky-view fraction)
    vapp : [b, N_VAP, c]             porosity, porosity/tortuosity, pore radius [m], monolayer
                                     capacity [kg m-3], neutral transfer coefficient, Louis
                                     unstable term, wind [m s-1], the cell's own number of
                                     vapour nodes
    cv : [b, nv, c] [m]              control-volume thickness of each vapour node
    idzn : [b, nv, c] [m-1]          1 / distance to the next node (0: no flux below)
    par : [N_PAR]                    scalars, see the P_* indices
    sin_dec, cos_dec, toa_flux, sin_h0, cos_h0 : [step]
    stepin : [b, step, N_IN, c]      optical depth, CO2 frost point [K] (< 0: no CO2
                                     frost), infrared emissivity of the atmosphere,
                                     atmospheric water column [kg m-2], pressure [Pa]
                                     (a block's steps in one contiguous run)
    tabp : [n - 1, 4]                rho_sat and Langmuir k tables (regolith_vapour.water_tables)
                                     as bracketing pairs (_paired_tables)
    probe_idx, probe_w : [b, c]      node and weight of the salt depth
    step0 : int                      index in the run's clock of the block's first step: the
                                     free-atmosphere mixing ratio is renewed at each sol's start
                                     (from the column, the pressure and the sol-mean air
                                     temperature; supply.free_mixing_ratio_kernel), so results
                                     do not depend on how the run is cut into blocks
    out : [len(OUTPUTS), step, cell] filled with the outputs (values at step ends; the
                                     two water fluxes are amounts over the step [kg m-2])

    Blocks hold at most :data:`COLUMN_BLOCK` cells.
    """
    nb, nn, cb = temp.shape
    if cb > COLUMN_BLOCK:
        raise ValueError("column_kernel: blocks hold at most COLUMN_BLOCK cells")
    # (the workspace's rows are COLUMN_BLOCK long, a compile-time constant, so that the
    # compiler knows every distance between them; the loops run to the block's own length,
    # which keeps them SIMD loops rather than unrolled scalar code)
    nv = water.shape[1]
    ns = sin_dec.size
    nc = out.shape[2]
    sigma = STEFAN_BOLTZMANN
    lat_heat = LATENT_HEAT_CO2
    frost_slope = par[P_FROST_SLOPE]
    frost_amax = par[P_FROST_AMAX]
    dt = par[P_DT]
    idt = 1.0 / dt
    theta = par[P_THETA]
    om = 1.0 - theta
    r = om / theta
    de_w, de_g, de_s = par[P_DE_W], par[P_DE_G], par[P_DE_S]
    de_g1, de_g2, de_k = par[P_DE_G1], par[P_DE_G2], par[P_DE_K]
    eco2_610 = par[P_ECO2]
    w_co2 = par[P_WCO2]
    cp = par[P_CP]
    r_air = par[P_RAIR]
    g = par[P_G]
    h_air_day = par[P_HAIR]
    h_air_night = par[P_HAIRN]
    tau_air = par[P_TAUAIR]
    tau_night = par[P_TAUNIGHT]
    fmean = par[P_DT] / par[P_SOL]
    h_day = par[P_HDAY]
    h_night = par[P_HNIGHT]
    t_grow = par[P_TGROW]
    t_mix = par[P_TMIX]
    t_mix_stable = par[P_TMIXST]
    z_ref = par[P_ZREF]
    ri_coef = g * z_ref
    q_const = par[P_QCONST]
    lapse = par[P_LAPSE]
    eps_w = par[P_EPSW]
    spd = int(par[P_SPD])
    n_out = len(OUTPUTS)
    tab_top = tabp.shape[0] - 1.0
    lq_ = np.empty(PROFILE_LEVELS)
    pq_ = np.empty(PROFILE_LEVELS)
    wk_ = np.empty(PROFILE_LEVELS)
    cw = np.zeros((_N_CW, COLUMN_BLOCK))
    tw = np.zeros((nn, _N_TW, COLUMN_BLOCK))
    vw = np.zeros((nv + 2, _N_VW, COLUMN_BLOCK))
    pidx = np.zeros(COLUMN_BLOCK, dtype=np.int64)
    a_fr = np.empty(COLUMN_BLOCK)                 # this step's CO2 frost albedo
    for b in range(nb):
        o = b * cb
        ou = np.uint64(o)
        cmax = min(cb, nc - o)
        # ---- the block in: state and constants ---------------------------------------
        for k in range(13):
            for c in range(cb):
                cw[_C_CELLP + k, c] = cellp[b, k, c]
        for k in range(N_VAP):
            for c in range(cb):
                cw[_C_VAPP + k, c] = vapp[b, k, c]
        for k in range(N_ATM):
            for c in range(cb):
                cw[_C_ATM + k, c] = atm[b, k, c]
        for c in range(cb):
            cw[_C_PW, c] = probe_w[b, c]
            cw[_C_SURF, c] = 1.0 if (probe_idx[b, c] == 0) & (probe_w[b, c] == 0.0) else 0.0
            cw[_C_CO2, c] = co2[b, c]
            pidx[c] = probe_idx[b, c]
        for j in range(nn):
            for c in range(cb):
                tw[j, _T_T, c] = temp[b, j, c]
                tw[j, _T_FA, c] = fa[b, j, c]
                tw[j, _T_FD, c] = fd[b, j, c]
                tw[j, _T_FF, c] = ff[b, j, c]
                tw[j, _T_FG, c] = fg[b, j, c]
        for j in range(nv):
            for c in range(cb):
                vw[j, _W_W, c] = water[b, j, c]
                cvj = cv[b, j, c]
                vw[j, _W_CV, c] = cvj
                vw[j, _W_CVDT, c] = cvj * idt
                vw[j, _W_DTCV, c] = dt / cvj
                vw[j, _W_IDZN, c] = idzn[b, j, c]
                vw[j, _W_TI, c] = -1.0                   # no table interval yet
        # the block's vapour nodes: below every one of its cells' own last node nothing moves
        # (no flux, see prepare_column), so the solve stops there -- exact, cell by cell
        # (from the cells' own node counts: under fast-math a test for an infinite distance
        # is folded away)
        nvb = 1
        for c in range(cb):
            nvb = max(nvb, int(vapp[b, V_NODES, c]))
        nvxb = nvb + 1
        for s in range(ns):
            sd, cd, fl, sh0, ch0 = sin_dec[s], cos_dec[s], toa_flux[s], sin_h0[s], cos_h0[s]
            for k in range(N_IN):
                for c in range(cb):
                    cw[_C_IN + k, c] = stepin[b, s, k, c]
            if (step0 + s) % spd == 0:       # a new sol: renew the free-atmosphere mixing ratio
                for c in range(cb):
                    if q_const >= 0.0:
                        cw[_C_ATM + A_QFREE, c] = q_const
                    else:
                        tb = min(max(cw[_C_ATM + A_TMEAN, c], 120.0), 300.0)
                        q0, zc = free_mixing_ratio_kernel(cw[_C_IN + IN_COLUMN, c], cw[_C_IN + IN_PRESSURE, c],
                                                          tb, lapse, g, r_air, eps_w, lq_, pq_, wk_)
                        cw[_C_ATM + A_QFREE, c] = q0
            # ---- ground heat: upward elimination (regolith.sweep_up on the workspace) ----
            j = nn - 1
            for c in range(cb):
                tw[j, _T_E, c] = (tw[j, _T_FA, c] * tw[j, _T_T, c] + r * tw[j, _T_FF, c] * tw[j - 1, _T_T, c]
                                  + tw[j, _T_FG, c])
            for j in range(nn - 2, 0, -1):
                for c in range(cb):
                    tw[j, _T_E, c] = (tw[j, _T_FA, c] * tw[j, _T_T, c] + r * tw[j, _T_FF, c] * tw[j - 1, _T_T, c]
                                      + tw[j, _T_FD, c] * (r * tw[j + 1, _T_T, c] + tw[j + 1, _T_E, c]))
            for c in range(cb):        # convective velocity from the last step (0 if H <= 0)
                hfl = cw[_C_ATM + A_HFLUX, c]
                ta = cw[_C_ATM + A_TAIR, c]
                rho = cw[_C_IN + IN_PRESSURE, c] / (r_air * ta)
                cw[_C_WST, c] = _cube_root(g * cw[_C_ATM + A_DEPTH, c] * hfl / (rho * cp * ta))
            for c in range(cb):        # CO2 frost albedo from the daily-mean insolation (own loop:
                # acos is a library call, which would keep the next loop from SIMD code); read
                # only where the step starts with CO2 frost, so only there evaluated
                if cw[_C_CO2, c] > 0.0:
                    a_fr[c] = frost_albedo_law(cw[_C_CELLP + 11, c], frost_slope, frost_amax,
                                               daily_mean_insolation(cw[_C_CELLP + 0, c], cw[_C_CELLP + 1, c],
                                                                     sd, cd, fl))
                else:
                    a_fr[c] = 0.0
            for c in range(cb):        # geometry, radiation, turbulence, surface equation
                slat, clat = cw[_C_CELLP + 0, c], cw[_C_CELLP + 1, c]
                slon, clon = cw[_C_CELLP + 2, c], cw[_C_CELLP + 3, c]
                ch = ch0 * clon - sh0 * slon
                sh = sh0 * clon + ch0 * slon
                u = slat * sd + clat * cd * ch
                cosi = (-cd * sh * cw[_C_CELLP + 4, c] + (clat * sd - slat * cd * ch) * cw[_C_CELLP + 5, c]
                        + u * cw[_C_CELLP + 6, c])
                # sunlight through the dust: delta-Eddington layer over the ground (scattering)
                tau = cw[_C_IN + IN_TAU, c] * de_s
                ud = max(u, 1e-6)
                tr = exp_neg(-tau / ud)
                ek = exp_neg(-de_k * tau)
                refl, tdif = beam_layer_kernel(ud, tr, ek, de_w, de_g, de_g1, de_g2, de_k)
                rd, td = diffuse_layer_kernel(ek, de_g1, de_g2, de_k)
                uu = max(u, 0.0)
                beam = fl * tr
                fr = cw[_C_CO2, c] > 0.0
                # (both values loaded first: a select of two loads would become a gather)
                a_bare, a_frost = cw[_C_CELLP + 9, c], a_fr[c]
                e_bare, e_frost = cw[_C_CELLP + 10, c], cw[_C_CELLP + 12, c]
                alb = a_frost if fr else a_bare
                eps = e_frost if fr else e_bare
                cw[_C_EPS, c] = eps
                down = fl * uu * (tr + tdif) / (1.0 - alb * rd)     # at the ground, bounces included
                diff_h = down - beam * uu
                cs = cw[_C_CELLP + 7, c]
                sww = (beam * max(cosi, 0.0)
                       + 0.5 * (diff_h * (1.0 + cs) + alb * down * (1.0 - cs)))
                sww = sww if u > 0.0 else 0.0
                cw[_C_SW, c] = sww
                atsw = fl * uu * (1.0 - refl - tr - tdif) + alb * down * (1.0 - rd - td)
                cw[_C_ATMSW, c] = atsw if u > 0.0 else 0.0
                # sky infrared: the CO2 band from the near-surface air, the dust from the
                # atmosphere's grey layer (atmosphere module notes)
                tatm = cw[_C_ATM + A_TATM, c]
                t4 = tatm * tatm
                tmn = cw[_C_ATM + A_TMEAN, c]
                tair = tmn + w_co2 * (cw[_C_ATM + A_TAIR, c] - tmn)
                ta4 = tair * tair
                ec = min(eco2_610 * math.sqrt(cw[_C_IN + IN_PRESSURE, c] * (1.0 / 610.0)), 0.99)
                cw[_C_ECO2, c] = ec
                ld = ec * sigma * ta4 * ta4 + (cw[_C_IN + IN_EPS_ATM, c] - ec) * sigma * t4 * t4
                cw[_C_LDW, c] = ld
                s_abs = (1.0 - alb) * sww + eps * ld * cw[_C_CELLP + 8, c]
                cw[_C_SIN, c] = s_abs
                # turbulent exchange with the air at the sensor height (surface_layer: Louis
                # stability, gustiness), implicit together with the air temperature
                t0 = tw[0, _T_T, c]
                ta = cw[_C_ATM + A_TAIR, c]
                rho = cw[_C_IN + IN_PRESSURE, c] / (r_air * ta)
                w = transfer_velocity(ri_coef, t0, ta, cw[_C_VAPP + V_WIND, c], cw[_C_WST, c],
                                      cw[_C_VAPP + V_CN, c], cw[_C_VAPP + V_LOUIS, c])
                cw[_C_WTR, c] = w
                cwc = rho * cp * w
                cw[_C_CW, c] = cwc
                unstable = t0 > ta
                tau_a = tau_air if unstable else tau_night
                h_air = h_air_day if unstable else h_air_night
                dd = 1.0 + dt * w / h_air + dt / tau_a
                al = (dt * w / h_air) / dd
                b0 = (ta + dt * cw[_C_ATM + A_TMEAN, c] / tau_a) / dd
                cw[_C_TAUR, c] = tau_a
                cw[_C_HAIR, c] = h_air
                cw[_C_ALPHA, c] = al
                cw[_C_BETA0, c] = b0
                q = theta * eps * sigma
                cw[_C_QQ, c] = q
                t1 = tw[1, _T_T, c]
                g0 = tw[0, _T_FD, c]
                pc = tw[0, _T_FF, c] + cwc * theta * (1.0 - al)
                cw[_C_PP, c] = pc
                kk = (tw[0, _T_FA, c] * t0 + s_abs - r * q * t0 * t0 * t0 * t0
                      - om * g0 * (t0 - t1) + theta * g0 * tw[1, _T_E, c]
                      - cwc * (om * t0 * (1.0 - al) - b0))
                tf = cw[_C_IN + IN_FROST_POINT, c]
                ql = -lat_heat * cw[_C_CO2, c] * idt       # all existing frost sublimes
                rf = pc * tf + q * tf * tf * tf * tf - kk    # residual held at T_f
                cw[_C_HOLD, c] = 1.0 if (rf > ql) & (tf > 0.0) else 0.0
                cw[_C_RF, c] = rf
                cw[_C_RHS, c] = kk + ql
                cw[_C_TN, c] = max(t0, tf)
            for c in range(cb):
                cw[_C_ACT, c] = 1.0
            for it in range(NEWTON_MAXIT):
                nact = 0.0
                for c in range(cb):
                    t = cw[_C_TN, c]
                    pc = cw[_C_PP, c]
                    qc = cw[_C_QQ, c]
                    t3 = t * t * t
                    d = (pc * t + qc * t3 * t - cw[_C_RHS, c]) / (pc + 4.0 * qc * t3)
                    a = cw[_C_ACT, c]
                    cw[_C_TN, c] = t - a * d
                    a = a * (1.0 if d * d >= NEWTON_TOL * NEWTON_TOL else 0.0)
                    cw[_C_ACT, c] = a
                    nact += a
                if nact == 0.0:
                    break
            for c in range(cb):          # new surface state, air and atmosphere temperatures
                hd = cw[_C_HOLD, c] > 0.0
                t0 = tw[0, _T_T, c]
                tf = cw[_C_IN + IN_FROST_POINT, c]
                tnn = cw[_C_TN, c]
                tnew = tf if hd else tnn
                m_old = cw[_C_CO2, c]
                m_new = m_old + cw[_C_RF, c] * dt / lat_heat if hd else 0.0
                cw[_C_CO2, c] = m_new
                tw[0, _T_T, c] = tnew
                th = theta * tnew + om * t0
                al = cw[_C_ALPHA, c]
                b0 = cw[_C_BETA0, c]
                hf = cw[_C_CW, c] * (th * (1.0 - al) - b0)
                cw[_C_HFLUX, c] = hf
                # net flux into the ground (theta-weighted emission, as the balance uses it)
                cw[_C_GNET, c] = (cw[_C_SIN, c] - cw[_C_QQ, c] / theta * (theta * tnew ** 4 + om * t0 ** 4) - hf
                                  + lat_heat * (m_new - m_old) * idt)
                ta_new = b0 + al * th
                p = cw[_C_IN + IN_PRESSURE, c]
                rho = p / (r_air * cw[_C_ATM + A_TAIR, c])
                tatm = cw[_C_ATM + A_TATM, c]
                ea = cw[_C_IN + IN_EPS_ATM, c]
                e_in = (ea * cw[_C_EPS, c] * sigma * tnew * tnew * tnew * tnew + cw[_C_ATMSW, c]
                        + rho * cp * cw[_C_HAIR, c] * (ta_new - cw[_C_ATM + A_TMEAN, c]) / cw[_C_TAUR, c])
                # emission up (eps_a sigma T_atm^4) and down (the sky infrared of this step, whose
                # CO2 part the near-surface air emits at its temperature)
                t3 = tatm * tatm * tatm
                ec = cw[_C_ECO2, c]
                tatm_new = tatm + dt * (e_in - ea * sigma * t3 * tatm - cw[_C_LDW, c]) / (
                    cp * p / g + dt * 4.0 * (2.0 * ea - ec) * sigma * t3)
                cw[_C_ATM + A_TATM, c] = max(tatm_new, tf if tf > 0.0 else 100.0)
                cw[_C_ATM + A_TAIR, c] = ta_new
                cw[_C_ATM + A_HFLUX, c] = hf
                cw[_C_ATM + A_TMEAN, c] += (ta_new - cw[_C_ATM + A_TMEAN, c]) * fmean
            # back substitution (regolith.sweep_down on the workspace)
            for j in range(1, nn):
                for c in range(cb):
                    tw[j, _T_T, c] = tw[j, _T_E, c] + tw[j, _T_FF, c] * tw[j - 1, _T_T, c]
            # ---- water: air layer depth, then the implicit solve for air + pores ----------
            for c in range(cb):
                p = cw[_C_IN + IN_PRESSURE, c]
                ta = cw[_C_ATM + A_TAIR, c]
                rf_ = cw[_C_ATM + A_QFREE, c] * p / (r_air * ta)
                cw[_C_RFREE, c] = rf_
                hb = cw[_C_ATM + A_DEPTH, c]
                ra = cw[_C_ATM + A_RHO_AIR, c]
                hfc = cw[_C_HFLUX, c]
                # a convective layer deepens once surface heating has eroded the night
                # inversion (the air at the sensor no colder than its sol-mean), and
                # collapses when the surface stops heating the air
                cv_ = (hfc > 0.0) & (ta >= cw[_C_ATM + A_TMEAN, c])
                target = h_day if cv_ else (hb if hfc > 0.0 else h_night)
                hn = min(target, hb + dt * h_day / t_grow)   # growth, limited in rate
                grow = target > hb
                hnew = hn if grow else target                  # or collapse at once
                # collapse returns the air above to the free atmosphere; growth entrains it
                x_ = (hnew - hb) * rf_ if grow else (hnew - hb) * ra
                ra = (hb * ra + x_) / hnew if grow else ra
                cw[_C_XCH, c] = x_
                cw[_C_ATM + A_DEPTH, c] = hnew
                # mixing with the air above: fast while convective, slow (large-scale eddies) in
                # a stable layer
                wt = hnew / t_mix if cv_ else hnew / t_mix_stable
                cw[_C_WTOP, c] = wt
                ts_ = tw[0, _T_T, c]
                itbar = 2.0 / (ta + ts_)
                wv = cw[_C_WTR, c]
                ga = wv * ta * itbar
                cw[_C_G0V, c] = wv * ts_ * itbar
                vw[0, _R_G, c] = ga
                cw[_C_RA0, c] = ra
                # row 0 of the water system (the air) is the same in every solve: eliminated once
                m = 1.0 / (hnew * idt + wt + ga)
                vw[0, _R_CP, c] = -(wv * ts_ * itbar) * m
                vw[0, _R_DP, c] = (hnew * idt * ra + wt * rf_) * m
            # per node: the conductance to the node below (pore diffusion), and the saturation
            # and Langmuir constant at the node's new temperature from the tables, once per
            # step outside the SIMD loops of the solve.  The gathers (scalar code) are needed
            # only for the rows of nodes where some cell moved to another table interval (deep
            # nodes often stay); position and interpolation are SIMD loops.
            for c in range(cb):                          # below the block's last node: no flux
                vw[nvb, _R_G, c] = 0.0
            for j in range(nvb):
                moved = 0.0
                if j < nvb - 1:
                    for c in range(cb):
                        t_j = tw[j, _T_T, c]
                        tm = 0.5 * (t_j + tw[j + 1, _T_T, c])
                        vw[j + 1, _R_G, c] = effective_diffusivity(tm, cw[_C_IN + IN_PRESSURE, c],
                                                                   cw[_C_VAPP + V_PHI_TAU, c],
                                                                   cw[_C_VAPP + V_PORE, c]) * vw[j, _W_IDZN, c]
                        xi, f = _table_position(t_j, tab_top)
                        moved += 1.0 if xi != vw[j, _W_TI, c] else 0.0
                        vw[j, _W_TI, c] = xi
                        vw[j, _W_TF, c] = f
                else:
                    for c in range(cb):
                        xi, f = _table_position(tw[j, _T_T, c], tab_top)
                        moved += 1.0 if xi != vw[j, _W_TI, c] else 0.0
                        vw[j, _W_TI, c] = xi
                        vw[j, _W_TF, c] = f
                if moved > 0.0:
                    for c in range(cb):
                        i = np.uint64(vw[j, _W_TI, c])   # (unsigned: no negative-index wrap)
                        vw[j, _W_RS0, c] = tabp[i, 0]
                        vw[j, _W_RS1, c] = tabp[i, 1]
                        vw[j, _W_K0, c] = tabp[i, 2]
                        vw[j, _W_K1, c] = tabp[i, 3]
                for c in range(cb):
                    f = vw[j, _W_TF, c]
                    a0 = vw[j, _W_RS0, c]
                    k0 = vw[j, _W_K0, c]
                    rs = a0 + f * (vw[j, _W_RS1, c] - a0)
                    kj = k0 + f * (vw[j, _W_K1, c] - k0)
                    vw[j, _W_K, c] = kj
                    vw[j, _W_SAT, c] = _saturated_water(cw[_C_VAPP + V_PHI, c], cw[_C_VAPP + V_CAPA, c], kj, rs)
                    vw[j, _W_LIN, c] = vw[j, _W_W, c]
            for c in range(cb):
                cw[_C_DONE, c] = 0.0
            # Implicit step, Newton on the storage: solve the linearised system, estimate each
            # node's water from the fluxes (conservative), and solve again from that estimate
            # where a node changed branch (pore ice appeared or was used up) -- rare, so one
            # solve is the rule.
            lo, hi = 0, cb
            for it in range(VAPOUR_MAXIT):
                if it > 0:               # solve again only over the groups of _SOLVE_GROUP cells
                    lo, hi = cb, 0       # that hold a cell still without a solve to keep
                    for c in range(cb):
                        if cw[_C_DONE, c] == 0.0:
                            lo = min(lo, c)
                            hi = max(hi, c + 1)
                    lo = lo // _SOLVE_GROUP * _SOLVE_GROUP
                    hi = min(cb, -(-hi // _SOLVE_GROUP) * _SOLVE_GROUP)
                # (unsigned cell index: no negative-index wrap, which would turn the SIMD loops'
                # loads and stores into gathers and scatters)
                ulo, uhi = np.uint64(lo), np.uint64(hi)
                # forward: each node's storage at its iterate, its row (solver row j + 1) and
                # the elimination of that row (Thomas algorithm, SIMD over cells); the row's
                # lower diagonal is -G[j], its upper -G[j + 1] (row 1: diagonal with g0v)
                for c in range(ulo, uhi):
                    wl_ = vw[0, _W_LIN, c]
                    ws_ = vw[0, _W_SAT, c]
                    x, ic, cap = _partition(wl_, cw[_C_VAPP + V_PHI, c], cw[_C_VAPP + V_CAPA, c],
                                            vw[0, _W_K, c], ws_)
                    cvdt = vw[0, _W_CVDT, c]
                    g0 = vw[0, _R_G, c]
                    g1 = vw[1, _R_G, c]
                    bb = cap * cvdt + (cw[_C_G0V, c] + g1)
                    dd = cap * cvdt * x - (wl_ - vw[0, _W_W, c]) * cvdt
                    vw[0, _W_ICE, c] = 1.0 if wl_ > ws_ else 0.0
                    m = 1.0 / (bb + g0 * vw[0, _R_CP, c])
                    vw[1, _R_CP, c] = -g1 * m
                    vw[1, _R_DP, c] = (dd + g0 * vw[0, _R_DP, c]) * m
                for j in range(1, nvb):
                    for c in range(ulo, uhi):
                        wl_ = vw[j, _W_LIN, c]
                        ws_ = vw[j, _W_SAT, c]
                        x, ic, cap = _partition(wl_, cw[_C_VAPP + V_PHI, c], cw[_C_VAPP + V_CAPA, c],
                                                vw[j, _W_K, c], ws_)
                        cvdt = vw[j, _W_CVDT, c]
                        gj = vw[j, _R_G, c]
                        gj1 = vw[j + 1, _R_G, c]
                        bb = cap * cvdt + (gj + gj1)
                        dd = cap * cvdt * x - (wl_ - vw[j, _W_W, c]) * cvdt
                        vw[j, _W_ICE, c] = 1.0 if wl_ > ws_ else 0.0
                        m = 1.0 / (bb + gj * vw[j, _R_CP, c])
                        vw[j + 1, _R_CP, c] = -gj1 * m
                        vw[j + 1, _R_DP, c] = (dd + gj * vw[j, _R_DP, c]) * m
                # back substitution; node i's water from the fluxes of the solved field as soon
                # as rows i..i+2 are known (exactly conservative: each flux leaves one node and
                # enters the next); flag nodes that changed branch
                for c in range(ulo, uhi):
                    vw[nvb, _R_X, c] = vw[nvb, _R_DP, c]
                for i in range(nvb - 1, 0, -1):
                    for c in range(ulo, uhi):
                        xi1 = vw[i + 1, _R_X, c]
                        xi = vw[i, _R_DP, c] - vw[i, _R_CP, c] * xi1
                        vw[i, _R_X, c] = xi
                        fin = vw[i, _R_G, c] * (xi - xi1)
                        fout = vw[i + 1, _R_G, c] * (xi1 - vw[i + 2, _R_X, c])
                        we = vw[i, _W_W, c] + (fin - fout) * vw[i, _W_DTCV, c]
                        vw[i, _W_EST, c] = we
                        now_ice = 1.0 if we > vw[i, _W_SAT, c] else 0.0
                        vw[i, _W_BAD, c] = 1.0 if (now_ice != vw[i, _W_ICE, c]) | (we < 0.0) else 0.0
                for c in range(ulo, uhi):                  # the air and node 0
                    x1 = vw[1, _R_X, c]
                    xa = vw[0, _R_DP, c] - vw[0, _R_CP, c] * x1
                    vw[0, _R_X, c] = xa
                    fs = vw[0, _R_G, c] * xa - cw[_C_G0V, c] * x1
                    cw[_C_FS, c] = fs
                    we = vw[0, _W_W, c] + (fs - vw[1, _R_G, c] * (x1 - vw[2, _R_X, c])) * vw[0, _W_DTCV, c]
                    vw[0, _W_EST, c] = we
                    now_ice = 1.0 if we > vw[0, _W_SAT, c] else 0.0
                    vw[0, _W_BAD, c] = 1.0 if (now_ice != vw[0, _W_ICE, c]) | (we < 0.0) else 0.0
                for c in range(ulo, uhi):
                    cw[_C_BAD, c] = 0.0
                for j in range(nvb):
                    for c in range(ulo, uhi):
                        cw[_C_BAD, c] += vw[j, _W_BAD, c]
                # per cell: keep this solve where no node changed branch (or at the last
                # attempt); a cell's result never depends on its block-mates
                last = it == VAPOUR_MAXIT - 1
                again = 0.0
                for c in range(ulo, uhi):
                    done = cw[_C_DONE, c]
                    take = (done == 0.0) & ((cw[_C_BAD, c] == 0.0) | last)
                    cw[_C_TAKE, c] = 1.0 if take else 0.0
                    done = 1.0 if take else done
                    cw[_C_DONE, c] = done
                    again += 1.0 - done
                    f_new, f_old = cw[_C_FS, c], cw[_C_FSKEEP, c]
                    x_new, x_old = vw[0, _R_X, c], cw[_C_XAKEEP, c]
                    cw[_C_FSKEEP, c] = f_new if take else f_old
                    cw[_C_XAKEEP, c] = x_new if take else x_old
                if (it == 0) & (again == 0.0):           # the rule: every cell took the first
                    for j in range(nvb):
                        for c in range(cb):
                            vw[j, _W_W, c] = vw[j, _W_EST, c]
                    break
                for j in range(nvb):                     # keep and iterate (SIMD selects)
                    for c in range(ulo, uhi):
                        w_new = vw[j, _W_EST, c]
                        w_old = vw[j, _W_KEEP, c]
                        vw[j, _W_LIN, c] = max(w_new, 0.0)
                        vw[j, _W_KEEP, c] = w_new if cw[_C_TAKE, c] > 0.0 else w_old
                if again == 0.0:
                    for j in range(nvb):
                        for c in range(cb):
                            vw[j, _W_W, c] = vw[j, _W_KEEP, c]
                    break
            # conservative updates: the air from the kept solve's fluxes; fog
            for c in range(cb):
                xa = cw[_C_XAKEEP, c]
                fs = cw[_C_FSKEEP, c]
                cw[_C_FS, c] = fs
                ftop = cw[_C_WTOP, c] * (cw[_C_RFREE, c] - xa)     # free atmosphere -> air
                hb = cw[_C_ATM + A_DEPTH, c]
                ra = cw[_C_RA0, c] + dt * (ftop - fs) / hb
                rsa, _k = _paired_lookup(cw[_C_ATM + A_TAIR, c], tabp)
                # air supersaturated (ice) at the sensor's temperature: the excess settles
                fog = (ra - rsa) * hb if ra > rsa else 0.0
                cw[_C_FOG, c] = fog
                cw[_C_ATM + A_RHO_AIR, c] = ra - fog / hb
                vw[0, _W_W, c] = vw[0, _W_W, c] + fog / vw[0, _W_CV, c]
                cw[_C_XCH, c] = cw[_C_XCH, c] + dt * ftop
            # Positivity (never seen at an allowed step; kept as a guard): a node whose kept
            # solve left it negative borrows the deficit from the node above it, node 0 from
            # the air -- a local correction of the fluxes that keeps total water exact.
            neg = 0.0
            for j in range(nvb):
                for c in range(cb):
                    neg += 1.0 if vw[j, _W_W, c] < 0.0 else 0.0
            if neg > 0.0:
                for c in range(cb):
                    for j in range(nvb - 1, 0, -1):
                        wj = vw[j, _W_W, c]
                        if wj < 0.0:
                            vw[j - 1, _W_W, c] += wj * vw[j, _W_CV, c] / vw[j - 1, _W_CV, c]
                            vw[j, _W_W, c] = 0.0
                    w0 = vw[0, _W_W, c]
                    if w0 < 0.0:
                        cw[_C_ATM + A_RHO_AIR, c] += w0 * vw[0, _W_CV, c] / cw[_C_ATM + A_DEPTH, c]
                        vw[0, _W_W, c] = 0.0
            # ---- outputs: air, surface node, salt depth ---------------------------------
            for c in range(cb):          # the salt's nodes (gathers)
                i = pidx[c]
                cw[_C_PTI, c] = tw[i, _T_T, c]
                cw[_C_PTJ, c] = tw[i + 1, _T_T, c]
                cw[_C_PWI, c] = vw[i, _W_W, c]
                cw[_C_PWJ, c] = vw[i + 1, _W_W, c]
                cw[_C_PSI, c] = vw[i, _W_SAT, c]
                cw[_C_PKI, c] = vw[i, _W_K, c]
                cw[_C_PSJ, c] = vw[i + 1, _W_SAT, c]
                cw[_C_PKJ, c] = vw[i + 1, _W_K, c]
            for c in range(cb):
                phi = cw[_C_VAPP + V_PHI, c]
                capa = cw[_C_VAPP + V_CAPA, c]
                ts_ = tw[0, _T_T, c]
                x0, i0, c0 = _partition(vw[0, _W_W, c], phi, capa, vw[0, _W_K, c], vw[0, _W_SAT, c])
                es = _vapour_pressure(x0, ts_)
                w = cw[_C_PW, c]
                xi, ii, ci = _partition(cw[_C_PWI, c], phi, capa, cw[_C_PKI, c], cw[_C_PSI, c])
                xj, ij, cj = _partition(cw[_C_PWJ, c], phi, capa, cw[_C_PKJ, c], cw[_C_PSJ, c])
                tp = (1.0 - w) * cw[_C_PTI, c] + w * cw[_C_PTJ, c]
                # between nodes the relative saturation is interpolated (saturation is convex in
                # T: interpolating the density itself would put air above saturation between two
                # saturated nodes)
                rsi, _ki = _paired_lookup(cw[_C_PTI, c], tabp)
                rsj, _kj = _paired_lookup(cw[_C_PTJ, c], tabp)
                rsp, _kp = _paired_lookup(tp, tabp)
                ep = _vapour_pressure(((1.0 - w) * xi / rsi + w * xj / rsj) * rsp, tp)
                # a surface salt (node 0, weight 0) sees the surface node's numbers bit for bit
                # (the general form equals them up to the order of rounding)
                surf = cw[_C_SURF, c] > 0.0
                tp = ts_ if surf else tp
                ep = es if surf else ep
                ta = cw[_C_ATM + A_TAIR, c]
                cw[_C_OUT + O_TS, c] = ts_
                cw[_C_OUT + O_TPROBE, c] = tp
                cw[_C_OUT + O_CO2, c] = cw[_C_CO2, c]
                cw[_C_OUT + O_FROST, c] = i0 * vw[0, _W_CV, c]
                cw[_C_OUT + O_ESURF, c] = es
                cw[_C_OUT + O_ESALT, c] = ep
                cw[_C_OUT + O_H, c] = cw[_C_HFLUX, c]
                cw[_C_OUT + O_LDOWN, c] = cw[_C_LDW, c]
                cw[_C_OUT + O_TAIR, c] = ta
                cw[_C_OUT + O_EAIR, c] = cw[_C_ATM + A_RHO_AIR, c] * R_VAPOUR * ta
                cw[_C_OUT + O_FATM, c] = cw[_C_XCH, c]
                cw[_C_OUT + O_FSURF, c] = dt * cw[_C_FS, c] + cw[_C_FOG, c]
                cw[_C_OUT + O_G, c] = cw[_C_GNET, c]
                cw[_C_OUT + O_EFREE, c] = cw[_C_ATM + A_QFREE, c] * cw[_C_IN + IN_PRESSURE, c] / eps_w
            for k in range(n_out):       # (unsigned column: no negative-index wrap, plain stores)
                for c in range(cmax):
                    out[k, s, ou + np.uint64(c)] = cw[_C_OUT + k, c]
        # ---- the block out: state ------------------------------------------------------
        for j in range(nn):
            for c in range(cb):
                temp[b, j, c] = tw[j, _T_T, c]
        for j in range(nv):
            for c in range(cb):
                water[b, j, c] = vw[j, _W_W, c]
        for k in range(N_ATM):
            for c in range(cb):
                atm[b, k, c] = cw[_C_ATM + k, c]
        for c in range(cb):
            co2[b, c] = cw[_C_CO2, c]


# --------------------------------------------------------------------------------------
# Parameters, state and the block call
# --------------------------------------------------------------------------------------
@dataclass(frozen=True)
class ColumnState:
    """State between blocks, arrays over cells.

    Attributes
    ----------
    temperature : [node, cell] [K]       ground temperature profile
    co2_frost : [cell] [kg m-2]
    atmosphere_temperature : [cell] [K]  the grey atmosphere layer T_atm
    air_temperature : [cell] [K]         air at the sensor height
    air_vapour_density : [cell] [kg m-3] vapour in the near-surface air layer
    air_layer_depth : [cell] [m]
    sensible_heat_flux : [cell] [W m-2]  of the last step (convective velocity)
    regolith_water : [nv, cell] [kg m-3] total water per bulk volume at the vapour nodes
    air_temperature_mean : [cell] [K]    running mean of the air temperature over a sol
    free_mixing_ratio : [cell] [kg kg-1] of the free atmosphere, renewed at each sol's start
    """

    temperature: np.ndarray
    co2_frost: np.ndarray
    atmosphere_temperature: np.ndarray
    air_temperature: np.ndarray
    air_vapour_density: np.ndarray
    air_layer_depth: np.ndarray
    sensible_heat_flux: np.ndarray
    regolith_water: np.ndarray
    air_temperature_mean: np.ndarray
    free_mixing_ratio: np.ndarray

    def copy(self):
        return ColumnState(*(np.array(getattr(self, f.name), copy=True) for f in self.__dataclass_fields__.values()))

    def total_water(self, model):
        """Water held in the column per cell [kg m-2]: air layer + pores + adsorbate + ice."""
        return self.air_vapour_density * self.air_layer_depth + np.sum(
            self.regolith_water * model.control_volume, axis=0)


@dataclass(frozen=True)
class WaterSettings:
    """Settings of the near-surface air and the regolith water (SI units), with their sources.

    * ``wind_m_s`` 3 m s-1 at the sensor height: Viking Lander 1's mean of its first 20 sols,
      2.4 m s-1, and "a few m s-1" at both landers (Hess et al. 1976, 1977, read).
    * ``roughness_m`` 1 cm, likely ~1 cm at Viking Lander 2 (Tillman et al. 1994, read);
      ``thermal_roughness_m`` equal (common practice).
    * ``sensor_height_m`` 1.6 m: the Viking and Curiosity sensors.
    * ``air_layer_m`` 120 m while the ground is warmer than the air (day), ``air_layer_night_m``
      20 m while it is colder (night), ``air_relaxation_s`` 2 h and ``air_relaxation_night_s``
      30 h: the one-node air layer.  By day the ground heats a deep convective layer, at night
      only a shallow stable one cools against the ground; the four values were chosen by this
      project by comparing the model's 1.6-m air temperature ranges, Viking 1's noon sensible
      heat flux and Gale's night humidity with published lander records
      (``scripts/validate_mars.py`` shows each).  The node's budget fixes the sensible heat,
      ``H ~ rho c_p air_layer_m (dT_a/dt + (T_a - mean T_a) / tau)``: ~8 W m-2 at Viking 1's noon
      with a ground-air difference of ~21 K, against the 15-20 W m-2 and 20-30 K Sutton, Leovy &
      Tillman (1978, read) derived (a 50-m layer for day and night, with the earlier sunlight
      and sky infrared, gave 3.5 W m-2 at 12 K).
    * ``day_layer_m`` 4 km: Gale's well-mixed daytime layer (Savijarvi et al. 2015, read; 4-6 km
      over low terrain, Hinson et al. 2008, read); ``night_layer_m`` 200 m: the depleted night
      layer at Phoenix (Savijarvi et al. 2020, read).
    * ``growth_time_s`` 3 h (the day layer reached by late morning), ``mixing_time_s`` 1 h
      (convective turnover of the day layer) and ``stable_mixing_time_s`` 10 sols (slow exchange
      of a stable layer with the air above): order-of-magnitude choices of this project.
    * ``dust_omega`` 0.93 and ``dust_asymmetry`` 0.68 (the dust in sunlight): see
      :mod:`~wetcycle.forcing.scattering`; ``cp_air``, ``co2_emissivity_610`` (set from the
      forcing options): see :mod:`~wetcycle.forcing.atmosphere`.
    * ``co2_band_air_share`` 0.5: the CO2 band of the sky's infrared is emitted at
      ``<T_a> + 0.5 (T_a - <T_a>)``, the sensor-height air's sol mean plus half its departure
      from it: the band's emission comes from the lowest few hundred metres, where the diurnal
      swing of the air temperature is about half that at 1.6 m (order of magnitude of published
      1-D boundary-layer models, e.g. Savijarvi's, from memory; this project's choice).  With
      1 (the 1.6-m air itself) Gale's noon sky infrared came out ~53 W m-2 and its noon ground
      within a kelvin of the rover's in southern autumn but 13-20 K above it in spring and
      summer.
    * ``tortuosity`` 2 (1.5-3 measured in Mars soil simulants, Hudson et al. 2007, from memory),
      ``pore_radius_m`` 5 um (fine-grained regolith, from memory); together with porosity 0.35
      they give 1.3 cm2 s-1, within the 1.74 +- 0.70 measured for JSC Mars-1 (Chevrier et al.
      2007, read).
    * ``langmuir_k_ref_pa`` 0.2 Pa-1 at ``langmuir_t_ref_k`` 200 K: tuned by this project so that
      Gale's night relative humidity and Phoenix's night vapour and frost onset match (see the
      README comparison); ``adsorption_heat_j_mol`` 56 kJ mol-1 from a Langmuir fit to Phoenix
      humidity data (Conner, Farris & Chevrier 2015, LPSC, read).  The coverage the pair
      implies (~1 % at 200 K and 0.05 Pa) is below that fit's 15 %: the two are not reconciled.
    * ``vapour_depth_m`` 0.3 m: several times the depth adsorbed water exchanges with the air
      over a year (~5 cm for an effective diffusivity of ~3e-11 m2 s-1, Chevrier et al. 2007
      range, read).
    The remaining fields are set by :func:`wetcycle.forcing.driver.prepare_forcing`.
    """

    wind_m_s: float = 3.0
    roughness_m: float = 0.01
    thermal_roughness_m: float = 0.01
    sensor_height_m: float = 1.6
    air_layer_m: float = 120.0
    air_layer_night_m: float = 20.0
    air_relaxation_s: float = 2.0 * 3600.0
    air_relaxation_night_s: float = 30.0 * 3600.0
    sol_s: float = 88775.244
    steps_per_sol: int = 96
    lapse_rate_k_m: float = 2.5e-3
    constant_mixing_ratio: float = -1.0
    day_layer_m: float = 4000.0
    night_layer_m: float = 200.0
    growth_time_s: float = 3.0 * 3600.0
    mixing_time_s: float = 3600.0
    stable_mixing_time_s: float = 10.0 * 88775.244
    dust_omega: float = DUST_SOLAR_SINGLE_SCATTERING_ALBEDO
    dust_asymmetry: float = DUST_SOLAR_ASYMMETRY
    co2_emissivity_610: float = CO2_EMISSIVITY_610PA
    co2_band_air_share: float = 0.5
    cp_air: float = CP_AIR_MARS
    tortuosity: float = 2.0
    pore_radius_m: float = 5e-6
    langmuir_k_ref_pa: float = 0.2
    langmuir_t_ref_k: float = 200.0
    adsorption_heat_j_mol: float = 56000.0
    vapour_depth_m: float = 0.3


@dataclass(frozen=True)
class ColumnModel:
    """Everything fixed for a chunk (build with :func:`prepare_column`)."""

    energy: object                 # energy.EnergyModel (columns, factors, radiative constants)
    settings: WaterSettings
    porosity: np.ndarray           # [cell]
    capacity: np.ndarray           # [cell] monolayer capacity [kg m-3]
    n_vapour: int
    control_volume: np.ndarray     # [nv, cell] [m]
    next_distance: np.ndarray      # [nv, cell] [m]
    gravity: float
    r_air: float
    _blocked: dict = field(default_factory=dict, init=False, repr=False, compare=False)

    @property
    def n_cells(self):
        return self.porosity.size


def prepare_column(energy_model, settings, porosity, *, gravity, molar_mass_air, monolayer_kg_m3):
    """Validate the water settings and precompute the vapour grid.

    Parameters
    ----------
    energy_model : energy.EnergyModel
        Ground columns, conduction factors, radiative constants and the salt depth.
    settings : WaterSettings
    porosity : array [cell] [-], 0.01-0.9
    gravity : float [m s-2]
    molar_mass_air : float [kg mol-1]
    monolayer_kg_m3 : array [cell] [kg m-3], 0-200
        Water held by a full adsorbed monolayer per bulk volume (Langmuir capacity A).

    Returns
    -------
    ColumnModel
    """
    s = settings
    checks = (("wind_speed", s.wind_m_s, 0.1, 50.0), ("roughness_length", s.roughness_m, 1e-5, 0.5),
              ("thermal_roughness_length", s.thermal_roughness_m, 1e-7, 0.5),
              ("sensor_height", s.sensor_height_m, 0.5, 100.0), ("air_layer_depth", s.air_layer_m, 0.1, 1000.0),
              ("air_layer_depth_night", s.air_layer_night_m, 0.1, 1000.0),
              ("air_relaxation_time", s.air_relaxation_s, 60.0, 1e7),
              ("air_relaxation_time_night", s.air_relaxation_night_s, 60.0, 1e7),
              ("sol", s.sol_s, 3600.0, 1e6),
              ("day_layer_depth", s.day_layer_m, 10.0, 20000.0), ("night_layer_depth", s.night_layer_m, 1.0, 5000.0),
              ("layer_growth_time", s.growth_time_s, 60.0, 1e6), ("mixing_time", s.mixing_time_s, 60.0, 1e7),
              ("stable_mixing_time", s.stable_mixing_time_s, 60.0, 1e9),
              ("dust_single_scattering_albedo", s.dust_omega, 0.0, 0.999),
              ("dust_asymmetry", s.dust_asymmetry, 0.0, 0.99), ("co2_band_air_share", s.co2_band_air_share, 0.0, 1.0), ("tortuosity", s.tortuosity, 1.0, 10.0),
              ("pore_radius", s.pore_radius_m, 1e-8, 1e-3),
              ("langmuir_constant", s.langmuir_k_ref_pa, 1e-6, 1e6),
              ("langmuir_reference_temperature", s.langmuir_t_ref_k, 100.0, 350.0),
              ("adsorption_heat", s.adsorption_heat_j_mol, 0.0, 1.5e5), ("water_column_depth", s.vapour_depth_m, 0.01, 10.0))
    for name, v, lo, hi in checks:
        if not (np.isfinite(v) and lo <= v <= hi):
            raise ConfigError(f"forcing.{name}: {v!r} not allowed; allowed {lo:g} to {hi:g}")
    if s.roughness_m >= s.sensor_height_m or s.thermal_roughness_m >= s.sensor_height_m:
        raise ConfigError(f"forcing.roughness_length: {s.roughness_m!r} m must lie below the sensor height "
                          f"{s.sensor_height_m!r} m")
    if s.night_layer_m > s.day_layer_m:
        raise ConfigError(f"forcing.night_layer_depth: {s.night_layer_m!r} m must not exceed day_layer_depth "
                          f"{s.day_layer_m!r} m")
    cols = energy_model.columns
    n = cols.n_cells
    phi = _cellarray("porosity", porosity, n, 0.01, 0.9)
    cap = _cellarray("adsorption_capacity", monolayer_kg_m3, n, 0.0, 200.0)
    depth = cols.depth
    # vapour nodes: each cell's top nodes of its thermal grid down to vapour_depth (at least 3);
    # the chunk's arrays hold the deepest cell's count, and below a cell's own last node the
    # nodes are cut off (infinite distance: no flux), so a cell's numbers never depend on the
    # other cells of its chunk
    nvc = np.clip(np.sum(depth <= s.vapour_depth_m, axis=0) + 1, 3, cols.n_nodes)
    # a salt below water_column_depth extends its cell's column two nodes past the salt
    nvc = np.minimum(np.maximum(nvc, energy_model.probe_index + 3), cols.n_nodes)
    nv = int(nvc.max())
    dz = np.diff(depth, axis=0)
    cvol = np.empty((nv, n))
    cvol[0] = 0.5 * dz[0]
    for j in range(1, nv):
        below = dz[j] if j < cols.n_nodes - 1 else 0.0
        cvol[j] = 0.5 * (dz[j - 1] + np.where(j < nvc - 1, below, 0.0))
    nxt = np.full((nv, n), np.inf)
    for j in range(nv - 1):
        nxt[j] = np.where(j < nvc - 1, dz[j], np.inf)
    return ColumnModel(energy_model, s, phi, cap, nv, np.ascontiguousarray(cvol), np.ascontiguousarray(nxt),
                       float(gravity), float(R_GAS / molar_mass_air))


def _par(model):
    s, em = model.settings, model.energy
    par = np.empty(N_PAR)
    par[P_DT] = em.factors.dt
    par[P_THETA] = em.factors.theta
    (par[P_DE_W], par[P_DE_G], par[P_DE_S], par[P_DE_G1], par[P_DE_G2],
     par[P_DE_K]) = layer_constants(s.dust_omega, s.dust_asymmetry)
    par[P_ECO2] = s.co2_emissivity_610
    par[P_WCO2] = s.co2_band_air_share
    par[P_CP] = s.cp_air
    par[P_RAIR] = model.r_air
    par[P_G] = model.gravity
    par[P_HAIR] = s.air_layer_m
    par[P_HAIRN] = s.air_layer_night_m
    par[P_TAUAIR] = s.air_relaxation_s
    par[P_TAUNIGHT] = s.air_relaxation_night_s
    par[P_SOL] = s.sol_s
    par[P_QCONST] = s.constant_mixing_ratio
    par[P_LAPSE] = s.lapse_rate_k_m
    par[P_EPSW] = 0.018015268 * model.r_air / R_GAS
    par[P_SPD] = s.steps_per_sol
    par[P_HDAY] = s.day_layer_m
    par[P_HNIGHT] = s.night_layer_m
    par[P_TGROW] = s.growth_time_s
    par[P_TMIX] = s.mixing_time_s
    par[P_TMIXST] = s.stable_mixing_time_s
    par[P_ZREF] = s.sensor_height_m
    par[P_FROST_SLOPE] = em.frost_albedo_slope
    par[P_FROST_AMAX] = em.frost_albedo_max
    return par


def _block_width(n_cells):
    """Cells per kernel block for a chunk of ``n_cells`` (see :data:`COLUMN_BLOCK`)."""
    return CELL_BLOCK if n_cells <= CELL_BLOCK else COLUMN_BLOCK


def _cell_order(nodes, cb):
    """The order in which the kernel takes a chunk's cells, or None for their own order.

    A block of the kernel solves the water column down to its deepest cell's last node
    (``V_NODES``), so a block that mixes shallow and deep columns does the deep cells' work
    for all of them.  Cells sorted by their number of vapour nodes (stable: ties keep their
    order) fill blocks with like columns; taken only where that saves node rows.  A cell's
    numbers never depend on its block-mates (see the kernel), so the order changes no
    result, only the time."""
    nodes = np.asarray(nodes)
    order = np.argsort(nodes, kind="stable")

    def rows(v):                     # node rows solved, summed over blocks
        nb = -(-v.size // cb)
        v = np.concatenate([v, np.repeat(v[-1:], nb * cb - v.size)])
        return int(v.reshape(nb, cb).max(axis=1).sum())

    return order if rows(nodes[order]) < rows(nodes) else None


def _kernel_blocks(x, order, cb):
    """A chunk's ``[..., cell]`` array in the kernel's blocks, cells in the kernel's order."""
    return to_blocks(x if order is None else x[..., order], cb)


@njit(cache=True, boundscheck=False, nogil=True)
def _fill_steps(stepin, row, x, cell):
    """``stepin[b, s, row, c] = x[s, cell[b, c]]``: a per-step input ``[step, cell]`` in the
    kernel's blocks, cells in the kernel's order (``cell``: each slot's cell, padding
    included)."""
    nb, ns, _, cb = stepin.shape
    for s in range(ns):              # (a step's row of x stays in cache)
        for b in range(nb):
            for c in range(cb):
                stepin[b, s, row, c] = x[s, cell[b, c]]


@njit(cache=True, boundscheck=False, nogil=True)
def _to_cell_order(out, slot):
    """Put ``out`` ``[row, step, slot]`` (the kernel's cell order) back in the chunk's order,
    in place, a row of a step at a time (``slot[cell]``: the cell's slot)."""
    nk, ns, nc = out.shape
    tmp = np.empty(nc)
    for k in range(nk):
        for s in range(ns):
            for c in range(nc):
                tmp[c] = out[k, s, slot[c]]
            for c in range(nc):
                out[k, s, c] = tmp[c]


def _blocked(model):
    cached = model._blocked
    if cached:
        return cached
    from .energy import _blocked_constants
    em = model.energy
    k = _blocked_constants(em)
    s = model.settings
    n = model.n_cells
    vapp = np.empty((N_VAP, n))
    vapp[V_PHI] = model.porosity
    vapp[V_PHI_TAU] = model.porosity / s.tortuosity
    vapp[V_PORE] = s.pore_radius_m
    vapp[V_CAPA] = model.capacity
    cn = neutral_coefficient(s.sensor_height_m, s.roughness_m, s.thermal_roughness_m)
    vapp[V_CN] = cn
    vapp[V_LOUIS] = unstable_constant(s.sensor_height_m, s.roughness_m, s.thermal_roughness_m)
    vapp[V_WIND] = s.wind_m_s
    vapp[V_NODES] = np.sum(np.isfinite(model.next_distance), axis=0) + 1
    cb = _block_width(n)
    order = _cell_order(vapp[V_NODES], cb)
    cached["order"] = order
    # each slot's cell (the padding repeats the last slot's), and with an order each cell's slot
    cached["cell"] = to_blocks((np.arange(n) if order is None else order).astype(float), cb).astype(np.int64)
    if order is not None:
        cached["slot"] = np.argsort(order)

    def blocks(x):
        return _kernel_blocks(x, order, cb)

    def reblock(x):                  # the energy model's constants, re-blocked
        return blocks(from_blocks(x, n))

    cached["cellp"] = reblock(k["cellp"])
    cached["factors"] = tuple(reblock(x) for x in k["factors"])
    cached["probe_idx"] = reblock(k["probe_idx"]).astype(np.int64)
    cached["probe_w"] = reblock(k["probe_w"])
    cached["vapp"] = blocks(vapp)
    cached["cv"] = blocks(model.control_volume)
    with np.errstate(divide="ignore"):
        cached["idzn"] = blocks(1.0 / model.next_distance)     # 0 below a cell's last node
    cached["par"] = _par(model)
    cached["tables"] = _paired_tables(water_tables(s.langmuir_k_ref_pa, s.adsorption_heat_j_mol / R_GAS,
                                                   s.langmuir_t_ref_k))
    return cached


#: Pore ice below an ice table at the start of a run: this fraction of the pore volume filled
#: with ice of density 917 kg m-3 (ice-cemented ground; common practice for a fresh start).
ICE_TABLE_FILL = 0.9
ICE_DENSITY = 917.0


def initial_state(model, temperature, free_mixing_ratio, pressure, ice_table_depth=None):
    """A first-guess state: isothermal ground at ``temperature`` [K] (array over cells), air at
    that temperature and ``pressure`` [Pa] holding the free atmosphere's ``free_mixing_ratio``
    [kg kg-1], pores in equilibrium with it
    (capped at ice saturation), no frost, a night-time air layer; below ``ice_table_depth``
    [m] (array over cells, inf for none) the pores are :data:`ICE_TABLE_FILL` full of ice."""
    from .regolith_vapour import water_content
    em = model.energy
    n = model.n_cells
    t = np.broadcast_to(np.asarray(temperature, dtype=float), (n,)).copy()
    prof = np.ascontiguousarray(np.broadcast_to(t, (em.columns.n_nodes, n))).copy()
    q0 = np.broadcast_to(np.asarray(free_mixing_ratio, dtype=float), (n,)).copy()
    rho = q0 * np.broadcast_to(np.asarray(pressure, dtype=float), (n,)) / (model.r_air * t)
    rsat = np.interp(t, TABLE_T, RHO_SAT_TABLE)
    rv = np.minimum(rho, rsat)
    s = model.settings
    w = water_content(rv, t, model.porosity, model.capacity, s.langmuir_k_ref_pa,
                      s.adsorption_heat_j_mol / R_GAS, s.langmuir_t_ref_k)
    water = np.ascontiguousarray(np.broadcast_to(w, (model.n_vapour, n))).copy()
    if ice_table_depth is not None:
        depth = em.columns.depth[:model.n_vapour]
        zi = np.broadcast_to(np.asarray(ice_table_depth, dtype=float), (n,))
        below = depth >= zi[None, :]
        wsat = water_content(rsat, t, model.porosity, model.capacity, s.langmuir_k_ref_pa,
                             s.adsorption_heat_j_mol / R_GAS, s.langmuir_t_ref_k)
        water = np.where(below, (wsat + ICE_TABLE_FILL * model.porosity * ICE_DENSITY)[None, :], water)
    return ColumnState(prof, np.zeros(n), t.copy(), t.copy(), rv.copy(),
                       np.full(n, s.night_layer_m), np.zeros(n), np.ascontiguousarray(water), t.copy(), q0)


def column_block(model, state, declination_rad, distance_au, hour_angle0_rad, tau, pressure,
                 emissivity_atm, water_column, frost_point, step0=0):
    """Advance the coupled column over a block of steps (numba kernel).

    Parameters
    ----------
    model : ColumnModel
    state : ColumnState      at the start of the block (not modified)
    declination_rad, distance_au, hour_angle0_rad : array [step]
        Solar declination [rad], distance [AU], hour angle at east longitude 0 at mid-step.
    tau, pressure, emissivity_atm, water_column, frost_point : array [step, cell]
        Dust optical depth [-], surface pressure [Pa], infrared emissivity of the
        atmosphere [-], atmospheric water column [kg m-2] (ignored with a constant mixing
        ratio supply, ``WaterSettings.constant_mixing_ratio``), CO2 frost point [K]
        (negative where CO2 frost is off).
    step0 : int
        Index of the block's first step in the run's clock (sol starts renew the free
        atmosphere's mixing ratio).

    Returns
    -------
    state : ColumnState      at the end of the block
    out : dict of ndarray [step, cell], keys and units in :data:`OUTPUT_UNITS`
    """
    dec = np.ascontiguousarray(declination_rad, dtype=float)
    ns, nc = dec.size, model.n_cells
    flux = np.ascontiguousarray(top_of_atmosphere_flux(distance_au) * np.ones(ns))
    h0 = np.asarray(hour_angle0_rad, dtype=float) * np.ones(ns)
    cb = _block_width(nc)
    ncp = -(-nc // cb) * cb
    stepin = np.empty((ncp // cb, ns, N_IN, cb))
    k = _blocked(model)
    order = k["order"]               # the kernel's cell order (None: the chunk's own)
    for row, x in ((IN_TAU, tau), (IN_FROST_POINT, frost_point), (IN_EPS_ATM, emissivity_atm),
                   (IN_COLUMN, water_column), (IN_PRESSURE, pressure)):
        # one pass: the kernel's cell order and the padding together
        xs = np.broadcast_to(np.asarray(x, dtype=float), (ns, nc))
        _fill_steps(stepin, row, np.ascontiguousarray(xs), k["cell"])

    def blocks(x):
        return _kernel_blocks(x, order, cb)

    def unblocks(xb):
        x = from_blocks(xb, nc)
        if order is None:
            return x
        y = np.empty_like(x)
        y[..., order] = x
        return y

    temp = blocks(state.temperature)
    co2 = blocks(state.co2_frost)
    atm = blocks(np.stack([state.atmosphere_temperature, state.air_temperature,
                           state.air_vapour_density, state.air_layer_depth,
                           state.sensible_heat_flux, state.air_temperature_mean,
                           state.free_mixing_ratio]))
    water = blocks(state.regolith_water)
    out = np.zeros((len(OUTPUTS), ns, nc))
    column_kernel(temp, co2, atm, water, *k["factors"], k["cellp"], k["vapp"], k["cv"], k["idzn"],
                  k["par"], np.sin(dec), np.cos(dec), flux, np.sin(h0), np.cos(h0), stepin,
                  k["tables"], k["probe_idx"], k["probe_w"], int(step0), out)
    if order is not None:            # the outputs back in the chunk's cell order
        _to_cell_order(out, k["slot"])
    a = unblocks(atm)
    new = ColumnState(unblocks(temp), unblocks(co2), a[A_TATM], a[A_TAIR],
                      a[A_RHO_AIR], a[A_DEPTH], a[A_HFLUX], unblocks(water), a[A_TMEAN],
                      a[A_QFREE])
    return new, {name: out[i] for i, name in enumerate(OUTPUTS)}
