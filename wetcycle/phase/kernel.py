"""The phase-state kernel: one salt, many cells, a block of time steps.

Each cell holds a parcel of one salt: n [mol m-2] of salt, water held as
hydrate ``w_hyd``, as brine ``w_brine`` and as ice ``w_ice`` [kg m-2], the
moles dissolved ``n_diss`` and the current solid (hydrate) index.  The kernel
steps the parcel through a block of forcing samples (temperature [K], relative
humidity w.r.t. liquid water [-], surface pressure [Pa], water-frost mass
[kg m-2]) and returns its state after each step.  Everything it knows about the
salt comes from :class:`wetcycle.salts.tables.PhaseTables` as plain arrays (it
calls no thermodynamic function); it imports nothing of the forcing.

Physics (phase boundaries from the Pitzer model via the tables)
----------------------------------------------------------------
* **Deliquescence** when RH >= DRH(T) of the current solid, at T >= T_eut, or -- for a salt
  not touching ice -- down to ``md_depth`` below the eutectic where vapour deliquescence
  into an ice-supersaturated brine has been observed (NaClO4: Gough et al. 2011).  From
  vapour alone the vapour-limited law makes it slow; a salt touching water frost at
  T >= T_eut dissolves into it up to the ice liquidus at once (contact melting: "minutes",
  Fischer et al. 2014, Geophys. Res. Lett. 41, 4456).
* **Efflorescence** of a crystal-free brine only below the efflorescence RH (metastable
  supersaturated brine in between, its water activity from the supersaturated branch of
  :mod:`wetcycle.salts.metastable`); ERH = 0 means none observed (the brine persists to the
  branch's end, ``m_ext``); no published ERH: no hysteresis.  With crystals present a
  saturated brine dries or grows (state ``brine_with_salt``).
* **Liquid that counts.**  A brine holding less than ``liquid_threshold`` times the water of
  the salt's saturated solution at T (n / m_sat) is not liquid: the parcel is a damp
  crystalline salt (state ``crystalline``; the sub-threshold water stays in ``w_brine``, so
  water is conserved, and keeps exchanging with the air) and the step counts no liquid time.
* **Ice.**  A brine without ice nucleates ice when its water activity reaches
  ``S_nuc a_w,ice(T)`` (``ice_nucleation_rh_ice`` of the data file: Rivera-Valentin et al.
  2020 for the Ca and Mg perchlorates, the ~15 K supercooling of Toner et al. 2014
  elsewhere); between ice saturation and that limit it stays liquid, supersaturated with
  respect to ice.  With ice (its own, or frost it touches) the parcel is closed in the ice
  field and partitioned by the lever rule onto the liquidus.
* **Below the eutectic** a brine is metastable: a crystal-free one (``supercooled_brine``) or
  one with crystals (``brine_with_salt``) stays liquid until (i) ice nucleates (the limit
  above), (ii) it has ice or touches frost (eutectic solidification at the crossing: a brine
  film with frost around it froze at the eutectic, Nikolakakos & Whiteway 2015, Geophys.
  Res. Lett. 42, 7899), or (iii) T falls below the supercooling limit or the salt's lower
  validity limit T_min, whichever is warmer; it then freezes to ice + hydrate (a freeze
  forced by T_min is flagged, bit 4).  A frozen parcel melts at the eutectic.
* **Solid hydrates** relax toward the stable hydrate at (T, RH),
  argmin_s [ln K_s(T) - n_s ln RH] (equivalently, transition RH (K_high/K_low)^(1/dn)):
  at once with ``hydrate_instant`` or where the system has no published rate, else with the
  time constant tau(T) = tau_ref exp(E/R (1/T - 1/T_ref)) of its data file (MgSO4), the
  solid being labelled by the hydrate nearest its water content.  A solid crystallising from
  brine is the stable solid in contact with the brine.  A hydrate with no saturation curve at
  T (above its peritectic) cannot coexist with brine: the stable solid's DRH decides its
  deliquescence.
* Water frost is a budget: the parcel draws at most the frost present, less what it has
  already drawn during the same frost cover.
* Equilibrium law near saturation: as RH -> 1 the equilibrium molality goes to 0; the brine
  is held at no more dilute than ``M_DILUTE`` (0.1 mol/kg).

Time laws
---------
* ``instant`` (the equilibrium law): water content follows equilibrium with the air at each
  sample (a_w = RH), except inside the ice field with ice present, where the parcel is closed
  (its water activity is fixed by ice, not by the air), while hysteresis (DRH/ERH,
  supercooling, ice nucleation) is kept.
* vapour-limited: water moves between air and parcel at the rate of vapour diffusion over a
  length L (``diffusion_length``: the salt's own crust or grain scale; the forcing gives the
  vapour at the salt's depth), F = D (rho_v,air - rho_v,surface) / L with
  rho_v = e M_w / (R T) and D = f * 1.387e-5 m2 s-1 (T/273.15 K)^1.5 (1e5 Pa / P) for water
  vapour in CO2 (Chapman-Enskog scaling, common practice; the 273.15 K, 1 bar value from
  memory, consistent with Marrero & Mason 1972, J. Phys. Chem. Ref. Data 1, 3); f is a
  porosity/tortuosity factor.  Single-phase brine relaxes toward a_w = RH with an
  exponential integrator whose time constant is the secant (W_eq - W)/F (so the initial flux
  is exactly F, no overshoot); states with a fixed surface activity (brine + salt, brine +
  ice, frozen) exchange at a constant flux within the step.

Liquid time within a step: a transition between dry and liquid is placed inside the step
where the criterion that triggered it (RH - DRH, RH - ERH, T - T_eut, T - T_floor,
a_w - S_nuc a_w,ice, or the brine water crossing the threshold) crosses zero, by linear
interpolation between the two samples, so liquid hours converge as the step shrinks.

Limits (flagged in the output, never silent), a sum of bits: 1, temperatures outside the
salt's validity range are clamped for the salt's table look-ups (properties of water itself
-- ice activity, vapour pressure, diffusivity -- use the true temperature, clamped only
outside Murphy & Koop's 123-332 K, also bit 1); 2, a crystal-free brine reached the end of
the supersaturated branch (``m_ext``) before its efflorescence RH and was solidified there;
4, a supercooled brine reaching T_min above its supercooling limit froze there; 8, the brine
at the end of the step lies past ``m_valid``, where its water activity is extrapolated.

Water is conserved to rounding: w_hyd + w_brine + w_ice changes exactly by the water
exchanged with the surroundings (vapour or frost), which is returned per step.
"""

from __future__ import annotations

import math
from collections import namedtuple

from numba import njit

from ..salts.tables import S, ln_aw_from_table, molality_from_table
from ..water import ice_activity_kernel, psat_liquid_kernel
from .states import BRINE, BRINE_WITH_ICE, BRINE_WITH_SALT, CRYSTALLINE, FROZEN, SUPERCOOLED, SUPERSATURATED

MW = 0.018015268  # kg mol-1 (IAPWS-95)
R_GAS = 8.314462618  # J mol-1 K-1 (CODATA 2018)
D_REF = 1.387e-5  # m2 s-1, H2O in CO2 at 273.15 K and 1e5 Pa (from memory; see module docstring)
T_MELT = 273.15
#: Relative tolerance of the ice-saturation test (tabulated a_w,ice is exact to ~1e-6).
ICE_SAT_TOL = 1e-5
#: Most dilute brine the equilibrium law holds [mol kg-1]: as RH -> 1 the equilibrium molality
#: goes to 0 and the water taken up without limit; a parcel is capped at this dilution (for
#: 0.01 kg m-2 of NaCl, 1.7 kg m-2 of water).  A model choice, not a property of the salt.
M_DILUTE = 0.1

#: Bits of the validity flag (CF flag_masks): several can be set in one step.
FLAG_CLAMPED = 1         # T outside the salt's (or water's) validity range: tables read at the nearest valid T
FLAG_MOLALITY_LIMIT = 2  # a crystal-free brine reached the end of the supersaturated branch and was solidified
FLAG_LOWER_LIMIT = 4     # a supercooled brine froze at T_min, above its published supercooling limit
FLAG_EXTRAPOLATED = 8    # the brine lies past m_valid: its water activity is extrapolated
# positions in the tables' scalar vector (wetcycle.salts.tables.SCALAR_NAMES)
_T_EUT, _T_SUPER, _ERH, _T_MIN, _T_MAX = S.T_eut, S.T_super, S.erh, S.T_min, S.T_max
_M_MAX, _M_EXT, _M_VALID, _S_NUC, _MD_DEPTH = S.m_max, S.m_ext, S.m_valid, S.ice_nucleation_rh_ice, S.md_depth
_TAU = S.tau_hydrate
#: Range of Murphy & Koop (2005) for liquid water [K]; water properties are clamped to it.
T_WATER_MIN, T_WATER_MAX = 123.0, 332.0

#: The time law's settings, as the kernel reads them.
LawParams = namedtuple("LawParams", ("instant", "diffusion_length", "dfactor", "liquid_threshold", "hydrate_instant"))
#: Parcel state arrays [cell] (``prev`` [4, cell]), updated in place.
KernelState = namedtuple("KernelState", ("phase", "solid", "w_hyd", "w_brine", "w_ice", "n_diss", "prev", "started"))
#: Output arrays [step, cell].
KernelOut = namedtuple("KernelOut", ("phase", "liq", "aw", "wb", "wh", "wi", "exch", "flag"))


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
def _nearest_hydrate(hyd, h, k_a, k_b):
    """Of hydrates k_a and k_b, the one whose water count is nearest h (ties: k_b)."""
    return k_a if abs(hyd[k_a] - h) < abs(hyd[k_b] - h) else k_b


@njit(cache=True, inline="always", error_model="numpy")
def _aw(m, T, tab):
    return math.exp(ln_aw_from_table(m, T, tab.fw_T0, tab.fw_dT, tab.fw_du, tab.fw_lnaw))


@njit(cache=True, inline="always", error_model="numpy")
def _aw_of(n_diss, w_brine, T, tab):
    if w_brine <= 0.0:
        return math.nan
    return _aw(n_diss / w_brine, T, tab)


@njit(cache=True, inline="always", error_model="numpy")
def _meq(rh, T, tab):
    return molality_from_table(rh, T, tab.inv_T0, tab.inv_dT, tab.inv_ds, tab.inv_m)


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
def _exchange(Tw, P, dfactor, length):
    """(p_sat,liquid [Pa], vapour conductance kx [kg m-2 s-1 Pa-1]) of the vapour-limited law."""
    psat = psat_liquid_kernel(Tw)
    D = dfactor * D_REF * (Tw / 273.15) * math.sqrt(Tw / 273.15) * (1e5 / max(P, 1.0))
    return psat, D * MW / (R_GAS * Tw * length)


@njit(cache=True, error_model="numpy")
def _partition(n, W, T, i, f, tab, k_prev, allow_supersat, ice_ok, erh, m_ext):
    """Lever rule for a closed parcel: returns (state, solid, w_hyd, w_brine, w_ice, n_diss, beyond).

    Ice forms only where ``ice_ok`` (ice present or touching frost): without it a brine more
    dilute than the ice liquidus stays liquid (supersaturated with respect to ice; the caller
    applies the ice-nucleation limit).  ``beyond``: the brine would lie past m_ext.  States
    are those above the eutectic; the caller maps them below it.
    """
    ks = _stable(tab.stable, i, f)
    if ks < 0:
        ks = k_prev
    if W <= 0.0:
        return CRYSTALLINE, ks, 0.0, 0.0, 0.0, 0.0, False
    mi = _lin(tab.mice, i, f) if T <= T_MELT else math.nan
    if ice_ok and mi == mi and n / W < mi * (1.0 - 1e-12):  # on the liquidus within rounding: brine, no ice
        wb = n / mi
        return BRINE_WITH_ICE, ks, 0.0, wb, W - wb, n, False
    m = n / W
    ms = _lin(tab.msat[ks], i, f)
    beyond = m > m_ext * (1.0 + 1e-9)
    if beyond:
        # past the supersaturated branch: no crystal-free brine can exist there; crystallise
        allow_supersat = False
        if ms != ms:
            return CRYSTALLINE, ks, W, 0.0, 0.0, 0.0, True
    elif ms != ms or m <= ms:
        return BRINE, ks, 0.0, W, 0.0, n, False
    if allow_supersat:
        aw = _aw(m, T, tab)
        if aw == aw and aw >= erh:
            return SUPERSATURATED, ks, 0.0, W, 0.0, n, False
    nk = tab.hydration[ks]
    if W <= n * nk * MW * (1.0 + 1e-12):
        return CRYSTALLINE, ks, W, 0.0, 0.0, 0.0, beyond  # no water beyond the hydrate's (within rounding)
    x = (n - ms * W) / (1.0 - ms * nk * MW)  # moles of salt in the solid
    if x >= n or x != x:
        return CRYSTALLINE, ks, W, 0.0, 0.0, 0.0, beyond
    nd = n - x
    return BRINE_WITH_SALT, ks, x * nk * MW, nd / ms, 0.0, nd, beyond


@njit(cache=True, error_model="numpy")
def _freeze(n, W, i, f, tab, k_prev):
    """Ice + the stable hydrate from a parcel of water W: (solid, w_hyd, w_ice)."""
    ks = _stable(tab.stable, i, f)
    kk = ks if ks >= 0 else k_prev
    wh = min(n * tab.hydration[kk] * MW, W)
    return kk, wh, W - wh


@njit(cache=True, error_model="numpy", nogil=True)
def step_block(T, RH, P, frost, dt, n_salt, law, tab, st, out):
    """Advance every cell through ``T.shape[0]`` samples.

    Parameters (arrays are [step, cell] unless noted)
    ----------
    T, RH, P, frost : forcing samples [K], [-], [Pa], [kg m-2]; interval k ends at sample k.
    dt : [step] seconds from the previous sample to sample k.
    n_salt : [cell] moles of salt per m2.
    law : :data:`LawParams` -- ``instant`` (the equilibrium law; else vapour-limited with
        ``diffusion_length`` [m] and ``dfactor`` [-]), ``liquid_threshold`` [-] (fraction of the
        saturated-solution water below which a brine is not liquid), ``hydrate_instant``.
    tab : :data:`wetcycle.salts.tables.KernelTables` of the salt.
    st : :data:`KernelState`, [cell] arrays updated in place; ``prev`` [4, cell] holds the
        previous sample (T, RH, frost) and the frost already drawn by the parcel in the current
        frost episode [kg m-2]; ``started`` [cell] 1 once prev is valid.
    out : :data:`KernelOut`, [step, cell]: state, liquid fraction of the step, brine a_w (NaN
        without liquid brine), brine/hydrate/ice water [kg m-2], water gained from the
        surroundings in the step [kg m-2], and the validity flag (module docstring).
    """
    nstep, ncell = T.shape
    nT = tab.lnk.shape[1]
    nsolid = tab.hydration.shape[0]
    sc = tab.scal
    T_eut, T_sup, erh_raw = sc[_T_EUT], sc[_T_SUPER], sc[_ERH]
    T_min, T_max, m_ext, m_valid = sc[_T_MIN], sc[_T_MAX], sc[_M_EXT], sc[_M_VALID]
    S_nuc, md_depth = sc[_S_NUC], sc[_MD_DEPTH]
    tau_ref = sc[_TAU]
    m_max = sc[_M_MAX]
    has_erh = erh_raw == erh_raw
    erh = erh_raw if has_erh else 2.0
    T_floor = max(T_sup, T_min)
    instant = law.instant
    hyd = tab.hydration
    st_phase, st_solid, st_wh, st_wb, st_wi, st_nd, st_prev, st_started = st
    t_lnk, t_msat, t_drh, t_stable, t_mice, t_awice = tab.lnk, tab.msat, tab.drh, tab.stable, tab.mice, tab.awice
    t_T0, t_dT = tab.T0, tab.dT
    o_phase, o_liq, o_aw, o_wb, o_wh, o_wi, o_exch, o_flag = out
    for k in range(nstep):
        dtk = dt[k]
        for c in range(ncell):
            Tb_raw = T[k, c]
            RHb = min(max(RH[k, c], 1e-9), 1.0)
            Fb = frost[k, c]
            if st_started[c] == 0:
                st_prev[0, c], st_prev[1, c], st_prev[2, c] = Tb_raw, RHb, Fb
                st_prev[3, c] = 0.0
                st_started[c] = 1
            # The frost forcing knows nothing of the salt: what the parcel drew from the current
            # frost cover (prev[3]) is no longer available to it; a frost-free sample ends the episode.
            used = st_prev[3, c] if Fb > 0.0 else 0.0
            Fb = max(Fb - used, 0.0)
            drawn = 0.0
            Ta_raw, RHa = st_prev[0, c], st_prev[1, c]
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
            ib, fb = _loc(Tb, t_T0, t_dT, nT)
            ia, fa = _loc(Ta, t_T0, t_dT, nT)
            n = n_salt[c]
            s0 = st_phase[c]
            kk = st_solid[c]
            wh, wb, wi, nd = st_wh[c], st_wb[c], st_wi[c], st_nd[c]
            W0 = wh + wb + wi
            d_cur = _lin(t_drh[kk], ib, fb) if s0 == CRYSTALLINE else 0.0
            # Water's own properties (ice activity, vapour pressure, diffusion) use the true
            # temperature; only the salt's tables are read at the clamped one.  A dry salt below
            # its DRH never looks at ice, so the ice activity is evaluated only where it can be used.
            if Tb_raw > T_MELT:
                aw_i = 2.0
            elif Tb == Tb_raw:
                aw_i = _lin(t_awice, ib, fb)
            elif s0 != CRYSTALLINE or Fb > 0.0:
                aw_i = ice_activity_kernel(Tw)
            else:
                aw_i = -1.0  # a dry salt without frost: evaluated only where it deliquesces
            # air at ice saturation (within ICE_SAT_TOL, or frost present) counts as saturated:
            # over frost the forcing holds vapour exactly at p_ice, so an exact test would be a knife edge
            ice_sat = Tb_raw <= T_MELT and (Fb > 0.0 or (aw_i > 0.0 and RHb >= aw_i * (1.0 - ICE_SAT_TOL)))
            frost_touch = Fb > 0.0 and Tb_raw <= T_MELT
            psat = 0.0
            kx = 0.0
            if not instant and s0 != CRYSTALLINE:
                psat, kx = _exchange(Tw, P[k, c], law.dfactor, law.diffusion_length)
            # brine water below which the parcel is not liquid: a fraction of the saturated solution's
            ks_b = _stable(t_stable, ib, fb)
            ms_b = _lin(t_msat[ks_b], ib, fb) if ks_b >= 0 else math.nan
            W_thr = law.liquid_threshold * n / (ms_b if ms_b == ms_b else m_max)
            liq = 0.0
            W_flux = -1.0  # vapour-limited drying: water the flux alone would leave (-1: unset)
            eq_brine = False  # brine water set from a_w = RH this step (equilibrium law)
            beyond = False
            if s0 == CRYSTALLINE:
                # ---------------------------------------------------------------- dry (or damp) salt
                d_b = d_cur
                if d_b != d_b and Tb_raw >= T_eut:
                    # the current hydrate has no saturation curve here (e.g. above its peritectic):
                    # it cannot coexist with brine, so the stable solid decides deliquescence (an
                    # incongruent melt keeps the hydrate's water in the parcel)
                    if ks_b >= 0 and ks_b != kk:
                        d_s = _lin(t_drh[ks_b], ib, fb)
                        if d_s == d_s and RHb >= d_s:
                            kk = ks_b
                            d_b = d_s
                wet_T = Tb_raw >= T_eut or (not frost_touch and Tb_raw >= T_eut - md_depth)
                if frost_touch and Tb >= T_eut:
                    # contact melting with water frost up to the liquidus (minutes: Fischer et al. 2014)
                    mi = _lin(t_mice, ib, fb)
                    need = n / mi - W0 if mi == mi else 0.0
                    take = min(max(need, 0.0), Fb)
                    drawn = take
                    s1, kk, wh, wb, wi, nd, beyond = _partition(n, W0 + take, Tb, ib, fb, tab, kk, False, True,
                                                                erh, m_ext)
                    liq = 1.0 - _frac(Ta - T_eut, Tb - T_eut) if Ta < T_eut else 1.0
                elif d_b == d_b and RHb >= d_b and wet_T:
                    if aw_i < 0.0:
                        aw_i = ice_activity_kernel(Tw) if Tb_raw <= T_MELT else 2.0
                    if not instant:
                        psat, kx = _exchange(Tw, P[k, c], law.dfactor, law.diffusion_length)
                    d_a = _lin(t_drh[kk], ia, fa)
                    tau = _frac(RHa - d_a, RHb - d_b) if RHa < d_a else 0.0
                    if instant:
                        m_eq = _meq(RHb, Tb, tab)
                        if m_eq == m_eq and m_eq < M_DILUTE:
                            m_eq = M_DILUTE
                        W = n / m_eq if m_eq == m_eq else W0
                        eq_brine = True
                    else:
                        W = W0 + kx * (RHb - d_b) * psat * dtk * (1.0 - tau)
                        # ...but no more than brings the parcel to a_w = RH (no overshoot)
                        m_eq = _meq(RHb, Tb, tab)
                        if m_eq == m_eq:
                            W = min(W, max(W0, n / max(m_eq, M_DILUTE)))
                    wb0 = wb
                    s_prev, k_prev, wh_prev, wb_prev, nd_prev = CRYSTALLINE, kk, wh, wb, nd
                    s1, kk, wh, wb, wi, nd, beyond = _partition(n, W, Tb, ib, fb, tab, kk, False, False,
                                                                erh, m_ext)
                    if _is_liquid(s1) and Tb_raw <= T_MELT:
                        # a brine born beyond the ice-nucleation limit freezes at once: above the eutectic
                        # it sits on the liquidus with ice, below it the salt stays as it was
                        aw_n = RHb if (instant and s1 != BRINE_WITH_SALT) else _aw_of(nd, wb, Tb, tab)
                        if aw_n == aw_n and aw_n >= S_nuc * aw_i:
                            if Tb >= T_eut:
                                s1, kk, wh, wb, wi, nd, beyond = _partition(n, W, Tb, ib, fb, tab, kk, False, True,
                                                                            erh, m_ext)
                                eq_brine = False
                            else:
                                s1, kk, wh, wb, nd = s_prev, k_prev, wh_prev, wb_prev, nd_prev
                                wi = 0.0
                    if _is_liquid(s1):
                        liq = 1.0 - tau
                        if s1 == BRINE_WITH_SALT and wb0 < W_thr and wb > wb0:
                            # counted from the moment the growing brine passed the threshold
                            liq = min(liq, max((wb - W_thr) / (wb - wb0), 0.0))
                else:
                    s1 = CRYSTALLINE
                    if wb > 0.0:
                        # damp salt (brine below the threshold): the film dries toward the air
                        if instant or d_b != d_b:
                            wb, nd = 0.0, 0.0
                        elif not (RHb >= d_b):
                            psat, kx = _exchange(Tw, P[k, c], law.dfactor, law.diffusion_length)
                            wb = max(wb + kx * (RHb - d_b) * psat * dtk, 0.0)
                            nd = wb * ms_b if ms_b == ms_b else 0.0
                            if wb <= 0.0:
                                wb, nd = 0.0, 0.0
                    # the solid relaxes toward the hydrate stable at (T, RH)
                    if nsolid > 1:
                        k_eq = _hydrate_at(t_lnk, hyd, ib, fb, math.log(RHb))
                        w_eq = n * hyd[k_eq] * MW
                        if law.hydrate_instant or tau_ref <= 0.0:
                            kk, wh = k_eq, w_eq
                        elif wh != w_eq:
                            x = dtk * _lin(tab.khyd, ib, fb)  # dt / tau(T)
                            if x > 1e-12:  # (at Mars temperatures tau is centuries: nothing to do)
                                wh = w_eq + (wh - w_eq) * (math.exp(-x) if x > 1e-6 else 1.0 - x)
                                kk = _nearest_hydrate(hyd, wh / (n * MW), kk, k_eq)
            elif s0 == FROZEN:
                # ---------------------------------------------------------------- ice + hydrate
                if Tb >= T_eut:
                    s1, kk, wh, wb, wi, nd, beyond = _partition(n, W0, Tb, ib, fb, tab, kk, False, True, erh, m_ext)
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
                # ---------------------------------------------------------------- liquid states
                had_crystals = s0 == BRINE_WITH_SALT
                had_ice = wi > 0.0
                if Tb_raw < T_floor and Tb_raw < T_eut:
                    # supercooling (or the model's validity) ends: ice + hydrate
                    if T_min > T_sup:
                        flag |= FLAG_LOWER_LIMIT  # frozen at T_min: the supercooling limit lies lower
                    kk, wh, wi = _freeze(n, W0, ib, fb, tab, kk)
                    wb, nd = 0.0, 0.0
                    s1 = FROZEN
                    liq = _frac(Ta_raw - T_floor, Tb_raw - T_floor)
                elif Tb < T_eut and (had_ice or frost_touch):
                    # below the eutectic with ice present: the eutectic assemblage completes
                    kk, wh, wi = _freeze(n, W0, ib, fb, tab, kk)
                    wb, nd = 0.0, 0.0
                    s1 = FROZEN
                    # crossing of the eutectic, or mid-step for frost arriving below it (no criterion)
                    liq = _frac(Ta - T_eut, Tb - T_eut) if Ta >= T_eut else 0.5
                else:
                    W = W0
                    mi_b = _lin(t_mice, ib, fb) if Tb <= T_MELT else math.nan
                    if frost_touch and Tb >= T_eut and mi_b == mi_b:
                        # in contact with water frost: the brine stays on the ice liquidus, drawing
                        # water from the frost (contact melting), whatever the air does
                        if W0 < n / mi_b:
                            drawn = min(n / mi_b - W0, Fb)
                            W = W0 + drawn
                    elif instant:
                        if had_ice and ice_sat:
                            pass  # inside the ice field with ice: the parcel is closed (a_w fixed by ice)
                        else:
                            m_eq = _meq(RHb, Tb, tab)
                            if m_eq == m_eq:
                                eq_brine = m_eq >= M_DILUTE
                                m_eq = max(m_eq, M_DILUTE)
                                W = n / m_eq
                            else:
                                W = 0.0  # the air is drier than the model's most concentrated brine
                                # a model limit only where the branch ends before the efflorescence RH
                                beyond = (not had_crystals) and has_erh and erh < _aw(m_ext, Tb, tab)
                            if had_crystals and ms_b == ms_b and m_eq == m_eq and m_eq > ms_b:
                                W = 0.0  # crystals present: brine dries out below the DRH
                            elif (not had_crystals) and ms_b == ms_b and m_eq == m_eq and m_eq > ms_b:
                                # a crystal-free brine past saturation stays (supersaturated) while
                                # a_w >= ERH; below the ERH (never above the DRH; the DRH where no
                                # ERH is published) it crystallises and, the air being below the
                                # DRH, dries at once
                                e_b = _lin(t_drh[ks_b], ib, fb)
                                if has_erh and erh < e_b:
                                    e_b = erh
                                if RHb < e_b:
                                    W = 0.0
                    else:
                        if had_ice:
                            # the parcel's own ice exchanges at ice saturation; it cannot lose more than its ice
                            W = max(W0 + kx * (RHb - aw_i) * psat * dtk, W0 - wi)
                        elif had_crystals:
                            aws = _aw_of(nd, wb, Tb, tab)
                            W = W0 + kx * (RHb - aws) * psat * dtk
                            W_flux = W
                            if ks_b >= 0:  # a saturated brine dries down to the dry hydrate, no further
                                W = max(W, n * hyd[ks_b] * MW)
                            if ms_b == ms_b and ms_b > 0:  # ...and grows until the salt is dissolved, no further
                                W = min(W, max(W0, n / ms_b))
                        else:
                            m_eq = _meq(RHb, Tb, tab)
                            past = not (m_eq == m_eq)
                            if past:
                                m_eq = m_ext
                            m_eq = max(m_eq, M_DILUTE)
                            W_eq = n / m_eq
                            # exponential relaxation toward W_eq with the secant time constant:
                            # the initial flux is exactly F = kx psat (RH - a_w) (Fick), no overshoot
                            aw0 = _aw_of(n, W0, Tb, tab)
                            dWeq = W_eq - W0
                            if dWeq != 0.0 and aw0 == aw0 and (RHb - aw0) * dWeq > 0.0:
                                rate = kx * psat * (RHb - aw0) / dWeq
                                W = W_eq - dWeq * math.exp(-rate * dtk)
                            if past and W <= W_eq * (1.0 + 1e-6) and has_erh and erh < _aw(m_ext, Tb, tab):
                                # reached the end of the branch before the efflorescence RH:
                                # solidify as the hydrate (its water stays in the solid)
                                W = n * hyd[ks_b] * MW if ks_b >= 0 else 0.0
                                beyond = True
                        W = max(W, 0.0)
                    allow = (not had_crystals) and W > 0.0  # _partition checks a_w >= ERH
                    ice_ok = had_ice or frost_touch
                    s1, kk, wh, wb, wi, nd, bp = _partition(n, W, Tb, ib, fb, tab, kk, allow, ice_ok, erh, m_ext)
                    beyond = beyond or (bp and not had_crystals)
                    # ice nucleation in an ice-free brine
                    if _is_liquid(s1) and wi <= 0.0 and Tb_raw <= T_MELT:
                        aw_b = RHb if eq_brine and s1 != BRINE_WITH_SALT else _aw_of(nd, wb, Tb, tab)
                        if aw_b == aw_b and aw_b >= S_nuc * aw_i:
                            if Tb >= T_eut:
                                s1, kk, wh, wb, wi, nd, bp = _partition(n, W, Tb, ib, fb, tab, kk, allow, True,
                                                                        erh, m_ext)
                                eq_brine = False
                            else:
                                aw_a = _aw_of(st_nd[c], st_wb[c], Ta, tab)
                                ai_a = ice_activity_kernel(min(max(Ta_raw, T_WATER_MIN), T_MELT))
                                kk, wh, wi = _freeze(n, W, ib, fb, tab, kk)
                                wb, nd = 0.0, 0.0
                                s1 = FROZEN
                                liq = _frac(aw_a - S_nuc * ai_a, aw_b - S_nuc * aw_i) if aw_a == aw_a else 0.5
                    if s1 == CRYSTALLINE:
                        # crystallised from the brine: the stable solid in contact with it, its water
                        # from the air (equilibrium law) or what the brine left (vapour-limited)
                        if instant:
                            kk = ks_b if ks_b >= 0 else kk
                            if law.hydrate_instant or tau_ref <= 0.0:
                                kk = _hydrate_at(t_lnk, hyd, ib, fb, math.log(RHb)) if nsolid > 1 else kk
                            wh = n * hyd[kk] * MW
                            wb, wi, nd = 0.0, 0.0, 0.0
                            if had_crystals:
                                d_a = _lin(t_drh[kk], ia, fa)
                                d_b = _lin(t_drh[kk], ib, fb)
                                liq = _frac(RHa - d_a, RHb - d_b)
                            elif beyond:
                                # solidified at the end of the branch: crossing of a_w(m_ext, T)
                                liq = _frac(RHa - _aw(m_ext, Ta, tab), RHb - _aw(m_ext, Tb, tab))
                            elif has_erh:
                                # efflorescence can never lie above the deliquescence RH
                                e_a = min(erh, _lin(t_drh[kk], ia, fa))
                                e_b = min(erh, _lin(t_drh[kk], ib, fb))
                                liq = _frac(RHa - e_a, RHb - e_b)
                            else:
                                d_a = _lin(t_drh[kk], ia, fa)
                                d_b = _lin(t_drh[kk], ib, fb)
                                liq = _frac(RHa - d_a, RHb - d_b)
                        else:
                            # the brine lasted while the flux removed the water above the dry hydrate
                            dW = W0 - (W_flux if W_flux >= 0.0 else W)
                            liq = min(wb_prev_frac(W0, wh, dW), 1.0)
                    elif s1 != FROZEN:
                        liq = 1.0
                    if beyond and not _is_liquid(s1):
                        flag |= FLAG_MOLALITY_LIMIT
            # a brine with crystals below the threshold water is a damp salt, not liquid
            if s1 == BRINE_WITH_SALT and wb < W_thr:
                s1 = CRYSTALLINE
                if _is_liquid(s0):
                    # the brine ended when its water crossed the threshold
                    if W_flux >= 0.0 and W0 - W_flux > 0.0:
                        liq = min(max((st_wb[c] - W_thr) / (W0 - W_flux), 0.0), 1.0)
                    else:
                        liq = min(liq, 0.5)
                else:
                    liq = 0.0
            # below the eutectic: liquid states are metastable (crystal-free: supercooled)
            if Tb < T_eut and (s1 == BRINE or s1 == SUPERSATURATED):
                s1 = SUPERCOOLED
            elif Tb < T_eut and s1 == BRINE_WITH_ICE:
                kk, wh, wi = _freeze(n, wh + wb + wi, ib, fb, tab, kk)
                wb, nd = 0.0, 0.0
                s1 = FROZEN
            W1 = wh + wb + wi
            st_phase[c] = s1
            st_solid[c] = kk
            st_wh[c], st_wb[c], st_wi[c], st_nd[c] = wh, wb, wi, nd
            wet = _is_liquid(s1)
            o_phase[k, c] = s1
            o_liq[k, c] = liq if (wet or liq > 0.0) else 0.0
            if wet:
                if instant and eq_brine and (s1 == BRINE or s1 == SUPERSATURATED or s1 == SUPERCOOLED) and wi <= 0.0:
                    o_aw[k, c] = RHb  # equilibrium law: the single-phase brine has a_w = RH by construction
                else:
                    o_aw[k, c] = _aw_of(nd, wb, Tb, tab)
                if wb > 0.0 and nd / wb > m_valid * (1.0 + 1e-9):
                    flag |= FLAG_EXTRAPOLATED
            else:
                o_aw[k, c] = math.nan
            o_wb[k, c] = wb
            o_wh[k, c] = wh
            o_wi[k, c] = wi
            o_exch[k, c] = W1 - W0
            o_flag[k, c] = flag
            st_prev[0, c], st_prev[1, c], st_prev[2, c] = Tb_raw, RHb, frost[k, c]
            if frost[k, c] > 0.0:
                st_prev[3, c] = used + drawn
            elif st_prev[3, c] != 0.0:
                st_prev[3, c] = 0.0  # the frost cover is gone: the next one is a new budget


@njit(cache=True, inline="always")
def wb_prev_frac(W0, wh_new, dW):
    """Fraction of a vapour-limited step during which brine remained while it dried out."""
    liquid0 = W0 - wh_new
    if dW <= 0.0:
        return 1.0
    return max(min(liquid0 / dW, 1.0), 0.0)
