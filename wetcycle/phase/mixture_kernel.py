"""The phase-state kernel of a salt mixture: many cells, a block of time steps, equilibrium tables.

Each cell holds a parcel of a mixture: M [kg m-2] of anhydrous salts and W [kg m-2] of water
(u = W / M per kg of salt).  Everything the kernel knows of the mixture comes from the tables
of :func:`wetcycle.brines.mixture.build_tables` (:data:`MixTables`): at temperature T the salts
hold up to u_dry(T) as hydrate water with neither brine nor ice; beyond it (v = u - u_dry) the
equilibrium water activity a_w(T, v), brine water, ice, dissolved fraction and ion molalities.
The kernel takes the same forcing as :func:`wetcycle.phase.kernel.step_block` and fills the same
output arrays, so statistics and results need no change; it imports the binary kernel's vapour
exchange (:func:`wetcycle.phase.kernel._exchange`), not a copy of it.

Physics
-------
* **Equilibrium states only.**  The parcel's state at (T, u) is the stable assemblage: no
  supersaturated brine below the mutual deliquescence RH, no supercooling below the mixture's
  eutectic, no ice-nucleation barrier (the binary kernel's metastability is not modelled for
  mixtures: a stated limitation, recorded in results).
* **Water exchange** (vapour-limited law) at the rate of the binary kernel,
  F = k_x p_sat (RH - a_s), where a_s is the parcel's water activity from the tables: the brine's
  (a_w,ice with ice) beyond u_dry; for an all-solid parcel (u <= u_dry) that of its hydrates, the
  dual of the water balance in the solid-only Gibbs minimum (between two hydrates their transition
  RH), so hydrates gain and lose water through the vapour at the same diffusion-limited rate (the
  binary kernel's "instant where no rate is published", slowed by vapour diffusion).  W relaxes
  toward the water content W_eq where a_s = RH (the smallest such with uptake, the largest with
  loss) with the secant time constant (W_eq - W0) / F, so the initial flux is exactly F and a step
  never overshoots W_eq.  The equilibrium law sets W = W_eq at once; with ice present and air at or
  above ice saturation the parcel is closed (a_w fixed by ice), and an ice-free parcel fills only
  up to the first ice.  W is capped at the table's last v.
* **Frost contact** (T <= 273.15 K, frost present): the parcel draws frost up to the first ice
  (the brine on the ice liquidus) at once, from the frost budget of the current cover (``prev[3]``),
  as the binary kernel does; no exchange with the air in that step.
* **Liquid** when the dissolved fraction reaches ``liquid_threshold`` (the binary kernel's rule,
  n_diss / n >= threshold, in charge equivalents).  The liquid time of a step is placed where
  g = dissolved fraction - threshold crosses zero, linearly between the step's ends (so liquid
  hours converge as the step shrinks).
* **States** from the table: brine with ice, brine with salt (some salt undissolved), brine
  (all dissolved), frozen (ice, no liquid), crystalline (no liquid, no ice; a sub-threshold brine
  film is a damp salt).

Limits (flag bits as the binary kernel's): 1, temperature outside the table range (tables read
at the nearest end; water's own properties at the true temperature); 8, a liquid step whose brine
uses a binary below its validity range or more concentrated than its data (extrapolated a_w).

Water is conserved to rounding: hydrate + brine + ice water changes exactly by the exchange.
"""

from __future__ import annotations

import math
from collections import namedtuple

from numba import njit

from ..water import ice_activity_kernel
from .kernel import FLAG_CLAMPED, FLAG_EXTRAPOLATED, T_MELT, T_WATER_MAX, T_WATER_MIN, _exchange
from .states import BRINE, BRINE_WITH_ICE, BRINE_WITH_SALT, CRYSTALLINE, FROZEN

#: The tables as the kernel reads them (see wetcycle.brines.mixture.MixtureTables).
MixTables = namedtuple("MixTables", ("T0", "dT", "v0", "dlv", "u_dry", "aw_solid", "awice", "aw", "lw", "iw", "diss",
                                     "mol", "flag"))
#: Parcel state [cell] arrays, updated in place; ``prev`` [5, cell]: T, RH, frost of the last sample,
#: frost drawn in the current cover, and the liquid criterion g at the end of the last step.
MixState = namedtuple("MixState", ("W", "prev", "started"))
#: Outputs [step, cell] (as :data:`wetcycle.phase.kernel.KernelOut`) and ``mol`` [step, cell, ion]
#: (brine molalities; a [0, 0, 0] array skips them).
MixOut = namedtuple("MixOut", ("phase", "liq", "aw", "wb", "wh", "wi", "exch", "flag", "mol"))
#: Temperature grid of the vapour-exchange table [K]: Murphy & Koop's liquid range at 0.05 K.
XT0, XDT = T_WATER_MIN, 0.05
XN = int(round((T_WATER_MAX - T_WATER_MIN) / XDT)) + 1


def exchange_table(dfactor, length):
    """k_x p_sat [kg m-2 s-1] of the vapour-limited law at 1e5 Pa on XT0 + XDT k, from the binary kernel's
    :func:`wetcycle.phase.kernel._exchange` (k_x scales as 1/P).  Linear interpolation at 0.05 K is within
    1e-5 (relative) of the function (the curvature of ln p_sat, ~2 L / (R T^3), times 0.05^2 / 8)."""
    import numpy as np
    out = np.empty(XN)
    for k in range(XN):
        psat, kx = _exchange(XT0 + XDT * k, 1e5, dfactor, length)
        out[k] = psat * kx
    return out


#: A dissolved fraction this close to 1 counts as all salt dissolved.
ALL_DISSOLVED = 1.0 - 1e-9


@njit(cache=True, inline="always", error_model="numpy", _nrt=False)
def _tloc(T, T0, dT, n):
    x = (T - T0) / dT
    if x <= 0.0:
        return 0, 0.0
    if x >= n - 1:
        return max(n - 2, 0), 1.0 if n > 1 else 0.0
    i = int(x)
    return i, x - i


@njit(cache=True, inline="always", error_model="numpy", _nrt=False)
def _vloc(v, v0, dlv, nv):
    """(j, w, below): column j and weight w toward j+1; below: v < v0 (w = v / v0 toward column 0)."""
    if v < v0:
        return 0, max(v, 0.0) / v0, True
    x = math.log(v / v0) / dlv
    if x >= nv - 1:
        return nv - 2, 1.0, False
    j = int(x)
    return j, x - j, False


# Speed: the kernel and its helpers are compiled without reference counting (``_nrt=False``: they
# allocate nothing), and the helpers (inlined into the kernel) take the tables' arrays one by one,
# hoisted out of the loops.  With reference counting, every array passed to an inlined helper or read
# from the tables' tuple inside a loop took an atomic increment and decrement: a third of the time.

@njit(cache=True, inline="always", error_model="numpy", _nrt=False)
def _lerp(tab, i, j, w):
    return tab[i, j] + w * (tab[i, j + 1] - tab[i, j])


@njit(cache=True, inline="always", error_model="numpy", _nrt=False)
def _at(u_dry, aw_solid, aw, lw, iw, diss, v0, dlv, i, f, u):
    """(a_s, brine water, ice, dissolved fraction, all solid) per kg of salt at T row position (i, f) and u.

    Each T row is read at its own v = u - u_dry(T) (or, all solid, at s = u / u_dry) and the two
    rows are blended.  Below v0 an amount (brine or ice water, dissolved fraction) goes linearly
    to 0 at v = 0 and a_w is the column-0 value.
    """
    nv = aw.shape[1]
    i1 = min(i + 1, aw.shape[0] - 1)
    ud0 = u_dry[i]
    ud1 = u_dry[i1]
    if u <= ud0 and u <= ud1 and ud0 > 0.0 and ud1 > 0.0:
        # all solid in both rows (the common case on Mars): straight-line code
        ns1 = aw_solid.shape[1] - 1
        x0 = max(u, 0.0) / ud0 * ns1
        j0 = min(int(x0), ns1 - 1)
        x1 = max(u, 0.0) / ud1 * ns1
        j1 = min(int(x1), ns1 - 1)
        a0 = _lerp(aw_solid, i, j0, x0 - j0)
        a1 = _lerp(aw_solid, i1, j1, x1 - j1)
        return a0 + f * (a1 - a0), 0.0, 0.0, 0.0, True
    a = 0.0
    lwv = 0.0
    iwv = 0.0
    ds = 0.0
    solid = 0.0
    for r in range(2):
        ii = i + r
        wt = (1.0 - f) if r == 0 else f
        if wt == 0.0 or ii >= aw.shape[0]:
            continue
        ud = u_dry[ii]
        v = u - ud
        if v <= 0.0:
            solid += wt
            if ud > 0.0:
                ns = aw_solid.shape[1]
                x = max(u, 0.0) / ud * (ns - 1)
                js = min(int(x), ns - 2)
                a += wt * _lerp(aw_solid, ii, js, x - js)
            else:
                a += wt * aw[ii, 0]
            continue
        j, w, below = _vloc(v, v0, dlv, nv)
        if below:
            a += wt * aw[ii, 0]
            lwv += wt * (w * lw[ii, 0])
            iwv += wt * (w * iw[ii, 0])
            ds += wt * (w * diss[ii, 0])
        else:
            a += wt * _lerp(aw, ii, j, w)
            lwv += wt * _lerp(lw, ii, j, w)
            iwv += wt * _lerp(iw, ii, j, w)
            ds += wt * _lerp(diss, ii, j, w)
    return a, lwv, iwv, ds, solid >= 1.0


@njit(cache=True, inline="always", error_model="numpy", _nrt=False)
def _u_of_aw(u_dry, sa, aw, v0, dlv, i, f, target, uptake):
    """Water content u [kg kg-1] where the blended a_w reaches ``target``.

    ``uptake``: the smallest u with a_w >= target (the last column if none); else the largest u
    with a_w <= target (u_dry if none: the air is drier than the first brine).  Blends the two T
    rows' columns at equal v offsets from their own u_dry, which keeps a_w monotone in u.
    """
    nv = aw.shape[1]
    ud = (1.0 - f) * u_dry[i] + f * u_dry[i + 1] if i + 1 < aw.shape[0] else u_dry[i]
    i1 = i + 1 if i + 1 < aw.shape[0] else i
    a_m = (1.0 - f) * aw[i, 0] + f * aw[i1, 0]
    if (uptake and target <= a_m) or ((not uptake) and target < a_m):
        # the all-solid part, u = s u_dry: hydrate water in equilibrium with the air
        if not ud > 0.0:
            return 0.0
        ns = sa.shape[1]
        if uptake:
            # smallest j with a(j) >= target, by bisection (a is non-decreasing)
            if (1.0 - f) * sa[i, ns - 1] + f * sa[i1, ns - 1] < target:
                return ud
            if (1.0 - f) * sa[i, 0] + f * sa[i1, 0] >= target:
                return 0.0
            lo, hi = 0, ns - 1
            while hi - lo > 1:
                mid = (lo + hi) // 2
                up = (1.0 - f) * sa[i, mid] + f * sa[i1, mid] >= target
                hi = mid if up else hi
                lo = lo if up else mid
        else:
            # largest j with a(j) <= target
            if (1.0 - f) * sa[i, 0] + f * sa[i1, 0] > target:
                return 0.0
            if (1.0 - f) * sa[i, ns - 1] + f * sa[i1, ns - 1] <= target:
                return ud
            lo, hi = 0, ns - 1
            while hi - lo > 1:
                mid = (lo + hi) // 2
                dn = (1.0 - f) * sa[i, mid] + f * sa[i1, mid] <= target
                lo = mid if dn else lo
                hi = hi if dn else mid
        al = (1.0 - f) * sa[i, lo] + f * sa[i1, lo]
        ah = (1.0 - f) * sa[i, lo + 1] + f * sa[i1, lo + 1]
        t = (target - al) / (ah - al) if ah > al else (1.0 if uptake else 0.0)
        return ud * (lo + min(max(t, 0.0), 1.0)) / (ns - 1)
    lo = 0
    hi = nv - 1
    if uptake:
        # smallest j with a(j) >= target
        if (1.0 - f) * aw[i, nv - 1] + f * aw[i1, nv - 1] < target:
            return ud + v0 * math.exp(dlv * (nv - 1))
        if a_m >= target:
            return ud + v0
        while hi - lo > 1:
            mid = (lo + hi) // 2
            up = (1.0 - f) * aw[i, mid] + f * aw[i1, mid] >= target
            hi = mid if up else hi
            lo = lo if up else mid
    else:
        # largest j with a(j) <= target
        if a_m > target:
            return ud
        if (1.0 - f) * aw[i, nv - 1] + f * aw[i1, nv - 1] <= target:
            return ud + v0 * math.exp(dlv * (nv - 1))
        while hi - lo > 1:
            mid = (lo + hi) // 2
            dn = (1.0 - f) * aw[i, mid] + f * aw[i1, mid] <= target
            lo = mid if dn else lo
            hi = hi if dn else mid
    al = (1.0 - f) * aw[i, lo] + f * aw[i1, lo]
    ah = (1.0 - f) * aw[i, hi] + f * aw[i1, hi]
    t = (target - al) / (ah - al) if ah > al else (1.0 if uptake else 0.0)
    t = min(max(t, 0.0), 1.0)
    return ud + v0 * math.exp(dlv * (lo + t))


@njit(cache=True, inline="always", error_model="numpy", _nrt=False)
def _u_first_ice(u_dry, sa, aw, iw, awice, v0, dlv, i, f):
    """Smallest u with ice in the blended rows: where the brine's a_w reaches a_w,ice (inf without ice)."""
    nv = aw.shape[1]
    i1 = i + 1 if i + 1 < aw.shape[0] else i
    if not (1.0 - f) * iw[i, nv - 1] + f * iw[i1, nv - 1] > 0.0:
        return math.inf
    ai = (1.0 - f) * awice[i] + f * awice[i1]
    return _u_of_aw(u_dry, sa, aw, v0, dlv, i, f, ai * (1.0 - 1e-9), True)


@njit(cache=True, inline="always", error_model="numpy", _nrt=False)
def u_of_aw(tb, i, f, target, uptake):
    """:func:`_u_of_aw` on a :data:`MixTables` (for callers outside the kernel's loops)."""
    return _u_of_aw(tb.u_dry, tb.aw_solid, tb.aw, tb.v0, tb.dlv, i, f, target, uptake)


@njit(cache=True, error_model="numpy", nogil=True, _nrt=False)
def step_mixture_block(T, RH, P, frost, dt, mass, law, xtab, tb, st, out):
    """Advance every cell through ``T.shape[0]`` samples (arguments as ``kernel.step_block``).

    mass : [cell] kg m-2 of anhydrous salt mixture.  law : ``kernel.LawParams`` (``hydrate_instant``
    unused).  xtab : :func:`exchange_table` of the law's settings.  tb : :data:`MixTables`.
    st : :data:`MixState`.  out : :data:`MixOut`.
    """
    nstep, ncell = T.shape
    nT = tb.aw.shape[0]
    nv = tb.aw.shape[1]
    T_lo = tb.T0
    T_hi = tb.T0 + tb.dT * (nT - 1)
    u_cap = tb.v0 * math.exp(tb.dlv * (nv - 1))
    instant = law.instant
    thr = law.liquid_threshold
    want_mol = out.mol.shape[0] > 0
    nion = tb.mol.shape[2]
    st_W, st_prev, st_started = st
    o_phase, o_liq, o_aw, o_wb, o_wh, o_wi, o_exch, o_flag, o_mol = out
    t_udry, t_awice, t_flag, t_mol = tb.u_dry, tb.awice, tb.flag, tb.mol
    t_sa, t_aw, t_lw, t_iw, t_diss = tb.aw_solid, tb.aw, tb.lw, tb.iw, tb.diss
    t_T0, t_dT, t_v0, t_dlv = tb.T0, tb.dT, tb.v0, tb.dlv
    for k in range(nstep):
        dtk = dt[k]
        for c in range(ncell):
            Tb_raw = T[k, c]
            RHb = min(max(RH[k, c], 1e-9), 1.0)
            Fb = frost[k, c]
            M = mass[c]
            W0 = st_W[c]
            if st_started[c] == 0:
                st_prev[0, c], st_prev[1, c], st_prev[2, c] = Tb_raw, RHb, Fb
                st_prev[3, c] = 0.0
                st_prev[4, c] = math.nan
                st_started[c] = 1
            used = st_prev[3, c] if Fb > 0.0 else 0.0
            Fb = max(Fb - used, 0.0)
            drawn = 0.0
            flag = 0
            Tb = Tb_raw
            if Tb < T_lo or Tb > T_hi:
                flag = FLAG_CLAMPED
                Tb = min(max(Tb, T_lo), T_hi)
            Tw = Tb_raw
            if Tw < T_WATER_MIN or Tw > T_WATER_MAX:
                flag = FLAG_CLAMPED
                Tw = min(max(Tw, T_WATER_MIN), T_WATER_MAX)
            i, f = _tloc(Tb, t_T0, t_dT, nT)
            u0 = W0 / M
            a_s, lw0, iw0, ds0, dry = _at(t_udry, t_sa, t_aw, t_lw, t_iw, t_diss, t_v0, t_dlv, i, f, u0)
            W = W0
            frost_touch = Fb > 0.0 and Tb_raw <= T_MELT
            if frost_touch:
                # contact melting up to the first ice (the brine on its liquidus), from the frost budget
                ui = _u_first_ice(t_udry, t_sa, t_aw, t_iw, t_awice, t_v0, t_dlv, i, f)
                if ui < math.inf:
                    need = ui * M - W0
                    if need > 0.0:
                        drawn = min(need, Fb)
                        W = W0 + drawn
            elif instant:
                if RHb > a_s:
                    u_t = _u_of_aw(t_udry, t_sa, t_aw, t_v0, t_dlv, i, f, RHb, True)
                    if Tb_raw > T_MELT:
                        aw_i = 2.0
                    elif Tb == Tb_raw:  # the tabulated ice activity (exact at the rows, linear between)
                        aw_i = (1.0 - f) * t_awice[i] + f * t_awice[min(i + 1, nT - 1)]
                    else:
                        aw_i = ice_activity_kernel(Tw)
                    if RHb >= aw_i * (1.0 - 1e-5):
                        # at or above ice saturation: closed once ice is present, else up to the first ice
                        ui = _u_first_ice(t_udry, t_sa, t_aw, t_iw, t_awice, t_v0, t_dlv, i, f)
                        if iw0 > 0.0:
                            u_t = u0
                        elif ui < u_t:
                            u_t = ui
                    W = u_t * M
                elif RHb < a_s:
                    W = _u_of_aw(t_udry, t_sa, t_aw, t_v0, t_dlv, i, f, RHb, False) * M
            elif RHb != a_s:
                up = RHb > a_s
                u_t = _u_of_aw(t_udry, t_sa, t_aw, t_v0, t_dlv, i, f, RHb, up)
                dWt = u_t * M - W0
                if dWt != 0.0 and (dWt > 0.0) == up:
                    xx = (Tw - XT0) / XDT
                    ix = min(int(xx), XN - 2)
                    kp = (xtab[ix] + (xx - ix) * (xtab[ix + 1] - xtab[ix])) * (1e5 / max(P[k, c], 1.0))
                    rate = kp * abs(RHb - a_s) / abs(dWt)
                    W = u_t * M - dWt * math.exp(-rate * dtk)
            W = min(max(W, 0.0), max(u_cap * M, W0))
            if W == W0:
                a1, lw1, iw1, ds1 = a_s, lw0, iw0, ds0
            elif W <= M * min(t_udry[i], t_udry[min(i + 1, nT - 1)]):
                a1, lw1, iw1, ds1 = a_s, 0.0, 0.0, 0.0  # all solid in both rows (a1 is used only with brine)
            else:
                a1, lw1, iw1, ds1, dry1 = _at(t_udry, t_sa, t_aw, t_lw, t_iw, t_diss, t_v0, t_dlv, i, f, W / M)
            wb = lw1 * M
            wi = iw1 * M
            if wb + wi > W:  # interpolation of amounts never exceeds the water present
                s = W / (wb + wi)
                wb *= s
                wi *= s
            wh = W - wb - wi
            g1 = ds1 - thr if wb > 0.0 else -1.0
            g0 = st_prev[4, c]
            if g0 != g0:
                g0 = g1
            if g1 >= 0.0 and g0 >= 0.0:
                liq = 1.0
            elif g1 < 0.0 and g0 < 0.0:
                liq = 0.0
            elif g1 >= 0.0:
                liq = g1 / (g1 - g0)  # wet from the crossing to the end
            else:
                liq = g0 / (g0 - g1)  # wet from the start to the crossing
            wet = g1 >= 0.0
            if wet:
                if wi > 0.0:
                    s1 = BRINE_WITH_ICE
                elif ds1 < ALL_DISSOLVED:
                    s1 = BRINE_WITH_SALT
                else:
                    s1 = BRINE
            elif wi > 0.0:
                s1 = FROZEN
            else:
                s1 = CRYSTALLINE
            o_phase[k, c] = s1
            o_liq[k, c] = liq
            o_aw[k, c] = a1 if wet else math.nan
            o_wb[k, c] = wb
            o_wh[k, c] = wh
            o_wi[k, c] = wi
            o_exch[k, c] = W - W0
            if wet or liq > 0.0:
                ft = t_flag[i, 0] if f < 0.5 else t_flag[min(i + 1, nT - 1), 0]
                v1 = W / M - t_udry[i]
                if v1 > 0.0:
                    j, w, below = _vloc(v1, t_v0, t_dlv, nv)
                    ft = t_flag[i, j if w < 0.5 or below else j + 1]
                flag |= ft & FLAG_EXTRAPOLATED
            o_flag[k, c] = flag
            if want_mol:
                if wb > 0.0:
                    v1 = W / M - t_udry[i]
                    i1 = min(i + 1, nT - 1)
                    v2 = W / M - t_udry[i1]
                    for q in range(nion):
                        m = 0.0
                        if v1 > 0.0:
                            j, w, below = _vloc(v1, t_v0, t_dlv, nv)
                            m += (1.0 - f) * (t_mol[i, 0, q] if below else
                                              t_mol[i, j, q] + w * (t_mol[i, j + 1, q] - t_mol[i, j, q]))
                        if v2 > 0.0 and f > 0.0:
                            j, w, below = _vloc(v2, t_v0, t_dlv, nv)
                            m += f * (t_mol[i1, 0, q] if below else
                                      t_mol[i1, j, q] + w * (t_mol[i1, j + 1, q] - t_mol[i1, j, q]))
                        o_mol[k, c, q] = m
                else:
                    for q in range(nion):
                        o_mol[k, c, q] = math.nan
            st_W[c] = W
            st_prev[0, c], st_prev[1, c], st_prev[2, c] = Tb_raw, RHb, frost[k, c]
            st_prev[4, c] = g1
            if frost[k, c] > 0.0:
                st_prev[3, c] = used + drawn
            elif st_prev[3, c] != 0.0:
                st_prev[3, c] = 0.0
