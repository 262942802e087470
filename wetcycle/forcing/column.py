"""The coupled column: ground heat, near-surface air, atmosphere and water, step by step.

One numba kernel advances, for a block of steps and a chunk of cells, every
process of the site column together, in this order within each step:

1. sunlight on the (sloped) ground and in the dusty atmosphere
   (:mod:`wetcycle.forcing.insolation`);
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
:mod:`wetcycle.forcing.regolith`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from numba import njit

from ..errors import ConfigError, ValidityError
from .atmosphere import CP_AIR_MARS, DUST_SINGLE_SCATTERING_ALBEDO
from .energy import (CO2_PRESSURE_RANGE, LATENT_HEAT_CO2, NEWTON_MAXIT, NEWTON_TOL,
                     STEFAN_BOLTZMANN, _cellarray, exp_neg)
from .insolation import top_of_atmosphere_flux
from .regolith import (CELL_BLOCK, factorize, from_blocks, probe_weights, sweep_down, sweep_up,
                       to_blocks)
from .regolith_vapour import (ICE_CAPACITY, R_GAS, R_VAPOUR, RHO_SAT_TABLE, TABLE_T,
                              effective_diffusivity, table_lookup, water_tables)
from .supply import PROFILE_LEVELS, free_mixing_ratio_kernel
from .surface_layer import LOUIS_B, LOUIS_C, LOUIS_D, neutral_coefficient

# ---- indices ------------------------------------------------------------------------
#: rows of the per-step input array ``[row, step, padded cell]``
IN_TAU, IN_FROST_POINT, IN_EPS_ATM, IN_COLUMN, IN_PRESSURE = range(5)
N_IN = 5
#: rows of the air/atmosphere state ``[block, row, cb]``
A_TATM, A_TAIR, A_RHO_AIR, A_DEPTH, A_HFLUX, A_TMEAN, A_QFREE = range(7)
N_ATM = 7
#: rows of the per-cell vapour and exchange parameters ``[block, row, cb]``
V_PHI, V_PHI_TAU, V_PORE, V_CAPA, V_CN, V_LOUIS, V_WIND = range(7)
N_VAP = 7
#: scalar parameters ``par[...]``
(P_DT, P_THETA, P_DIFFUSE, P_OMEGA, P_CP, P_RAIR, P_G, P_HAIR, P_TAUAIR, P_SOL, P_HDAY,
 P_HNIGHT, P_TGROW, P_TMIX, P_ZREF, P_TAUNIGHT, P_QCONST, P_LAPSE, P_EPSW, P_SPD, P_TMIXST) = range(21)
N_PAR = 21
#: rows of the output array ``[row, step, cell]``
OUTPUTS = ("surface_temperature", "salt_temperature", "co2_frost", "water_frost",
           "vapor_pressure", "surface_vapor_pressure", "air_temperature", "air_vapor_pressure",
           "sensible_heat_flux", "downwelling_longwave", "surface_water_flux",
           "atmosphere_exchange", "ground_heat_flux", "free_vapor_pressure")
(O_TS, O_TPROBE, O_CO2, O_FROST, O_ESALT, O_ESURF, O_TAIR, O_EAIR, O_H, O_LDOWN, O_FSURF,
 O_FATM, O_G, O_EFREE) = range(len(OUTPUTS))
#: Most solves of the water column per step (a new solve only where pore ice appeared or ran out).
VAPOUR_MAXIT = 4
#: units of the outputs
OUTPUT_UNITS = dict(zip(OUTPUTS, ("K", "K", "kg m-2", "kg m-2", "Pa", "Pa", "K", "Pa", "W m-2",
                                  "W m-2", "kg m-2", "kg m-2", "W m-2", "Pa")))


@njit(cache=True, fastmath=True, inline="always")
def _partition(w, phi, cap_a, k, rs):
    """Branch-free form of :func:`~wetcycle.forcing.regolith_vapour.partition` for SIMD loops:
    (rho_v, ice, capacity, w_sat); a transiently negative ``w`` gives ``rho_v = w / phi``."""
    ks = k * rs
    wsat = phi * rs + cap_a * ks / (1.0 + ks)
    wl = min(max(w, 0.0), wsat)
    bq = phi + cap_a * k - wl * k
    x = 2.0 * wl / (bq + math.sqrt(bq * bq + 4.0 * phi * k * wl))
    x = x if w > 0.0 else w / phi
    den = 1.0 + k * x
    cap = ICE_CAPACITY if w > wsat else phi + cap_a * k / (den * den)
    return x, max(w - wsat, 0.0), cap, wsat


@njit(cache=True, fastmath=True, boundscheck=False, error_model="numpy", nogil=True)
def column_kernel(temp, co2, atm, water, fa, fd, ff, fg, cellp, vapp, cv, dzn, par,
                  sin_dec, cos_dec, toa_flux, sin_h0, cos_h0, stepin, tab,
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
                                     unstable term, wind [m s-1]
    cv, dzn : [b, nv, c] [m]         control-volume thickness of each vapour node and the
                                     distance to the next node (inf: no flux below)
    par : [N_PAR]                    scalars, see the P_* indices
    sin_dec, cos_dec, toa_flux, sin_h0, cos_h0 : [step]
    stepin : [N_IN, step, b * c]     optical depth, CO2 frost point [K] (< 0: no CO2
                                     frost), infrared emissivity of the atmosphere,
                                     atmospheric water column [kg m-2], pressure [Pa]
    tab : [2, n]                     rho_sat and Langmuir k tables (regolith_vapour.water_tables)
    probe_idx, probe_w : [b, c]      node and weight of the salt depth
    step0 : int                      index in the run's clock of the block's first step: the
                                     free-atmosphere mixing ratio is renewed at each sol's start
                                     (from the column, the pressure and the sol-mean air
                                     temperature; supply.free_mixing_ratio_kernel), so results
                                     do not depend on how the run is cut into blocks
    out : [len(OUTPUTS), step, cell] filled with the outputs (values at step ends; the
                                     two water fluxes are amounts over the step [kg m-2])
    """
    nb, nn, cb = temp.shape
    nv = water.shape[1]
    ns = sin_dec.size
    nc = out.shape[2]
    sigma = STEFAN_BOLTZMANN
    lat_heat = LATENT_HEAT_CO2
    dt = par[P_DT]
    idt = 1.0 / dt
    theta = par[P_THETA]
    om = 1.0 - theta
    r = om / theta
    diffuse_fraction = par[P_DIFFUSE]
    omega = par[P_OMEGA]
    cp = par[P_CP]
    r_air = par[P_RAIR]
    g = par[P_G]
    h_air = par[P_HAIR]
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
    qs_ = np.empty(PROFILE_LEVELS)
    pz_ = np.empty(PROFILE_LEVELS)
    wk_ = np.empty(PROFILE_LEVELS)
    e = np.empty((nn, cb))
    wk = np.empty((24, cb))
    (sw, s_in, qq, rhs, r_f, hold, tn, t1o, tprobe, act, pp, cw, alpha, beta0, atmsw, ldw,
     epsv, wst, hflux, wtr, ra0, xch, adiag, arhs) = (
        wk[0], wk[1], wk[2], wk[3], wk[4], wk[5], wk[6], wk[7], wk[8], wk[9], wk[10], wk[11],
        wk[12], wk[13], wk[14], wk[15], wk[16], wk[17], wk[18], wk[19], wk[20], wk[21], wk[22],
        wk[23])
    conv = np.empty(cb)
    taur = np.empty(cb)
    gnet = np.empty(cb)
    wtop = np.empty(cb)
    rfree = np.empty(cb)
    g0v = np.empty(cb)
    fsv = np.empty(cb)
    fogv = np.empty(cb)
    nvx = nv + 1
    xsol = np.zeros((nvx + 1, cb))
    wold = np.empty((nv, cb))
    wlin = np.empty((nv, cb))
    west = np.empty((nv, cb))
    wsatv = np.empty((nv, cb))
    iced = np.empty((nv, cb))
    ma = np.zeros((nvx, cb))
    mb = np.empty((nvx, cb))
    mc = np.empty((nvx, cb))
    md = np.empty((nvx, cb))
    gcond = np.zeros((nvx, cb))
    wkeep = np.empty((nv, cb))
    fskeep = np.zeros(cb)
    xakeep = np.zeros(cb)
    takev = np.empty(cb)
    rsv = np.empty((nv, cb))
    kv = np.empty((nv, cb))
    cdone = np.empty(cb)
    bad = np.empty(cb)
    for b in range(nb):
        o = b * cb
        cmax = min(cb, nc - o)
        # the block's vapour nodes: below every one of its cells' own last node nothing moves
        # (no flux, see prepare_column), so the solve stops there -- exact, cell by cell
        nvb = 1
        for j in range(nv - 1):
            for c in range(cb):
                if dzn[b, j, c] < np.inf:
                    nvb = max(nvb, j + 2)
        nvxb = nvb + 1
        for s in range(ns):
            sd, cd, fl, sh0, ch0 = sin_dec[s], cos_dec[s], toa_flux[s], sin_h0[s], cos_h0[s]
            if (step0 + s) % spd == 0:       # a new sol: renew the free-atmosphere mixing ratio
                for c in range(cb):
                    if q_const >= 0.0:
                        atm[b, A_QFREE, c] = q_const
                    else:
                        tb = min(max(atm[b, A_TMEAN, c], 120.0), 300.0)
                        q0, zc = free_mixing_ratio_kernel(stepin[IN_COLUMN, s, o + c], stepin[IN_PRESSURE, s, o + c],
                                                          tb, lapse, g, r_air, eps_w, qs_, pz_, wk_)
                        atm[b, A_QFREE, c] = q0
            sweep_up(temp, e, fa, fd, ff, fg, r, b)
            for c in range(cb):        # convective velocity from the last step (scalar pow)
                hfl = atm[b, A_HFLUX, c]
                wst[c] = 0.0
                if hfl > 0.0:
                    ta = atm[b, A_TAIR, c]
                    rho = stepin[IN_PRESSURE, s, o + c] / (r_air * ta)
                    wst[c] = (g * atm[b, A_DEPTH, c] * hfl / (rho * cp * ta)) ** (1.0 / 3.0)
            for c in range(cb):        # geometry, radiation, turbulence, surface equation
                slat, clat = cellp[b, 0, c], cellp[b, 1, c]
                slon, clon = cellp[b, 2, c], cellp[b, 3, c]
                ch = ch0 * clon - sh0 * slon
                sh = sh0 * clon + ch0 * slon
                u = slat * sd + clat * cd * ch
                cosi = (-cd * sh * cellp[b, 4, c] + (clat * sd - slat * cd * ch) * cellp[b, 5, c]
                        + u * cellp[b, 6, c])
                tau = stepin[IN_TAU, s, o + c]
                tr = exp_neg(-tau / max(u, 1e-6))
                uu = max(u, 0.0)
                beam = fl * tr
                ext = fl * uu * (1.0 - tr)
                diff_h = diffuse_fraction * ext
                fr = co2[b, c] > 0.0
                alb = cellp[b, 11, c] if fr else cellp[b, 9, c]
                eps = cellp[b, 12, c] if fr else cellp[b, 10, c]
                epsv[c] = eps
                cs = cellp[b, 7, c]
                sww = (beam * max(cosi, 0.0)
                       + 0.5 * (diff_h * (1.0 + cs) + alb * (beam * uu + diff_h) * (1.0 - cs)))
                sww = sww if u > 0.0 else 0.0
                sw[c] = sww
                atmsw[c] = (1.0 - omega) * ext if u > 0.0 else 0.0
                tatm = atm[b, A_TATM, c]
                t4 = tatm * tatm
                ld = stepin[IN_EPS_ATM, s, o + c] * sigma * t4 * t4
                ldw[c] = ld
                s_abs = (1.0 - alb) * sww + eps * ld * cellp[b, 8, c]
                s_in[c] = s_abs
                # turbulent exchange with the air at the sensor height (surface_layer: Louis
                # stability, gustiness), implicit together with the air temperature
                t0 = temp[b, 0, c]
                ta = atm[b, A_TAIR, c]
                rho = stepin[IN_PRESSURE, s, o + c] / (r_air * ta)
                uw = vapp[b, V_WIND, c]
                ueff = math.sqrt(uw * uw + wst[c] * wst[c])
                ri = ri_coef * (ta - t0) / (0.5 * (ta + t0) * ueff * ueff)
                fst = 1.0 / (1.0 + 3.0 * LOUIS_B * ri * math.sqrt(1.0 + LOUIS_D * max(ri, 0.0)))
                fun = 1.0 - 3.0 * LOUIS_B * ri / (1.0 + vapp[b, V_LOUIS, c] * math.sqrt(max(-ri, 0.0)))
                w = vapp[b, V_CN, c] * (fst if ri >= 0.0 else fun) * ueff
                wtr[c] = w
                cwc = rho * cp * w
                cw[c] = cwc
                tau_a = tau_air if t0 > ta else tau_night
                dd = 1.0 + dt * w / h_air + dt / tau_a
                al = (dt * w / h_air) / dd
                b0 = (ta + dt * atm[b, A_TMEAN, c] / tau_a) / dd
                taur[c] = tau_a
                alpha[c] = al
                beta0[c] = b0
                q = theta * eps * sigma
                qq[c] = q
                t1 = temp[b, 1, c]
                g0 = fd[b, 0, c]
                pc = ff[b, 0, c] + cwc * theta * (1.0 - al)
                pp[c] = pc
                kk = (fa[b, 0, c] * t0 + s_abs - r * q * t0 * t0 * t0 * t0
                      - om * g0 * (t0 - t1) + theta * g0 * e[1, c]
                      - cwc * (om * t0 * (1.0 - al) - b0))
                tf = stepin[IN_FROST_POINT, s, o + c]
                ql = -lat_heat * co2[b, c] * idt             # all existing frost sublimes
                rf = pc * tf + q * tf * tf * tf * tf - kk    # residual held at T_f
                hold[c] = 1.0 if (rf > ql) & (tf > 0.0) else 0.0
                r_f[c] = rf
                rhs[c] = kk + ql
                tn[c] = max(t0, tf)
                t1o[c] = t1
            for c in range(cb):
                act[c] = 1.0
            for it in range(NEWTON_MAXIT):
                nact = 0.0
                for c in range(cb):
                    t = tn[c]
                    pc = pp[c]
                    t3 = t * t * t
                    d = (pc * t + qq[c] * t3 * t - rhs[c]) / (pc + 4.0 * qq[c] * t3)
                    a = act[c]
                    tn[c] = t - a * d
                    a = a * (1.0 if d * d >= NEWTON_TOL * NEWTON_TOL else 0.0)
                    act[c] = a
                    nact += a
                if nact == 0.0:
                    break
            for c in range(cb):          # new surface state, air and atmosphere temperatures
                hd = hold[c] > 0.0
                t0 = temp[b, 0, c]
                tf = stepin[IN_FROST_POINT, s, o + c]
                tnew = tf if hd else tn[c]
                m_old = co2[b, c]
                m_new = m_old + r_f[c] * dt / lat_heat if hd else 0.0
                co2[b, c] = m_new
                temp[b, 0, c] = tnew
                th = theta * tnew + om * t0
                hf = cw[c] * (th * (1.0 - alpha[c]) - beta0[c])
                hflux[c] = hf
                # net flux into the ground (theta-weighted emission, as the balance uses it)
                gnet[c] = (s_in[c] - qq[c] / theta * (theta * tnew ** 4 + om * t0 ** 4) - hf
                           + lat_heat * (m_new - m_old) * idt)
                ta_new = beta0[c] + alpha[c] * th
                p = stepin[IN_PRESSURE, s, o + c]
                rho = p / (r_air * atm[b, A_TAIR, c])
                tatm = atm[b, A_TATM, c]
                ea = stepin[IN_EPS_ATM, s, o + c]
                e_in = (ea * epsv[c] * sigma * tnew * tnew * tnew * tnew + atmsw[c]
                        + rho * cp * h_air * (ta_new - atm[b, A_TMEAN, c]) / taur[c])
                t3 = tatm * tatm * tatm
                tatm_new = tatm + dt * (e_in - 2.0 * ea * sigma * t3 * tatm) / (cp * p / g + dt * 8.0 * ea * sigma * t3)
                atm[b, A_TATM, c] = max(tatm_new, tf if tf > 0.0 else 100.0)
                atm[b, A_TAIR, c] = ta_new
                atm[b, A_HFLUX, c] = hf
                atm[b, A_TMEAN, c] += (ta_new - atm[b, A_TMEAN, c]) * fmean
            sweep_down(temp, e, ff, b)
            # ---- water: air layer depth, then the implicit solve for air + pores ----------
            for c in range(cb):
                p = stepin[IN_PRESSURE, s, o + c]
                ta = atm[b, A_TAIR, c]
                rf_ = atm[b, A_QFREE, c] * p / (r_air * ta)
                rfree[c] = rf_
                hb = atm[b, A_DEPTH, c]
                ra = atm[b, A_RHO_AIR, c]
                # a convective layer deepens once surface heating has eroded the night
                # inversion (the air at the sensor no colder than its sol-mean), and
                # collapses when the surface stops heating the air
                cv_ = (hflux[c] > 0.0) & (ta >= atm[b, A_TMEAN, c])
                conv[c] = 1.0 if cv_ else 0.0
                target = h_day if cv_ else (hb if hflux[c] > 0.0 else h_night)
                hn = min(target, hb + dt * h_day / t_grow)   # growth, limited in rate
                grow = target > hb
                hnew = hn if grow else target                  # or collapse at once
                # collapse returns the air above to the free atmosphere; growth entrains it
                x_ = (hnew - hb) * rf_ if grow else (hnew - hb) * ra
                ra = (hb * ra + x_) / hnew if grow else ra
                xch[c] = x_
                atm[b, A_DEPTH, c] = hnew
                # mixing with the air above: fast while convective, slow (large-scale eddies) in
                # a stable layer
                wt = hnew / t_mix if cv_ else hnew / t_mix_stable
                wtop[c] = wt
                ts_ = temp[b, 0, c]
                itbar = 2.0 / (ta + ts_)
                wv = wtr[c]
                ga = wv * ta * itbar
                g0v[c] = wv * ts_ * itbar
                adiag[c] = hnew * idt + wt + ga
                arhs[c] = hnew * idt * ra + wt * rf_
                gcond[0, c] = ga
                ra0[c] = ra
            for j in range(nvb - 1):                     # pore diffusion conductances
                for c in range(cb):
                    tm = 0.5 * (temp[b, j, c] + temp[b, j + 1, c])
                    gcond[j + 1, c] = effective_diffusivity(tm, stepin[IN_PRESSURE, s, o + c],
                                                            vapp[b, V_PHI_TAU, c],
                                                            vapp[b, V_PORE, c]) / dzn[b, j, c]
            for c in range(cb):                          # below the block's last node: no flux
                gcond[nvb, c] = 0.0
            # saturation and Langmuir constant at each node's new temperature: table look-ups
            # (gathers, scalar code) once per step, outside the SIMD loops of the solve
            for j in range(nvb):
                for c in range(cb):
                    rs, kj = table_lookup(temp[b, j, c], tab)
                    rsv[j, c] = rs
                    kv[j, c] = kj
            for j in range(nvb):
                for c in range(cb):
                    wold[j, c] = water[b, j, c]
                    wlin[j, c] = water[b, j, c]
            for c in range(cb):
                cdone[c] = 0.0
            # Implicit step, Newton on the storage: solve the linearised system, estimate each
            # node's water from the fluxes (conservative), and solve again from that estimate
            # where a node changed branch (pore ice appeared or was used up) -- rare, so one
            # solve is the rule.
            for it in range(VAPOUR_MAXIT):
                for j in range(nvb):
                    for c in range(cb):
                        x, ic, cap, wsat = _partition(wlin[j, c], vapp[b, V_PHI, c], vapp[b, V_CAPA, c],
                                                      kv[j, c], rsv[j, c])
                        cvdt = cv[b, j, c] * idt
                        mb[j + 1, c] = cap * cvdt
                        md[j + 1, c] = cap * cvdt * x - (wlin[j, c] - wold[j, c]) * cvdt
                        iced[j, c] = 1.0 if wlin[j, c] > wsat else 0.0
                        wsatv[j, c] = wsat
                for c in range(cb):                      # row 0: air; row 1: surface node
                    mb[0, c] = adiag[c]
                    mc[0, c] = -g0v[c]
                    md[0, c] = arhs[c]
                    mb[1, c] += g0v[c] + gcond[1, c]
                    ma[1, c] = -gcond[0, c]
                    mc[1, c] = -gcond[1, c]
                for j in range(1, nvb):
                    for c in range(cb):
                        mb[j + 1, c] += gcond[j, c] + gcond[j + 1, c]
                        ma[j + 1, c] = -gcond[j, c]
                        mc[j + 1, c] = -gcond[j + 1, c]
                for c in range(cb):                      # Thomas algorithm, SIMD over cells
                    m = 1.0 / mb[0, c]
                    mc[0, c] = mc[0, c] * m
                    md[0, c] = md[0, c] * m
                for i in range(1, nvxb):
                    for c in range(cb):
                        m = 1.0 / (mb[i, c] - ma[i, c] * mc[i - 1, c])
                        mc[i, c] = mc[i, c] * m
                        md[i, c] = (md[i, c] - ma[i, c] * md[i - 1, c]) * m
                for c in range(cb):
                    xsol[nvxb - 1, c] = md[nvxb - 1, c]
                for i in range(nvxb - 2, -1, -1):
                    for c in range(cb):
                        xsol[i, c] = md[i, c] - mc[i, c] * xsol[i + 1, c]
                # each node's water from the fluxes of the solved field (exactly conservative)
                for c in range(cb):
                    fs = gcond[0, c] * xsol[0, c] - g0v[c] * xsol[1, c]
                    fsv[c] = fs
                    west[0, c] = wold[0, c] + dt * (fs - gcond[1, c] * (xsol[1, c] - xsol[2, c])) / cv[b, 0, c]
                for j in range(1, nvb):
                    for c in range(cb):
                        fin = gcond[j, c] * (xsol[j, c] - xsol[j + 1, c])
                        fout = gcond[j + 1, c] * (xsol[j + 1, c] - xsol[j + 2, c])
                        west[j, c] = wold[j, c] + dt * (fin - fout) / cv[b, j, c]
                # per cell: keep this solve where no node changed branch (or at the last
                # attempt); a cell's result never depends on its block-mates
                for c in range(cb):
                    bad[c] = 0.0
                for j in range(nvb):
                    for c in range(cb):
                        now_ice = 1.0 if west[j, c] > wsatv[j, c] else 0.0
                        bad[c] += 1.0 if (now_ice != iced[j, c]) | (west[j, c] < 0.0) else 0.0
                        wlin[j, c] = max(west[j, c], 0.0)
                last = it == VAPOUR_MAXIT - 1
                again = 0.0
                for c in range(cb):
                    take = (cdone[c] == 0.0) & ((bad[c] == 0.0) | last)
                    tk = 1.0 if take else 0.0
                    takev[c] = tk
                    cdone[c] = 1.0 if take else cdone[c]
                    again += 1.0 - cdone[c]
                    fskeep[c] = fsv[c] if take else fskeep[c]
                    xakeep[c] = xsol[0, c] if take else xakeep[c]
                for j in range(nvb):                     # branch-free copy (SIMD)
                    for c in range(cb):
                        wkeep[j, c] = west[j, c] if takev[c] > 0.0 else wkeep[j, c]
                if again == 0.0:
                    break
            # conservative updates: air and nodes from the last solve's fluxes; fog
            for c in range(cb):
                xa = xakeep[c]
                fsv[c] = fskeep[c]
                ftop = wtop[c] * (rfree[c] - xa)         # free atmosphere -> air
                hb = atm[b, A_DEPTH, c]
                ra = ra0[c] + dt * (ftop - fsv[c]) / hb
                rsa, _k = table_lookup(atm[b, A_TAIR, c], tab)
                # air supersaturated (ice) at the sensor's temperature: the excess settles
                fog = (ra - rsa) * hb if ra > rsa else 0.0
                fogv[c] = fog
                atm[b, A_RHO_AIR, c] = ra - fog / hb
                water[b, 0, c] = wkeep[0, c] + fog / cv[b, 0, c]
                xch[c] = xch[c] + dt * ftop
            for j in range(1, nvb):
                for c in range(cb):
                    water[b, j, c] = wkeep[j, c]
            # outputs: air, surface node, salt depth
            for c in range(cb):
                ts_ = temp[b, 0, c]
                x0, i0, c0, ws0 = _partition(water[b, 0, c], vapp[b, V_PHI, c], vapp[b, V_CAPA, c],
                                             kv[0, c], rsv[0, c])
                i = probe_idx[b, c]
                w = probe_w[b, c]
                ti = temp[b, i, c]
                tj = temp[b, i + 1, c]
                tp = (1.0 - w) * ti + w * tj
                rsi, ki = rsv[i, c], kv[i, c]            # this step's look-ups at the salt's nodes
                rsj, kj = rsv[i + 1, c], kv[i + 1, c]
                xi, ii, ci, wi = _partition(water[b, i, c], vapp[b, V_PHI, c], vapp[b, V_CAPA, c], ki, rsi)
                xj, ij, cj, wj = _partition(water[b, i + 1, c], vapp[b, V_PHI, c], vapp[b, V_CAPA, c], kj, rsj)
                tprobe[c] = tp
                s_in[c] = ((1.0 - w) * xi + w * xj) * R_VAPOUR * tp
                sw[c] = i0 * cv[b, 0, c]
                rhs[c] = x0 * R_VAPOUR * ts_
            for c in range(cmax):
                ta = atm[b, A_TAIR, c]
                out[O_TS, s, o + c] = temp[b, 0, c]
                out[O_TPROBE, s, o + c] = tprobe[c]
                out[O_CO2, s, o + c] = co2[b, c]
                out[O_FROST, s, o + c] = sw[c]
                out[O_ESURF, s, o + c] = rhs[c]
                out[O_ESALT, s, o + c] = s_in[c]
                out[O_H, s, o + c] = hflux[c]
                out[O_LDOWN, s, o + c] = ldw[c]
                out[O_TAIR, s, o + c] = ta
                out[O_EAIR, s, o + c] = atm[b, A_RHO_AIR, c] * R_VAPOUR * ta
                out[O_FATM, s, o + c] = xch[c]
                out[O_FSURF, s, o + c] = dt * fsv[c] + fogv[c]
                out[O_G, s, o + c] = gnet[c]
                out[O_EFREE, s, o + c] = atm[b, A_QFREE, c] * stepin[IN_PRESSURE, s, o + c] / eps_w


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
    * ``air_layer_m`` 50 m, ``air_relaxation_s`` 2 h (ground warmer than the air) and
      ``air_relaxation_night_s`` 30 h: the one-node air layer, fitted by this project to
      published 1.6-m air temperature ranges at Gale, Viking 1 and 2 and Phoenix (rms ~7 K;
      ``scripts/validate_mars.py`` shows each).
    * ``day_layer_m`` 4 km: Gale's well-mixed daytime layer (Savijarvi et al. 2015, read; 4-6 km
      over low terrain, Hinson et al. 2008, read); ``night_layer_m`` 200 m: the depleted night
      layer at Phoenix (Savijarvi et al. 2020, read).
    * ``growth_time_s`` 3 h (the day layer reached by late morning), ``mixing_time_s`` 1 h
      (convective turnover of the day layer) and ``stable_mixing_time_s`` 10 sols (slow exchange
      of a stable layer with the air above): order-of-magnitude choices of this project.
    * ``dust_omega`` 0.9, ``cp_air``: see :mod:`~wetcycle.forcing.atmosphere`.
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
    air_layer_m: float = 50.0
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
    dust_omega: float = DUST_SINGLE_SCATTERING_ALBEDO
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
              ("air_relaxation_time", s.air_relaxation_s, 60.0, 1e7),
              ("air_relaxation_time_night", s.air_relaxation_night_s, 60.0, 1e7),
              ("sol", s.sol_s, 3600.0, 1e6),
              ("day_layer_depth", s.day_layer_m, 10.0, 20000.0), ("night_layer_depth", s.night_layer_m, 1.0, 5000.0),
              ("layer_growth_time", s.growth_time_s, 60.0, 1e6), ("mixing_time", s.mixing_time_s, 60.0, 1e7),
              ("stable_mixing_time", s.stable_mixing_time_s, 60.0, 1e9),
              ("dust_single_scattering_albedo", s.dust_omega, 0.0, 1.0), ("tortuosity", s.tortuosity, 1.0, 10.0),
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
    par[P_DIFFUSE] = em.diffuse_fraction
    par[P_OMEGA] = s.dust_omega
    par[P_CP] = s.cp_air
    par[P_RAIR] = model.r_air
    par[P_G] = model.gravity
    par[P_HAIR] = s.air_layer_m
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
    return par


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
    vapp[V_LOUIS] = 3.0 * LOUIS_B * LOUIS_C * cn * np.sqrt(s.sensor_height_m / s.roughness_m)
    vapp[V_WIND] = s.wind_m_s
    cached.update(k)
    cached["vapp"] = to_blocks(vapp)
    cached["cv"] = to_blocks(model.control_volume)
    cached["dzn"] = to_blocks(model.next_distance)
    cached["par"] = _par(model)
    cached["tables"] = water_tables(s.langmuir_k_ref_pa, s.adsorption_heat_j_mol / R_GAS, s.langmuir_t_ref_k)
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
    ncp = -(-nc // CELL_BLOCK) * CELL_BLOCK
    stepin = np.empty((N_IN, ns, ncp))
    for row, x in ((IN_TAU, tau), (IN_FROST_POINT, frost_point), (IN_EPS_ATM, emissivity_atm),
                   (IN_COLUMN, water_column), (IN_PRESSURE, pressure)):
        stepin[row, :, :nc] = np.broadcast_to(np.asarray(x, dtype=float), (ns, nc))
        stepin[row, :, nc:] = stepin[row, :, nc - 1:nc]
    k = _blocked(model)
    temp = to_blocks(state.temperature)
    co2 = to_blocks(state.co2_frost)
    atm = to_blocks(np.stack([state.atmosphere_temperature, state.air_temperature,
                              state.air_vapour_density, state.air_layer_depth,
                              state.sensible_heat_flux, state.air_temperature_mean,
                              state.free_mixing_ratio]))
    water = to_blocks(state.regolith_water)
    out = np.zeros((len(OUTPUTS), ns, nc))
    column_kernel(temp, co2, atm, water, *k["factors"], k["cellp"], k["vapp"], k["cv"], k["dzn"],
                  k["par"], np.sin(dec), np.cos(dec), flux, np.sin(h0), np.cos(h0), stepin,
                  k["tables"], k["probe_idx"], k["probe_w"], int(step0), out)
    a = from_blocks(atm, nc)
    new = ColumnState(from_blocks(temp, nc), from_blocks(co2, nc), a[A_TATM], a[A_TAIR],
                      a[A_RHO_AIR], a[A_DEPTH], a[A_HFLUX], from_blocks(water, nc), a[A_TMEAN],
                      a[A_QFREE])
    return new, {name: out[i] for i, name in enumerate(OUTPUTS)}
