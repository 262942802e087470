"""The phase-state kernel: one salt, many cells, a block of time steps.

Each cell holds a parcel of one salt: n [mol m-2] of salt, water held as
hydrate ``w_hyd``, as brine ``w_brine`` and as ice ``w_ice`` [kg m-2], the
moles dissolved ``n_diss`` and the current solid (hydrate) index.  The kernel
steps the parcel through a block of forcing samples (temperature [K], relative
humidity w.r.t. liquid water [-], surface pressure [Pa], water-frost mass
[kg m-2]) and returns its state after each step.  Everything it knows about the
salt comes from :class:`wetcycle.salts.tables.PhaseTables` as plain arrays;
it imports nothing of the forcing.

Physics (phase boundaries from the Pitzer model via the tables)
----------------------------------------------------------------
* Deliquescence when RH >= DRH(T) of the current solid; efflorescence of a
  crystal-free brine only below the efflorescence RH (metastable
  supersaturated brine in between); with crystals present a saturated brine
  dries or grows (state ``brine_with_salt``).
* A closed parcel (fixed water W) is partitioned by the lever rule of the
  binary phase diagram: ice + brine on the liquidus when n/W < m_ice(T);
  brine alone while undersaturated; saturated brine + the stable hydrate when
  oversaturated and crystals are present or efflorescence is triggered.
* Deliquescence needs T >= T_eut: below the eutectic the stable assemblage is
  solid, and metastable deliquescence there is not modelled.  Only a
  crystal-free brine supercools: a brine touching salt crystals freezes at
  the eutectic (the crystals nucleate the eutectic assemblage) where ice can
  form, and dries to the crystalline salt where the air is below ice
  saturation.  Air within a relative 1e-5 of ice saturation, or over water
  frost, counts as ice-saturated.  A brine that was
  liquid above the eutectic survives cooling below it as supercooled brine
  down to the supercooling limit or the salt's lower validity limit T_min,
  whichever is warmer, then freezes to ice + hydrate (a freeze forced by T_min
  is flagged (bit 4): the liquid hours below it are not counted, a conservative
  choice); a frozen parcel melts at
  the eutectic; a crystalline salt touching water frost at T >= T_eut
  dissolves into it up to the liquidus (contact melting, not vapour-limited).
* Solid hydrates follow the stable hydrate at (T, RH) at once:
  argmin_s [ln K_s(T) - n_s ln RH] (equivalently, transition RH
  (K_high/K_low)^(1/dn)); their kinetics are not modelled.  A hydrate with no
  saturation curve at T (above its peritectic) cannot coexist with brine: the
  stable solid's DRH decides its deliquescence.
* Water frost is a budget: the parcel draws at most the frost present, less
  what it has already drawn during the same frost cover (the frost forcing
  itself does not see the salt's uptake).
* Equilibrium law near saturation: as RH -> 1 the equilibrium molality goes
  to 0; the brine is held at no more dilute than ``M_DILUTE`` (0.1 mol/kg).
  A crystal-free brine whose equilibrium lies past saturation stays
  supersaturated while RH >= min(ERH, DRH) (the DRH where no ERH is
  published) and below that crystallises and dries within the step.

Time laws
---------
* ``instant`` (the equilibrium law): water content follows equilibrium with
  the air at each sample (a_w = RH), except inside the ice field where the
  parcel is closed (its water activity is fixed by ice, not by the air),
  while hysteresis (DRH/ERH, supercooling) is kept.
* vapour-limited: water moves between air and parcel at the rate of vapour
  diffusion through a near-surface layer of thickness L,
  F = D (rho_v,air - rho_v,surface) / L with rho_v = e M_w / (R T) and
  D = f * 1.387e-5 m2 s-1 (T/273.15 K)^1.5 (1e5 Pa / P) for water vapour in
  CO2 (Chapman-Enskog scaling, common practice; the 273.15 K, 1 bar value from
  memory, consistent with Marrero & Mason 1972, J. Phys. Chem. Ref. Data 1, 3).
  f is a porosity/tortuosity factor of the layer.  Single-phase brine relaxes
  toward a_w = RH with an exponential integrator whose time constant is the
  secant (W_eq - W)/(F) (so the initial flux is exactly F, no overshoot); states with a
  fixed surface activity (brine + salt, brine + ice, frozen) exchange at a
  constant flux within the step.

Liquid time within a step: a transition between dry and liquid is placed
inside the step where the criterion that triggered it (RH - DRH, RH - ERH,
T - T_eut, T - T_super, or the brine running out) crosses zero, by linear
interpolation between the two samples, so liquid hours converge as the step
shrinks.

Limits (flagged in the output, never silent): temperatures outside the salt's
validity range are clamped for the salt's table look-ups (bit 1; properties of
water itself -- ice activity, vapour pressure, diffusivity -- use the true
temperature, clamped only outside Murphy & Koop's 123-332 K, also bit 1); a
supersaturated brine that would pass the model's molality limit m_max before
reaching its efflorescence RH crystallises there (bit 2); a supercooled brine
reaching T_min above its supercooling limit freezes there (bit 4).  The flag is
the sum of the bits set in the step.

Water is conserved to rounding: w_hyd + w_brine + w_ice changes exactly by
the water exchanged with the surroundings (vapour or frost), which is
returned per step.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from ..salts import pitzer as pz
from ..salts.tables import molality_from_table
from ..water import ice_activity_kernel, psat_liquid_kernel
from .states import BRINE, BRINE_WITH_ICE, BRINE_WITH_SALT, CRYSTALLINE, FROZEN, SUPERCOOLED, SUPERSATURATED

MW = 0.018015268  # kg mol-1
R_GAS = 8.314462618  # J mol-1 K-1 (CODATA 2018)
D_REF = 1.387e-5  # m2 s-1, H2O in CO2 at 273.15 K and 1e5 Pa (from memory; see module docstring)
T_MELT = 273.15
#: Relative tolerance of the ice-saturation test (tabulated a_w,ice is exact to ~1e-6).
ICE_SAT_TOL = 1e-5
#: Most dilute brine the equilibrium law holds [mol kg-1]: as RH -> 1 the equilibrium molality
#: goes to 0 and the water taken up without limit; a parcel is capped at this dilution (for
#: 0.01 kg m-2 of NaCl, 1.7 kg m-2 of water).  A model choice, not a property of the salt.
M_DILUTE = 0.1

# indices into the scalar vector of PhaseTables.scalars
S_TEUT, S_EUTSOLID, S_TSUPER, S_ERH, S_TMIN, S_TMAX, S_MMAX = 0, 1, 2, 3, 4, 5, 6

#: Bits of the validity flag (CF flag_masks): several can be set in one step.
FLAG_CLAMPED = 1        # T outside the salt's (or water's) validity range: tables read at the nearest valid T
FLAG_MOLALITY_LIMIT = 2  # a crystal-free brine crystallised at the model's molality limit m_max
FLAG_LOWER_LIMIT = 4     # a supercooled brine froze at T_min, above its published supercooling limit
#: Range of Murphy & Koop (2005) for liquid water [K]; water properties are clamped to it.
T_WATER_MIN, T_WATER_MAX = 123.0, 332.0


@njit(cache=True, inline="always", error_model="numpy")
def _loc(T, T0, dT, n):
    x = (T - T0) / dT
    if x <= 0.0:
        return 0, 0.0
    if x >= n - 1:
        return n - 2, 1.0
    i = int(x)
    return i, x - i


@njit(cache=True, inline="always", error_model="numpy")
def _lin(row, i, f):
    a = row[i]
    b = row[i + 1]
    if a != a:
        return b if f > 0.5 else a
    if b != b:
        return a if f < 0.5 else b
    return a + f * (b - a)


@njit(cache=True, inline="always", error_model="numpy")
def _stable(stable, i, f):
    return stable[i] if f < 0.5 else stable[i + 1]


@njit(cache=True, inline="always", error_model="numpy")
def _hydrate_at(lnk, hyd, i, f, ln_aw):
    """Stable solid at water activity exp(ln_aw): argmin_s ln K_s - n_s ln a_w."""
    best = 0
    bv = 1e300
    for s in range(hyd.shape[0]):
        v = _lin(lnk[s], i, f) - hyd[s] * ln_aw
        if v < bv:
            bv = v
            best = s
    return best


@njit(cache=True, inline="always", error_model="numpy")
def _partition(n, W, T, i, f, msat, stable, mice, hyd, k_prev, allow_supersat, erh, T_eut, p, m_max):
    """Lever rule for a closed parcel: returns (state, solid, w_hyd, w_brine, w_ice, n_diss)."""
    ks = _stable(stable, i, f)
    if ks < 0:
        ks = k_prev
    if W <= 0.0:
        return CRYSTALLINE, ks, 0.0, 0.0, 0.0, 0.0
    mi = _lin(mice, i, f) if T <= T_MELT else math.nan
    below = T < T_eut
    if mi == mi and n / W < mi * (1.0 - 1e-12):  # on the liquidus within rounding: brine, no ice
        wb = n / mi
        return (SUPERCOOLED if below else BRINE_WITH_ICE), ks, 0.0, wb, W - wb, n
    m = n / W
    ms = _lin(msat[ks], i, f)
    if m > m_max:
        # beyond the model's molality range: no brine can exist there; crystallise (lever rule)
        allow_supersat = False
        if ms != ms:
            return CRYSTALLINE, ks, W, 0.0, 0.0, 0.0
    elif ms != ms or m <= ms:
        return (SUPERCOOLED if below else BRINE), ks, 0.0, W, 0.0, n
    if allow_supersat and erh == erh:
        aw = math.exp(pz.ln_aw_kernel(m, T, p))
        if aw == aw and aw >= erh:
            return (SUPERCOOLED if below else SUPERSATURATED), ks, 0.0, W, 0.0, n
    nk = hyd[ks]
    x = (n - ms * W) / (1.0 - ms * nk * MW)  # moles of salt in the solid
    if x >= n or x != x:
        return CRYSTALLINE, ks, W, 0.0, 0.0, 0.0
    nd = n - x
    return BRINE_WITH_SALT, ks, x * nk * MW, nd / ms, 0.0, nd


@njit(cache=True, inline="always", error_model="numpy")
def _is_liquid(st):
    return st == BRINE or st == SUPERSATURATED or st == BRINE_WITH_SALT or st == BRINE_WITH_ICE or st == SUPERCOOLED


@njit(cache=True, inline="always", error_model="numpy")
def _frac(ga, gb):
    """Fraction of the step at which a linear criterion going from ga to gb crosses zero."""
    d = ga - gb
    if d == 0.0 or d != d:
        return 0.5  # no usable criterion (e.g. a DRH undefined at that T): mid-step
    t = ga / d
    return min(max(t, 0.0), 1.0)


@njit(cache=True, inline="always", error_model="numpy")
def _aw_of(n_diss, w_brine, T, p):
    if w_brine <= 0.0:
        return math.nan
    return math.exp(pz.ln_aw_kernel(n_diss / w_brine, T, p))


@njit(cache=True, error_model="numpy", nogil=True)
def step_block(T, RH, P, frost, dt, n_salt, instant, layer_m, dfactor,
               T0, dT, lnk, msat, drh, stable, mice, awice, hyd, scal, p, inv_T0, inv_dT, inv_ds, inv_m,
               st, solid, w_hyd, w_brine, w_ice, n_diss, prev, started,
               out_state, out_liq, out_aw, out_wb, out_wh, out_wi, out_exch, out_flag):
    """Advance every cell through ``T.shape[0]`` samples.

    Parameters (arrays are [step, cell] unless noted)
    ----------
    T, RH, P, frost : forcing samples [K], [-], [Pa], [kg m-2]; interval k ends at sample k.
    dt : [step] seconds from the previous sample to sample k.
    n_salt : [cell] moles of salt per m2.
    instant : bool, the equilibrium law; else vapour-limited with ``layer_m`` [m], ``dfactor`` [-].
    T0 ... inv_m : the salt's tables (see :class:`~wetcycle.salts.tables.PhaseTables`).
    st, solid, w_hyd, w_brine, w_ice, n_diss : [cell] state, updated in place.
    prev : [4, cell] the previous sample (T, RH, frost) and the frost already drawn by the parcel
        in the current frost episode [kg m-2]; ``started`` [cell] 1 once prev is valid.
    out_* : [step, cell] outputs: state, liquid fraction of the step, brine a_w (NaN without
        brine), brine/hydrate/ice water [kg m-2], water gained from the surroundings in the step
        [kg m-2], and a validity flag, a sum of bits (CF flag_masks): 0 ok; 1 T lay outside the
        salt's validity range (salt tables read at the nearest valid T) or outside 123-332 K
        (water properties likewise); 2 a crystal-free brine was driven beyond the model's molality
        limit m_max before reaching its efflorescence RH and was crystallised there; 4 a supercooled
        brine froze at the salt's lower validity limit T_min although its supercooling limit lies
        lower (the model cannot follow a brine below T_min).
    """
    nstep, ncell = T.shape
    nT = lnk.shape[1]
    nsolid = hyd.shape[0]
    T_eut, T_sup, erh = scal[S_TEUT], scal[S_TSUPER], scal[S_ERH]
    T_min, T_max, m_max = scal[S_TMIN], scal[S_TMAX], scal[S_MMAX]
    for k in range(nstep):
        dtk = dt[k]
        for c in range(ncell):
            Tb_raw = T[k, c]
            RHb = min(max(RH[k, c], 1e-9), 1.0)
            Fb = frost[k, c]
            if started[c] == 0:
                prev[0, c], prev[1, c], prev[2, c] = Tb_raw, RHb, Fb
                prev[3, c] = 0.0
                started[c] = 1
            # The frost forcing knows nothing of the salt: what the parcel drew from the current
            # frost cover (prev[3]) is no longer available to it; a frost-free sample ends the episode.
            used = prev[3, c] if Fb > 0.0 else 0.0
            Fb = max(Fb - used, 0.0)
            drawn = 0.0
            Ta_raw, RHa = prev[0, c], prev[1, c]
            flag = 0
            Tb = Tb_raw
            if Tb < T_min or Tb > T_max:
                flag = FLAG_CLAMPED
                Tb = min(max(Tb, T_min), T_max)
            # water's own properties at the true temperature, within Murphy & Koop's range
            Tw = Tb_raw
            if Tw < T_WATER_MIN or Tw > T_WATER_MAX:
                flag = FLAG_CLAMPED
                Tw = min(max(Tw, T_WATER_MIN), T_WATER_MAX)
            Ta = min(max(Ta_raw, T_min), T_max)
            ib, fb = _loc(Tb, T0, dT, nT)
            ia, fa = _loc(Ta, T0, dT, nT)
            n = n_salt[c]
            s0 = st[c]
            kk = solid[c]
            wh, wb, wi, nd = w_hyd[c], w_brine[c], w_ice[c], n_diss[c]
            W0 = wh + wb + wi
            # DRH of the current solid (NaN where it has no saturation curve: handled below)
            d_cur = _lin(drh[kk], ib, fb) if s0 == CRYSTALLINE else 0.0
            # Properties of water itself (ice activity, vapour pressure, diffusion) use the true
            # temperature; only the salt's tables are read at the clamped one.
            # A dry salt below its DRH never looks at ice, so the (costly, when clamped) ice
            # activity is evaluated only where the step can use it.
            if Tb_raw > T_MELT:
                aw_i = 2.0
            elif Tb == Tb_raw:
                aw_i = _lin(awice, ib, fb)
            elif s0 != CRYSTALLINE or Fb > 0.0 or not (RHb < d_cur):
                aw_i = ice_activity_kernel(Tw)
            else:
                aw_i = 2.0  # not used: a dry salt below its DRH, no frost
            # air at ice saturation (within ICE_SAT_TOL, or frost present) counts as saturated:
            # the forcing holds vapour exactly at p_ice over frost, so an exact test would be a knife edge
            ice_sat = Tb_raw <= T_MELT and (Fb > 0.0 or RHb >= aw_i * (1.0 - ICE_SAT_TOL))
            psat = 0.0
            kx = 0.0
            if not instant and (s0 != CRYSTALLINE or not (RHb < d_cur)):
                psat = psat_liquid_kernel(Tw)
                D = dfactor * D_REF * (Tw / 273.15) * math.sqrt(Tw / 273.15) * (1e5 / max(P[k, c], 1.0))
                kx = D * MW / (R_GAS * Tw * layer_m)  # kg m-2 s-1 Pa-1
            liq = 0.0
            W_flux = -1.0  # vapour-limited drying with crystals: water the flux alone would leave (-1: unset)
            eq_brine = False  # brine water set from a_w = RH this step (equilibrium law)
            lnrh = math.log(RHb) if nsolid > 1 else 0.0
            if s0 == CRYSTALLINE:
                d_b = d_cur
                if d_b != d_b and Tb_raw >= T_eut:
                    # the current hydrate has no saturation curve here (e.g. above its peritectic):
                    # it cannot coexist with brine, so the stable solid decides deliquescence (an
                    # incongruent melt keeps the hydrate's water in the parcel)
                    ks = _stable(stable, ib, fb)
                    if ks >= 0 and ks != kk:
                        d_s = _lin(drh[ks], ib, fb)
                        if d_s == d_s and RHb >= d_s:
                            kk = ks
                            d_b = d_s
                if Fb > 0.0 and Tb >= T_eut and Tb <= T_MELT:
                    # contact melting with water frost up to the liquidus
                    mi = _lin(mice, ib, fb)
                    need = n / mi - wh if mi == mi else 0.0
                    take = min(max(need, 0.0), Fb)
                    drawn = take
                    W = wh + take
                    s1, kk, wh, wb, wi, nd = _partition(n, W, Tb, ib, fb, msat, stable, mice, hyd, kk,
                                                        False, erh, T_eut, p, m_max)
                    liq = 1.0 - _frac(Ta - T_eut, Tb - T_eut) if Ta < T_eut else 1.0
                elif d_b == d_b and RHb >= d_b and Tb_raw >= T_eut:
                    d_a = _lin(drh[kk], ia, fa)
                    tau = _frac(RHa - d_a, RHb - d_b) if RHa < d_a else 0.0
                    if instant:
                        mi = _lin(mice, ib, fb) if Tb <= T_MELT else math.nan
                        if ice_sat and mi == mi:
                            W = n / mi
                        else:
                            m_eq = molality_from_table(RHb, Tb, inv_T0, inv_dT, inv_ds, inv_m)
                            if m_eq == m_eq and m_eq < M_DILUTE:
                                m_eq = M_DILUTE
                            W = n / m_eq if m_eq == m_eq else wh
                        s1, kk, wh, wb, wi, nd = _partition(n, W, Tb, ib, fb, msat, stable, mice, hyd, kk,
                                                            False, erh, T_eut, p, m_max)
                    else:
                        up = kx * (RHb - d_b) * psat * dtk * (1.0 - tau)
                        s1, kk, wh, wb, wi, nd = _partition(n, wh + up, Tb, ib, fb, msat, stable, mice, hyd,
                                                            kk, False, erh, T_eut, p, m_max)
                    liq = (1.0 - tau) if _is_liquid(s1) else 0.0
                else:
                    k_new = _hydrate_at(lnk, hyd, ib, fb, lnrh) if nsolid > 1 else kk
                    s1 = CRYSTALLINE
                    if k_new != kk:
                        kk = k_new
                        wh = n * hyd[kk] * MW
                    wb, wi, nd = 0.0, 0.0, 0.0
            elif s0 == FROZEN:
                if Tb >= T_eut:
                    s1, kk, wh, wb, wi, nd = _partition(n, W0, Tb, ib, fb, msat, stable, mice, hyd, kk,
                                                        False, erh, T_eut, p, m_max)
                    liq = (1.0 - _frac(Ta - T_eut, Tb - T_eut)) if _is_liquid(s1) else 0.0
                else:
                    s1 = FROZEN
                    if instant:
                        if not ice_sat:
                            wi = 0.0  # below ice saturation the ice sublimates at once
                    else:
                        wi = max(wi + kx * (RHb - aw_i) * psat * dtk, 0.0)
                    if wi <= 0.0:
                        s1 = CRYSTALLINE
                        wi = 0.0
            else:
                # liquid states
                if Tb_raw < T_sup or Tb_raw < T_min:
                    if T_min > T_sup:
                        flag |= FLAG_LOWER_LIMIT  # frozen at T_min: the supercooling limit lies lower
                    ks = _stable(stable, ib, fb)
                    if ks < 0:
                        ks = kk
                    kk = ks
                    wh = min(n * hyd[kk] * MW, W0)
                    wi = W0 - wh
                    wb, nd = 0.0, 0.0
                    s1 = FROZEN
                    Tc = max(T_sup, T_min)
                    liq = _frac(Ta_raw - Tc, Tb_raw - Tc)
                else:
                    had_crystals = s0 == BRINE_WITH_SALT
                    had_ice = wi > 0.0
                    W = W0
                    ks_b = _stable(stable, ib, fb)
                    ms_b = _lin(msat[ks_b], ib, fb) if ks_b >= 0 else math.nan
                    mi_b = _lin(mice, ib, fb) if Tb <= T_MELT else math.nan
                    if Fb > 0.0 and Tb >= T_eut and mi_b == mi_b:
                        # in contact with water frost: the brine stays on the ice liquidus,
                        # drawing water from the frost (contact melting), whatever the air does
                        if W0 < n / mi_b:
                            drawn = min(n / mi_b - W0, Fb)
                            W = W0 + drawn
                    elif instant:
                        mi = _lin(mice, ib, fb) if Tb <= T_MELT else math.nan
                        if ice_sat and mi == mi:
                            # Inside the ice field the parcel is closed: a brine that was already on
                            # the ice liquidus (with or without ice) keeps its water, so cooling grows
                            # ice from it; one arriving from off the liquidus is set onto it.
                            mi_a = _lin(mice, ia, fa) if Ta <= T_MELT else math.nan
                            on_liq = mi_a == mi_a and abs(W0 * mi_a - n) <= 1e-9 * n
                            if not (had_ice or on_liq):
                                W = n / mi
                        else:
                            m_eq = molality_from_table(RHb, Tb, inv_T0, inv_dT, inv_ds, inv_m)
                            if m_eq == m_eq:
                                eq_brine = m_eq >= M_DILUTE
                                m_eq = max(m_eq, M_DILUTE)
                                W = n / m_eq
                            else:
                                W = 0.0  # the air is drier than the model's most concentrated brine
                                if not had_crystals:
                                    flag |= FLAG_MOLALITY_LIMIT
                            if had_crystals and ms_b == ms_b and m_eq == m_eq and m_eq > ms_b:
                                W = 0.0  # crystals present: brine dries out below the DRH
                            elif (not had_crystals) and ms_b == ms_b and m_eq == m_eq and m_eq > ms_b:
                                # a crystal-free brine past saturation stays (supersaturated) while
                                # a_w >= ERH; below the ERH (never above the DRH; the DRH where no
                                # ERH is published) it crystallises and, the air being below the
                                # DRH, dries at once
                                e_b = _lin(drh[ks_b], ib, fb)
                                if erh == erh and erh < e_b:
                                    e_b = erh
                                if RHb < e_b:
                                    W = 0.0
                    else:
                        if had_ice:
                            # the parcel's own ice exchanges at ice saturation; it cannot lose more than its ice
                            W = max(W0 + kx * (RHb - aw_i) * psat * dtk, W0 - wi)
                        elif had_crystals:
                            aws = _aw_of(nd, wb, Tb, p)
                            W = W0 + kx * (RHb - aws) * psat * dtk
                            W_flux = W
                            if ks_b >= 0:  # a saturated brine dries down to the dry hydrate, no further
                                W = max(W, n * hyd[ks_b] * MW)
                            if ms_b == ms_b and ms_b > 0:  # ...and grows until the salt is dissolved, no further
                                W = min(W, max(W0, n / ms_b))
                        else:
                            m_eq = molality_from_table(RHb, Tb, inv_T0, inv_dT, inv_ds, inv_m)
                            beyond = not (m_eq == m_eq)
                            if beyond:
                                m_eq = m_max
                            m_eq = max(m_eq, M_DILUTE)
                            W_eq = n / m_eq
                            # exponential relaxation toward W_eq with the secant time constant:
                            # the initial flux is exactly F = kx psat (RH - a_w) (Fick), no overshoot
                            aw0 = _aw_of(n, W0, Tb, p)
                            dWeq = W_eq - W0
                            if dWeq != 0.0 and aw0 == aw0 and (RHb - aw0) * dWeq > 0.0:
                                rate = kx * psat * (RHb - aw0) / dWeq
                                W = W_eq - dWeq * math.exp(-rate * dtk)
                            else:
                                W = W0
                            if beyond and W <= W_eq * (1.0 + 1e-6):
                                # reached the model's molality limit before the efflorescence RH:
                                # crystallise to the dry hydrate (its water stays in the solid)
                                W = n * hyd[ks_b] * MW if ks_b >= 0 else 0.0
                                flag |= FLAG_MOLALITY_LIMIT
                        W = max(W, 0.0)
                    allow = (not had_crystals) and (erh == erh) and W > 0.0  # _partition checks a_w >= ERH
                    s1, kk, wh, wb, wi, nd = _partition(n, W, Tb, ib, fb, msat, stable, mice, hyd, kk,
                                                        allow, erh, T_eut, p, m_max)
                    if Tb < T_eut and (s1 == BRINE_WITH_SALT or had_crystals) and s1 != CRYSTALLINE:
                        # salt crystals in contact with the brine nucleate the eutectic assemblage:
                        # no supercooling; it freezes where ice can form, else it dries
                        W1 = wh + wb + wi
                        if ice_sat or not instant:
                            ks = _stable(stable, ib, fb)
                            kk = ks if ks >= 0 else kk
                            wh = min(n * hyd[kk] * MW, W1)
                            wi = W1 - wh
                            s1 = FROZEN
                        else:
                            kk = _hydrate_at(lnk, hyd, ib, fb, math.log(RHb)) if nsolid > 1 else kk
                            wh = n * hyd[kk] * MW
                            wi = 0.0
                            s1 = CRYSTALLINE
                        wb, nd = 0.0, 0.0
                        liq = _frac(Ta - T_eut, Tb - T_eut) if Ta >= T_eut else 0.0
                    elif s1 == CRYSTALLINE:
                        if instant:
                            kk = _hydrate_at(lnk, hyd, ib, fb, math.log(RHb)) if nsolid > 1 else kk
                            wh = n * hyd[kk] * MW
                            wb, wi, nd = 0.0, 0.0, 0.0
                            if s0 == BRINE_WITH_SALT:
                                d_a = _lin(drh[kk], ia, fa)
                                d_b = _lin(drh[kk], ib, fb)
                                liq = _frac(RHa - d_a, RHb - d_b)
                            elif flag & FLAG_MOLALITY_LIMIT:
                                # crystallised at the model's molality limit: crossing of a_w(m_max, T)
                                lim_a = math.exp(pz.ln_aw_kernel(m_max, Ta, p))
                                lim_b = math.exp(pz.ln_aw_kernel(m_max, Tb, p))
                                liq = _frac(RHa - lim_a, RHb - lim_b)
                            elif erh == erh:
                                # efflorescence can never lie above the deliquescence RH
                                e_a = min(erh, _lin(drh[kk], ia, fa))
                                e_b = min(erh, _lin(drh[kk], ib, fb))
                                liq = _frac(RHa - e_a, RHb - e_b)
                            else:
                                d_a = _lin(drh[kk], ia, fa)
                                d_b = _lin(drh[kk], ib, fb)
                                liq = _frac(RHa - d_a, RHb - d_b)
                        else:
                            # the brine lasted while the flux removed the water above the dry hydrate
                            dW = W0 - (W_flux if W_flux >= 0.0 else W)
                            liq = min(wb_prev_frac(W0, wh, dW), 1.0)
                    else:
                        liq = 1.0
            W1 = wh + wb + wi
            st[c] = s1
            solid[c] = kk
            w_hyd[c], w_brine[c], w_ice[c], n_diss[c] = wh, wb, wi, nd
            out_state[k, c] = s1
            out_liq[k, c] = liq
            if instant and (s1 == BRINE or s1 == SUPERSATURATED) and wb > 0.0 and not (ice_sat and wi > 0.0) \
                    and (Fb <= 0.0 or Tb < T_eut) and eq_brine:
                out_aw[k, c] = RHb  # equilibrium law: the single-phase brine has a_w = RH by construction
            else:
                out_aw[k, c] = _aw_of(nd, wb, Tb, p)
            out_wb[k, c] = wb
            out_wh[k, c] = wh
            out_wi[k, c] = wi
            out_exch[k, c] = W1 - W0
            out_flag[k, c] = flag
            prev[0, c], prev[1, c], prev[2, c] = Tb_raw, RHb, frost[k, c]
            if frost[k, c] > 0.0:
                prev[3, c] = used + drawn
            elif prev[3, c] != 0.0:
                prev[3, c] = 0.0  # the frost cover is gone: the next one is a new budget


@njit(cache=True, inline="always", error_model="numpy")
def wb_prev_frac(W0, wh_new, dW):
    """Fraction of a vapour-limited step during which brine remained while it dried out."""
    liquid0 = W0 - wh_new
    if dW <= 0.0:
        return 1.0
    return max(min(liquid0 / dW, 1.0), 0.0)
