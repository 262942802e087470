"""The one path through the phase model: a block of forcing for a chunk of cells.

State in, forcing block in, state and accumulators out (DESIGN decision 1).  Every caller of the
phase model goes through :func:`phase_block`:

* the scenario runner (:func:`wetcycle.runner.simulate`) streams its forcing blocks (one sol each)
  through it, site by site or tile by tile for the grid engine (:mod:`wetcycle.grid` runs a
  tile's cells through the runner);
* :func:`run_cells` steps given series [step, cell] through it and returns the statistics and,
  on request, the per-step series; :func:`wetcycle.run_series` (one cell) and
  :func:`wetcycle.run_dataset` (a chunk of cells of an ``xarray.Dataset``, under
  ``xr.apply_ufunc``) are thin layers over it, so a cell of a dataset equals ``run_series`` on
  that cell bitwise.

Neither function knows where its forcing came from; both take plain arrays in SI units
(temperature [K], relative humidity w.r.t. liquid water [-], pressure [Pa], frost [kg m-2],
time steps [s]).  Every per-cell computation in the phase kernel and the accumulators is done
cell by cell, so a cell's numbers do not depend on which other cells share its block.
"""

from __future__ import annotations

import numpy as np

from .stats import HABITABILITY_DEFAULTS, Accumulator

#: Per-step outputs of the phase model, as named in result files (:mod:`wetcycle.vocabulary`).
PHASE_KEYS = ("phase_state", "brine_water_activity", "liquid_water", "hydrate_water", "ice_water",
              "liquid_fraction", "water_exchanged", "validity_flag")


#: Steps per block streamed through the phase model by :func:`run_cells`: the kernel's outputs are
#: held for one block at a time (results do not depend on it: the state and the accumulators carry
#: everything from block to block, checked bitwise in tests/test_run_dataset.py).
BLOCK_STEPS = 1024


def phase_block(model, state, acc, temperature_K, relative_humidity, surface_pressure_Pa, frost_kg_m2, dt_s,
                season_deg, ltst_h, ion_molality=False):
    """Step ``state`` of ``model`` through one forcing block and add the block to ``acc``.

    Parameters
    ----------
    model : wetcycle.phase.PhaseModel
    state : wetcycle.phase.ParcelState
        The salt in every cell; advanced in place.
    acc : wetcycle.stats.Accumulator
        Running statistics of the same cells; updated in place.
    temperature_K, relative_humidity, surface_pressure_Pa, frost_kg_m2 : arrays [step, cell]
        At the salt: temperature [K], relative humidity w.r.t. liquid water [-], gas pressure
        [Pa], water frost in contact [kg m-2].
    dt_s : array [step] [s]
        Length of each step (step k ends at sample k).
    season_deg : array [step]
        Season angle of each step for the season bins (Ls on Mars; zeros without a season).
    ltst_h : array [step, cell]
        Local time [h] for the local-time bins (any value when they are not reported).
    ion_molality : bool
        A salt mixture (:class:`wetcycle.phase.mixture_model.MixtureModel`) only: the result also
        carries its brine's ``ion_molality`` [step, cell, ion].

    Returns
    -------
    wetcycle.phase.BlockResult, arrays [step, cell].
    """
    if ion_molality:
        r = model.step(state, temperature_K, relative_humidity, surface_pressure_Pa, frost_kg_m2, dt_s,
                       ion_molality=True)
    else:
        r = model.step(state, temperature_K, relative_humidity, surface_pressure_Pa, frost_kg_m2, dt_s)
    acc.add(r.liquid_fraction, r.phase, r.water_activity, temperature_K, season_deg, ltst_h, r.validity_flag, dt_s,
            r.liquid_water)
    return r


def phase_outputs(r):
    """A block's per-step results under their names in result files (:data:`PHASE_KEYS`).

    States and flags as int8, the rest as the kernel gives them (float64), arrays [step, cell].
    """
    return {"phase_state": r.phase.astype(np.int8), "brine_water_activity": r.water_activity,
            "liquid_water": r.liquid_water, "hydrate_water": r.hydrate_water, "ice_water": r.ice_water,
            "liquid_fraction": r.liquid_fraction, "water_exchanged": r.exchanged,
            "validity_flag": r.validity_flag.astype(np.int8)}


def statistic_names():
    """Names and dtypes of the statistics :func:`run_cells` returns (totals over the series)."""
    sample = Accumulator.new(1, 1).finish(float("nan"), per_year=False)
    return {k: np.asarray(v).dtype for k, v in sample.items()}


def run_cells(model, time_s, temperature_K, relative_humidity, surface_pressure_Pa, frost_kg_m2, loading_kg_m2, *,
              min_water_activity=HABITABILITY_DEFAULTS["min_water_activity"],
              min_temperature_K=HABITABILITY_DEFAULTS["min_temperature_K"], keep_series=True):
    """Step one salt through given series in a chunk of cells: statistics and per-step series.

    The salt starts crystalline, as the stable hydrate at the first sample; the first step has
    length 0 (the series starts at its first sample), step k ends at sample k.  A given series has
    no season and no planet's year: the statistics are totals over the series (DESIGN decision 7),
    as for a chamber programme (:meth:`wetcycle.stats.Accumulator.finish` with ``per_year=False``).
    The series streams through :func:`phase_block` in blocks of :data:`BLOCK_STEPS` steps.

    Parameters
    ----------
    model : wetcycle.phase.PhaseModel or wetcycle.phase.mixture_model.MixtureModel
    time_s : array [step] [s], strictly increasing
    temperature_K, relative_humidity, surface_pressure_Pa, frost_kg_m2 : arrays [step, cell]
        Already checked by the caller (SI units; see :func:`phase_block`); broadcast together.
    loading_kg_m2 : float or array [cell] [kg m-2]
        Anhydrous salt per unit area (> 0).
    min_water_activity, min_temperature_K : float
        Habitability thresholds of the statistics (:data:`wetcycle.stats.HABITABILITY_DEFAULTS`).
    keep_series : bool
        Return the per-step series as well.

    Returns
    -------
    (stats, series): dicts of arrays, stats [cell] (names from :func:`statistic_names`), series
    [step, cell] (names :data:`PHASE_KEYS`; float64, states and flags int8) or None.  For a salt
    mixture the series also hold ``ion_molality`` [step, cell, ion] (ions: ``model.ions``).
    """
    T, relative_humidity, surface_pressure_Pa, frost_kg_m2 = _c_order(temperature_K, relative_humidity,
                                                                      surface_pressure_Pa, frost_kg_m2)
    t = np.asarray(time_s, dtype=np.float64)
    dt = np.concatenate([[0.0], np.diff(t)])
    state, acc = start_cells(model, T[0], relative_humidity[0], loading_kg_m2, min_water_activity=min_water_activity,
                             min_temperature_K=min_temperature_K)
    series = advance_cells(model, state, acc, T, relative_humidity, surface_pressure_Pa, frost_kg_m2, dt,
                           keep_series=keep_series)
    return finish_cells(acc), series


def _c_order(*arrays):
    """Writable C-ordered float64 copies, broadcast together: one compiled signature of the
    kernels for every caller."""
    return tuple(np.array(a, dtype=np.float64, order="C") for a in np.broadcast_arrays(*arrays))


def start_cells(model, temperature_K, relative_humidity, loading_kg_m2, *,
                min_water_activity=HABITABILITY_DEFAULTS["min_water_activity"],
                min_temperature_K=HABITABILITY_DEFAULTS["min_temperature_K"]):
    """The state and empty accumulators of one salt in a chunk of cells, from the first sample.

    The salt starts crystalline, as the stable hydrate at the first sample's temperature [K] and
    relative humidity [-] (arrays [cell]); ``loading_kg_m2`` as for :func:`run_cells`.
    Returns ``(state, acc)`` for :func:`advance_cells`.
    """
    T0, rh0 = (np.array(a, dtype=np.float64, order="C") for a in np.broadcast_arrays(temperature_K,
                                                                                     relative_humidity))
    state = model.initial_state(T0.size, loading_kg_m2, T0, rh0)
    return state, Accumulator.new(T0.size, 1, min_water_activity, min_temperature_K)


def advance_cells(model, state, acc, temperature_K, relative_humidity, surface_pressure_Pa, frost_kg_m2, dt_s, *,
                  keep_series=True):
    """Step ``state`` through series [step, cell] (no season), adding them to ``acc``, both in place.

    ``dt_s`` [step] is each step's length (step k ends at sample k).  The steps stream through
    :func:`phase_block` in blocks of :data:`BLOCK_STEPS`; the state and the accumulators carry
    everything from block to block, so a series cut into consecutive pieces and advanced piece by
    piece gives bitwise what one call gives.  Returns the per-step series (names
    :data:`PHASE_KEYS`; for a salt mixture also ``ion_molality`` [step, cell, ion]) or None.
    """
    T, rh, P, frost = _c_order(temperature_K, relative_humidity, surface_pressure_Pa, frost_kg_m2)
    dt = np.asarray(dt_s, dtype=np.float64)
    n_steps, n_cells = T.shape
    ions = keep_series and getattr(model, "is_mixture", False)
    parts = {k: [] for k in PHASE_KEYS + (("ion_molality",) if ions else ())} if keep_series else None
    for i0 in range(0, n_steps, BLOCK_STEPS):
        i1 = min(i0 + BLOCK_STEPS, n_steps)
        r = phase_block(model, state, acc, T[i0:i1], rh[i0:i1], P[i0:i1], frost[i0:i1], dt[i0:i1],
                        np.zeros(i1 - i0), np.zeros((i1 - i0, n_cells)), ion_molality=ions)
        if keep_series:
            for k, v in phase_outputs(r).items():
                parts[k].append(v)
            if ions:
                parts["ion_molality"].append(r.ion_molality)
    if not keep_series:
        return None
    return {k: v[0] if len(v) == 1 else np.concatenate(v) for k, v in parts.items()}


def finish_cells(acc):
    """The statistics of a series (totals; no planet's year, DESIGN decision 7), arrays [cell]."""
    return acc.finish(float("nan"), per_year=False)
