"""Per-year statistics of liquid brine, accumulated block by block.

The accumulator keeps running sums per salt and cell, so a run never holds a
full year of steps for every cell.  Liquid time of a step is
``liquid_fraction * dt`` (crossings placed inside the step by the phase
kernel).  Definitions:

* liquid hours per year: total liquid time / years run;
* liquid water-hours per year [kg m-2 h]: the time integral of the brine water over the liquid
  time (in a step liquid at both ends the mean of the two samples' brine water, in a step where
  the brine began or ended the water at its wet end), so a trace of brine and a wet soil do not
  look the same;
* longest liquid spell: the longest run of consecutive steps with liquid, the
  partial first and last steps counted by their liquid fraction;
* wet events per year: transitions from no liquid to liquid;
* habitable hours per year: liquid time in steps whose brine water activity
  and temperature (at the end of the step; in a step where the brine ended,
  its water activity and temperature at the previous sample) both reach the
  thresholds; the same values enter the liquid's temperature and a_w ranges.  Defaults
  (:data:`HABITABILITY_DEFAULTS`) follow the planetary-protection literature:
  water activity 0.5 and 245.15 K (-28 °C), the limits *with margin* of
  Rummel et al. (2014), Astrobiology 14, 887 (values from memory).  They are
  settings, not rulings: decisions belong to the official policy and its
  review bodies;
* liquid hours by Ls bin (default 12 bins of 30°) and by local-time bin
  (24 bins of one hour of local true solar time, at the end of the step);
* temperature and water-activity range of the liquid;
* model-limit counts from the kernel's validity flag (see
  :func:`wetcycle.phase.kernel.step_block`): steps whose temperature lay
  outside the validity range (bit 1), those of them with liquid brine present
  (the ones that can bias liquid statistics), steps in which a brine was
  solidified at the end of its supersaturated range (bit 2), freezes forced by the
  lower validity limit (bit 4) and steps with liquid brine whose water activity is an
  extrapolation past the published data (bit 8).

Liquid means a liquid phase state: a damp salt holding less than the phase model's liquid
threshold of brine water is not liquid (:mod:`wetcycle.phase.kernel`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numba import njit

from .errors import ValidityError
from .phase.states import BRINE, BRINE_WITH_ICE, BRINE_WITH_SALT, SUPERCOOLED, SUPERSATURATED

#: Default habitability thresholds (Rummel et al. 2014, with margin; from memory).
HABITABILITY_DEFAULTS = {"min_water_activity": 0.5, "min_temperature_K": 245.15}
N_HOUR_BINS = 24


@njit(cache=True, inline="always")
def _liquid(st):
    return st == BRINE or st == SUPERSATURATED or st == BRINE_WITH_SALT or st == BRINE_WITH_ICE or st == SUPERCOOLED


@njit(cache=True, nogil=True)
def accumulate(liq, phase, aw, T, lw, ls, ltst, flags, dt, aw_thr, T_thr, n_ls_bins,
               liquid_s, water_s, habitable_s, events, spell_cur, spell_max, by_ls, by_hour,
               T_lo, T_hi, aw_lo, aw_hi, n_flags, wet_prev, aw_last, T_last, lw_last):
    """Add one block ([step, cell] arrays; ``ls`` [step]; ``dt`` [step] s) to the accumulators."""
    nstep, ncell = liq.shape
    ls_width = 360.0 / n_ls_bins
    for k in range(nstep):
        b_ls = int((ls[k] % 360.0) / ls_width)
        if b_ls >= n_ls_bins:
            b_ls = n_ls_bins - 1
        for c in range(ncell):
            f = liq[k, c]
            d = f * dt[k]
            wet_end = _liquid(phase[k, c])
            fl = flags[k, c]  # bits: 1 clamped, 2 molality limit, 4 lower-limit freeze, 8 extrapolated
            if fl & 1:
                n_flags[0, c] += 1
                if f > 0.0:
                    n_flags[1, c] += 1
            if fl & 2:
                n_flags[2, c] += 1
            if fl & 4:
                n_flags[3, c] += 1
            if (fl & 8) and f > 0.0:
                n_flags[4, c] += 1
            if f > 0.0:
                if wet_prev[c] == 0:
                    events[c] += 1
                liquid_s[c] += d
                if wet_end and wet_prev[c] == 1:
                    water_s[c] += d * 0.5 * (lw[k, c] + lw_last[c])
                elif wet_end:
                    water_s[c] += d * lw[k, c]
                else:
                    water_s[c] += d * lw_last[c]
                by_ls[b_ls, c] += d
                h = int(ltst[k, c] % 24.0)
                if h >= N_HOUR_BINS:
                    h = N_HOUR_BINS - 1
                by_hour[h, c] += d
                spell_cur[c] += d
                a = aw[k, c]
                t = T[k, c]
                if a != a:
                    # the brine ended inside the step: judge it by its last state seen (the
                    # previous sample's water activity and temperature), not the dry end
                    a = aw_last[c]
                    t = T_last[c]
                if a == a:
                    if a >= aw_thr and t >= T_thr:
                        habitable_s[c] += d
                    aw_lo[c] = min(aw_lo[c], a)
                    aw_hi[c] = max(aw_hi[c], a)
                    T_lo[c] = min(T_lo[c], t)
                    T_hi[c] = max(T_hi[c], t)
            aw_last[c] = aw[k, c] if wet_end else math.nan
            lw_last[c] = lw[k, c] if wet_end else 0.0
            T_last[c] = T[k, c]
            if not wet_end:
                if spell_cur[c] > spell_max[c]:
                    spell_max[c] = spell_cur[c]
                spell_cur[c] = 0.0
            wet_prev[c] = 1 if wet_end else 0


@dataclass
class Accumulator:
    """Running sums for one salt over ``n_cells`` cells."""

    liquid_s: np.ndarray
    water_s: np.ndarray  # time integral of brine water over the liquid time [kg m-2 s]
    habitable_s: np.ndarray
    events: np.ndarray
    spell_cur: np.ndarray
    spell_max: np.ndarray
    by_ls: np.ndarray
    by_hour: np.ndarray
    T_lo: np.ndarray
    T_hi: np.ndarray
    aw_lo: np.ndarray
    aw_hi: np.ndarray
    n_flags: np.ndarray  # [5, cell]: clamped, clamped with liquid, molality limit, lower-limit freezes, extrapolated
    wet_prev: np.ndarray
    aw_last: np.ndarray  # brine water activity at the end of the previous step (NaN: no brine)
    T_last: np.ndarray   # temperature at the end of the previous step [K]
    lw_last: np.ndarray  # brine water at the end of the previous step if liquid, else 0 [kg m-2]
    aw_thr: float
    T_thr: float
    bin_time: np.ndarray = None  # [bin] seconds simulated in each season bin (the same for every cell)
    max_dt: float = None         # the longest step seen [s]

    @classmethod
    def new(cls, n_cells, n_ls_bins=12, min_water_activity=0.5, min_temperature_K=245.15):
        z = lambda: np.zeros(n_cells)
        return cls(z(), z(), z(), np.zeros(n_cells, np.int64), z(), z(), np.zeros((n_ls_bins, n_cells)),
                   np.zeros((N_HOUR_BINS, n_cells)), np.full(n_cells, np.inf), np.full(n_cells, -np.inf),
                   np.full(n_cells, np.inf), np.full(n_cells, -np.inf), np.zeros((5, n_cells), np.int64),
                   np.zeros(n_cells, np.int64), np.full(n_cells, np.nan), np.full(n_cells, np.nan), z(),
                   float(min_water_activity),
                   float(min_temperature_K))

    def add(self, liquid_fraction, phase, water_activity, temperature_K, ls_deg, ltst_h, validity_flag, dt_s,
            liquid_water):
        """Add a block: arrays [step, cell]; ``ls_deg`` and ``dt_s`` per step.

        ``ls_deg`` places each step in a season bin (``n_ls_bins`` equal bins of 360 degrees):
        the solar longitude Ls on Mars, a calendar month as an angle on Earth.
        ``validity_flag`` is the phase kernel's bit field; ``liquid_water`` the brine water [kg m-2].
        """
        n = liquid_fraction.shape[0]
        dt = np.ascontiguousarray(np.broadcast_to(np.asarray(dt_s, float), (n,)))
        nb = self.by_ls.shape[0]
        if self.bin_time is None:
            self.bin_time = np.zeros(nb)
        b = np.minimum((np.asarray(ls_deg, float) % 360.0 / (360.0 / nb)).astype(np.int64), nb - 1)
        self.bin_time += np.bincount(b, weights=dt, minlength=nb)
        if n:
            self.max_dt = max(self.max_dt or 0.0, float(dt.max()))
        accumulate(np.ascontiguousarray(liquid_fraction), np.ascontiguousarray(phase),
                   np.ascontiguousarray(water_activity), np.ascontiguousarray(temperature_K, dtype=float),
                   np.ascontiguousarray(liquid_water, dtype=float),
                   np.ascontiguousarray(ls_deg, dtype=float), np.ascontiguousarray(ltst_h, dtype=float),
                   np.ascontiguousarray(validity_flag), dt, self.aw_thr, self.T_thr, self.by_ls.shape[0],
                   self.liquid_s, self.water_s, self.habitable_s, self.events, self.spell_cur, self.spell_max,
                   self.by_ls, self.by_hour, self.T_lo, self.T_hi, self.aw_lo, self.aw_hi,
                   self.n_flags, self.wet_prev, self.aw_last, self.T_last, self.lw_last)

    def finish(self, years, *, per_year=True, bin_duration_s=None):
        """Statistics as a dict of arrays [cell] or [bin, cell] (hours; NaN ranges where never liquid).

        Parameters
        ----------
        years : float
            Years simulated (> 0 when ``per_year``).
        per_year : bool
            Add the per-year statistics (``*_per_year`` = total / ``years``, and the local-time
            bins per year): on a planet with a year, never for a chamber programme.
        bin_duration_s : array [bin] [s], optional
            The length of each season bin in a year.  A bin's liquid hours are then given per
            occurrence of the bin actually simulated: the hours in the bin divided by the number
            of times it was simulated (its simulated time / its length), never scaled up when it
            was simulated once or in part; a bin never simulated is NaN.  Without it (a chamber
            programme), the hours in each bin over the run.

        Totals over the simulated time (``liquid_hours``, ``liquid_water_hours``, ``habitable_hours``,
        ``wet_events``) are always there (design decision 7).
        """
        if per_year and not years > 0:
            raise ValidityError(f"years: {years!r} must be > 0 (the simulated time the statistics are scaled by)")
        h = 1.0 / 3600.0
        longest = np.maximum(self.spell_max, self.spell_cur) * h
        never = self.liquid_s == 0
        rng = lambda a: np.where(never | ~np.isfinite(a), np.nan, a)
        out = {
            "liquid_hours": self.liquid_s * h,
            "liquid_water_hours": self.water_s * h,
            "habitable_hours": self.habitable_s * h,
            "wet_events": self.events.astype(float),
        }
        if per_year:
            out.update({
                "liquid_hours_per_year": self.liquid_s * h / years,
                "liquid_water_hours_per_year": self.water_s * h / years,
                "wet_events_per_year": self.events / years,
                "habitable_hours_per_year": self.habitable_s * h / years,
            })
        out["longest_liquid_spell_hours"] = longest
        if bin_duration_s is not None:
            sim = self.bin_time if self.bin_time is not None else np.zeros(self.by_ls.shape[0])
            dur = np.asarray(bin_duration_s, dtype=float)
            occ = sim / dur
            # a bin simulated once counts its edge steps in full: within a step of one occurrence is one
            tol = (self.max_dt if self.max_dt is not None else 0.0) / dur
            div = np.where(sim > 0, np.where(occ > 1.0 + tol, occ, 1.0), np.nan)
            out["liquid_hours_by_ls"] = self.by_ls * h / div[:, None]
        if per_year:
            out["liquid_hours_by_local_time"] = self.by_hour * h / years
        out.update({
            "liquid_temperature_min": rng(self.T_lo),
            "liquid_temperature_max": rng(self.T_hi),
            "liquid_water_activity_min": rng(self.aw_lo),
            "liquid_water_activity_max": rng(self.aw_hi),
            "clamped_steps": self.n_flags[0].copy(),
            "clamped_liquid_steps": self.n_flags[1].copy(),
            "molality_limit_steps": self.n_flags[2].copy(),
            "lower_limit_freezes": self.n_flags[3].copy(),
            "extrapolated_liquid_steps": self.n_flags[4].copy(),
        })
        return out

    def bin_coverage(self, bin_duration_s):
        """Times each season bin was simulated (its simulated time / its length) [bin]."""
        sim = self.bin_time if self.bin_time is not None else np.zeros(self.by_ls.shape[0])
        return sim / np.asarray(bin_duration_s, dtype=float)
