"""Per-year statistics of liquid brine, accumulated block by block.

The accumulator keeps running sums per salt and cell, so a run never holds a
full year of steps for every cell.  Liquid time of a step is
``liquid_fraction * dt`` (crossings placed inside the step by the phase
kernel).  Definitions:

* liquid hours per year: total liquid time / years run;
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
  crystallised at the molality limit (bit 2) and freezes forced by the lower
  validity limit (bit 4).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numba import njit

from .phase.states import BRINE, BRINE_WITH_ICE, BRINE_WITH_SALT, SUPERCOOLED, SUPERSATURATED

#: Default habitability thresholds (Rummel et al. 2014, with margin; from memory).
HABITABILITY_DEFAULTS = {"min_water_activity": 0.5, "min_temperature_K": 245.15}
N_HOUR_BINS = 24


@njit(cache=True, inline="always")
def _liquid(st):
    return st == BRINE or st == SUPERSATURATED or st == BRINE_WITH_SALT or st == BRINE_WITH_ICE or st == SUPERCOOLED


@njit(cache=True, nogil=True)
def accumulate(liq, phase, aw, T, ls, ltst, clamped, dt, aw_thr, T_thr, n_ls_bins,
               liquid_s, habitable_s, events, spell_cur, spell_max, by_ls, by_hour,
               T_lo, T_hi, aw_lo, aw_hi, n_flags, wet_prev, aw_last, T_last):
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
            fl = clamped[k, c]  # bits: 1 clamped, 2 molality limit, 4 lower-limit freeze
            if fl & 1:
                n_flags[0, c] += 1
                if f > 0.0:
                    n_flags[1, c] += 1
            if fl & 2:
                n_flags[2, c] += 1
            if fl & 4:
                n_flags[3, c] += 1
            if f > 0.0:
                if wet_prev[c] == 0:
                    events[c] += 1
                liquid_s[c] += d
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
    n_flags: np.ndarray  # [4, cell]: clamped, clamped with liquid, molality-limit, lower-limit freezes
    wet_prev: np.ndarray
    aw_last: np.ndarray  # brine water activity at the end of the previous step (NaN: no brine)
    T_last: np.ndarray   # temperature at the end of the previous step [K]
    aw_thr: float
    T_thr: float

    @classmethod
    def new(cls, n_cells, n_ls_bins=12, min_water_activity=0.5, min_temperature_K=245.15):
        z = lambda: np.zeros(n_cells)
        return cls(z(), z(), np.zeros(n_cells, np.int64), z(), z(), np.zeros((n_ls_bins, n_cells)),
                   np.zeros((N_HOUR_BINS, n_cells)), np.full(n_cells, np.inf), np.full(n_cells, -np.inf),
                   np.full(n_cells, np.inf), np.full(n_cells, -np.inf), np.zeros((4, n_cells), np.int64),
                   np.zeros(n_cells, np.int64), np.full(n_cells, np.nan), np.full(n_cells, np.nan),
                   float(min_water_activity),
                   float(min_temperature_K))

    def add(self, liquid_fraction, phase, water_activity, temperature_K, ls_deg, ltst_h, clamped, dt_s):
        """Add a block: arrays [step, cell]; ``ls_deg`` and ``dt_s`` per step."""
        n = liquid_fraction.shape[0]
        dt = np.ascontiguousarray(np.broadcast_to(np.asarray(dt_s, float), (n,)))
        accumulate(np.ascontiguousarray(liquid_fraction), np.ascontiguousarray(phase),
                   np.ascontiguousarray(water_activity), np.ascontiguousarray(temperature_K, dtype=float),
                   np.ascontiguousarray(ls_deg, dtype=float), np.ascontiguousarray(ltst_h, dtype=float),
                   np.ascontiguousarray(clamped), dt, self.aw_thr, self.T_thr, self.by_ls.shape[0],
                   self.liquid_s, self.habitable_s, self.events, self.spell_cur, self.spell_max,
                   self.by_ls, self.by_hour, self.T_lo, self.T_hi, self.aw_lo, self.aw_hi,
                   self.n_flags, self.wet_prev, self.aw_last, self.T_last)

    def finish(self, years):
        """Statistics per year as a dict of arrays (hours; NaN ranges where never liquid)."""
        if not years > 0:
            raise ValueError("years must be > 0")
        h = 1.0 / 3600.0
        longest = np.maximum(self.spell_max, self.spell_cur) * h
        never = self.liquid_s == 0
        rng = lambda a: np.where(never | ~np.isfinite(a), np.nan, a)
        return {
            "liquid_hours_per_year": self.liquid_s * h / years,
            "longest_liquid_spell_hours": longest,
            "wet_events_per_year": self.events / years,
            "habitable_hours_per_year": self.habitable_s * h / years,
            "liquid_hours_by_ls": self.by_ls * h / years,
            "liquid_hours_by_local_time": self.by_hour * h / years,
            "liquid_temperature_min": rng(self.T_lo),
            "liquid_temperature_max": rng(self.T_hi),
            "liquid_water_activity_min": rng(self.aw_lo),
            "liquid_water_activity_max": rng(self.aw_hi),
            "clamped_steps": self.n_flags[0].copy(),
            "clamped_liquid_steps": self.n_flags[1].copy(),
            "molality_limit_steps": self.n_flags[2].copy(),
            "lower_limit_freezes": self.n_flags[3].copy(),
        }
