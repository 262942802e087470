"""The mixture phase kernel as it was before its speed-up (wetcycle commit 45076c1), kept as a test oracle.

``tests/test_mixture_stepper.py`` checks that :func:`wetcycle.phase.mixture_kernel.step_mixture_block`
gives the same numbers as this one on random forcing: the speed-up changed how the kernel reads its
tables (no reference counting, arrays hoisted out of the loops, ...), not what it computes.  Do not
edit it to follow a physics change of the kernel: a deliberate change of results replaces this file
(and says so in the commit).

Source of the check it serves: an invariant, not a published value -- a rewrite for speed must
not change what the kernel computes; the physics behind both kernels is checked against published
data in ``tests/test_mixture_stepper.py`` (Greenspan 1977; Tang & Munkelwitz 1993; Gough et al.
2014).
"""

from __future__ import annotations

import math

from numba import njit

from wetcycle.water import ice_activity_kernel
from wetcycle.phase.kernel import FLAG_CLAMPED, FLAG_EXTRAPOLATED, T_MELT, T_WATER_MAX, T_WATER_MIN
from wetcycle.phase.states import BRINE, BRINE_WITH_ICE, BRINE_WITH_SALT, CRYSTALLINE, FROZEN

from wetcycle.phase.mixture_kernel import XDT, XN, XT0  # noqa: E402

#: A dissolved fraction this close to 1 counts as all salt dissolved.
ALL_DISSOLVED = 1.0 - 1e-9


@njit(cache=True, inline="always", error_model="numpy")
def _tloc(T, T0, dT, n):
    x = (T - T0) / dT
    if x <= 0.0:
        return 0, 0.0
    if x >= n - 1:
        return max(n - 2, 0), 1.0 if n > 1 else 0.0
    i = int(x)
    return i, x - i


@njit(cache=True, inline="always", error_model="numpy")
def _vloc(v, v0, dlv, nv):
    """(j, w, below): column j and weight w toward j+1; below: v < v0 (w = v / v0 toward column 0)."""
    if v < v0:
        return 0, max(v, 0.0) / v0, True
    x = math.log(v / v0) / dlv
    if x >= nv - 1:
        return nv - 2, 1.0, False
    j = int(x)
    return j, x - j, False


@njit(cache=True, inline="always", error_model="numpy")
def _row(tab, i, j, w, below):
    """a_w at column position (j, w) of T row i (below v0: the column-0 value)."""
    if below:
        return tab[i, 0]
    return tab[i, j] + w * (tab[i, j + 1] - tab[i, j])


@njit(cache=True, inline="always", error_model="numpy")
def _amount(tab, i, j, w, below):
    """An amount (brine or ice water, dissolved fraction) at (j, w): 0 at v = 0, linear to column 0."""
    if below:
        return w * tab[i, 0]
    return tab[i, j] + w * (tab[i, j + 1] - tab[i, j])


@njit(cache=True, inline="always", error_model="numpy")
def _at(tb, i, f, u):
    """(a_s, brine water, ice, dissolved fraction, all solid) per kg of salt at T row position (i, f) and u.

    Each T row is read at its own v = u - u_dry(T) (or, all solid, at s = u / u_dry) and the two
    rows are blended.
    """
    nv = tb.aw.shape[1]
    i1 = min(i + 1, tb.aw.shape[0] - 1)
    ud0 = tb.u_dry[i]
    ud1 = tb.u_dry[i1]
    if u <= ud0 and u <= ud1 and ud0 > 0.0 and ud1 > 0.0:
        # all solid in both rows (the common case on Mars): straight-line code
        ns1 = tb.aw_solid.shape[1] - 1
        x0 = max(u, 0.0) / ud0 * ns1
        j0 = min(int(x0), ns1 - 1)
        x1 = max(u, 0.0) / ud1 * ns1
        j1 = min(int(x1), ns1 - 1)
        sa = tb.aw_solid
        a0 = sa[i, j0] + (x0 - j0) * (sa[i, j0 + 1] - sa[i, j0])
        a1 = sa[i1, j1] + (x1 - j1) * (sa[i1, j1 + 1] - sa[i1, j1])
        return a0 + f * (a1 - a0), 0.0, 0.0, 0.0, True
    a = 0.0
    lw = 0.0
    iw = 0.0
    ds = 0.0
    solid = 0.0
    for r in range(2):
        ii = i + r
        wt = (1.0 - f) if r == 0 else f
        if wt == 0.0 or ii >= tb.aw.shape[0]:
            continue
        ud = tb.u_dry[ii]
        v = u - ud
        if v <= 0.0:
            solid += wt
            if ud > 0.0:
                ns = tb.aw_solid.shape[1]
                x = max(u, 0.0) / ud * (ns - 1)
                js = min(int(x), ns - 2)
                a += wt * (tb.aw_solid[ii, js] + (x - js) * (tb.aw_solid[ii, js + 1] - tb.aw_solid[ii, js]))
            else:
                a += wt * tb.aw[ii, 0]
            continue
        j, w, below = _vloc(v, tb.v0, tb.dlv, nv)
        a += wt * _row(tb.aw, ii, j, w, below)
        lw += wt * _amount(tb.lw, ii, j, w, below)
        iw += wt * _amount(tb.iw, ii, j, w, below)
        ds += wt * _amount(tb.diss, ii, j, w, below)
    return a, lw, iw, ds, solid >= 1.0


@njit(cache=True, inline="always", error_model="numpy")
def _u_of_aw(tb, i, f, target, uptake):
    """Water content u [kg kg-1] where the blended a_w reaches ``target``.

    ``uptake``: the smallest u with a_w >= target (the last column if none); else the largest u
    with a_w <= target (u_dry if none: the air is drier than the first brine).  Blends the two T
    rows' columns at equal v offsets from their own u_dry, which keeps a_w monotone in u.
    """
    nv = tb.aw.shape[1]
    ud = (1.0 - f) * tb.u_dry[i] + f * tb.u_dry[i + 1] if i + 1 < tb.aw.shape[0] else tb.u_dry[i]
    i1 = i + 1 if i + 1 < tb.aw.shape[0] else i
    a_m = (1.0 - f) * tb.aw[i, 0] + f * tb.aw[i1, 0]
    if (uptake and target <= a_m) or ((not uptake) and target < a_m):
        # the all-solid part, u = s u_dry: hydrate water in equilibrium with the air
        if not ud > 0.0:
            return 0.0
        ns = tb.aw_solid.shape[1]
        sa = tb.aw_solid
        if uptake:
            # smallest j with a(j) >= target, by bisection (a is non-decreasing)
            if (1.0 - f) * sa[i, ns - 1] + f * sa[i1, ns - 1] < target:
                return ud
            if (1.0 - f) * sa[i, 0] + f * sa[i1, 0] >= target:
                return 0.0
            lo, hi = 0, ns - 1
            while hi - lo > 1:
                mid = (lo + hi) // 2
                if (1.0 - f) * sa[i, mid] + f * sa[i1, mid] >= target:
                    hi = mid
                else:
                    lo = mid
        else:
            # largest j with a(j) <= target
            if (1.0 - f) * sa[i, 0] + f * sa[i1, 0] > target:
                return 0.0
            if (1.0 - f) * sa[i, ns - 1] + f * sa[i1, ns - 1] <= target:
                return ud
            lo, hi = 0, ns - 1
            while hi - lo > 1:
                mid = (lo + hi) // 2
                if (1.0 - f) * sa[i, mid] + f * sa[i1, mid] <= target:
                    lo = mid
                else:
                    hi = mid
        al = (1.0 - f) * sa[i, lo] + f * sa[i1, lo]
        ah = (1.0 - f) * sa[i, lo + 1] + f * sa[i1, lo + 1]
        t = (target - al) / (ah - al) if ah > al else (1.0 if uptake else 0.0)
        return ud * (lo + min(max(t, 0.0), 1.0)) / (ns - 1)
    lo = 0
    hi = nv - 1
    if uptake:
        # smallest j with a(j) >= target
        if (1.0 - f) * tb.aw[i, nv - 1] + f * tb.aw[i1, nv - 1] < target:
            return ud + tb.v0 * math.exp(tb.dlv * (nv - 1))
        if a_m >= target:
            return ud + tb.v0
        while hi - lo > 1:
            mid = (lo + hi) // 2
            if (1.0 - f) * tb.aw[i, mid] + f * tb.aw[i1, mid] >= target:
                hi = mid
            else:
                lo = mid
    else:
        # largest j with a(j) <= target
        if a_m > target:
            return ud
        if (1.0 - f) * tb.aw[i, nv - 1] + f * tb.aw[i1, nv - 1] <= target:
            return ud + tb.v0 * math.exp(tb.dlv * (nv - 1))
        while hi - lo > 1:
            mid = (lo + hi) // 2
            if (1.0 - f) * tb.aw[i, mid] + f * tb.aw[i1, mid] <= target:
                lo = mid
            else:
                hi = mid
    al = (1.0 - f) * tb.aw[i, lo] + f * tb.aw[i1, lo]
    ah = (1.0 - f) * tb.aw[i, hi] + f * tb.aw[i1, hi]
    t = (target - al) / (ah - al) if ah > al else (1.0 if uptake else 0.0)
    t = min(max(t, 0.0), 1.0)
    return ud + tb.v0 * math.exp(tb.dlv * (lo + t))


@njit(cache=True, inline="always", error_model="numpy")
def _u_first_ice(tb, i, f):
    """Smallest u with ice in the blended rows: where the brine's a_w reaches a_w,ice (inf without ice)."""
    nv = tb.aw.shape[1]
    i1 = i + 1 if i + 1 < tb.aw.shape[0] else i
    if not (1.0 - f) * tb.iw[i, nv - 1] + f * tb.iw[i1, nv - 1] > 0.0:
        return math.inf
    ai = (1.0 - f) * tb.awice[i] + f * tb.awice[i1]
    return _u_of_aw(tb, i, f, ai * (1.0 - 1e-9), True)


@njit(cache=True, error_model="numpy", nogil=True)
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
            a_s, lw0, iw0, ds0, dry = _at(tb, i, f, u0)
            W = W0
            frost_touch = Fb > 0.0 and Tb_raw <= T_MELT
            if frost_touch:
                # contact melting up to the first ice (the brine on its liquidus), from the frost budget
                ui = _u_first_ice(tb, i, f)
                if ui < math.inf:
                    need = ui * M - W0
                    if need > 0.0:
                        drawn = min(need, Fb)
                        W = W0 + drawn
            elif instant:
                if RHb > a_s:
                    u_t = _u_of_aw(tb, i, f, RHb, True)
                    if Tb_raw > T_MELT:
                        aw_i = 2.0
                    elif Tb == Tb_raw:  # the tabulated ice activity (exact at the rows, linear between)
                        aw_i = (1.0 - f) * t_awice[i] + f * t_awice[min(i + 1, nT - 1)]
                    else:
                        aw_i = ice_activity_kernel(Tw)
                    if RHb >= aw_i * (1.0 - 1e-5):
                        # at or above ice saturation: closed once ice is present, else up to the first ice
                        ui = _u_first_ice(tb, i, f)
                        if iw0 > 0.0:
                            u_t = u0
                        elif ui < u_t:
                            u_t = ui
                    W = u_t * M
                elif RHb < a_s:
                    W = _u_of_aw(tb, i, f, RHb, False) * M
            elif RHb != a_s:
                up = RHb > a_s
                u_t = _u_of_aw(tb, i, f, RHb, up)
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
                a1, lw1, iw1, ds1, dry1 = _at(tb, i, f, W / M)
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
