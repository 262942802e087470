"""Per-year statistics of liquid brine (wetcycle.stats) on hand-built series.

The definitions (module docstring of wetcycle.stats) are checked on series small enough to
count by hand; the thresholds are the defaults after Rummel et al. (2014), from memory.
"""

import numpy as np
import pytest

from wetcycle.phase import states
from wetcycle.stats import HABITABILITY_DEFAULTS, Accumulator


def _add(acc, liq, phase, aw, T, dt=3600.0, lw=None, flags=None):
    n = len(liq)
    col = lambda a, dtype=float: np.asarray(a, dtype=dtype).reshape(n, 1)
    lw = np.zeros(n) if lw is None else lw
    flags = np.zeros(n) if flags is None else flags
    acc.add(col(liq), col(phase, np.int64), col(aw), col(T), np.zeros(n), col(np.arange(n) % 24),
            col(flags, np.int64), dt, col(lw))


def test_hand_counted_hours_events_spell_and_habitable():
    acc = Accumulator.new(1, **{"min_water_activity": HABITABILITY_DEFAULTS["min_water_activity"],
                                "min_temperature_K": HABITABILITY_DEFAULTS["min_temperature_K"]})
    C, B = states.CRYSTALLINE, states.BRINE
    # dry, wet 0.25 of a step (deliquescence inside it), wet, wet, dries half-way, dry, wet again
    liq = [0.0, 0.25, 1.0, 1.0, 0.5, 0.0, 1.0]
    phase = [C, B, B, B, C, C, B]
    aw = [np.nan, 0.80, 0.70, 0.60, np.nan, np.nan, 0.40]
    T = [240.0, 250.0, 250.0, 250.0, 250.0, 240.0, 250.0]
    _add(acc, liq, phase, aw, T)
    out = acc.finish(years=1.0)
    assert out["liquid_hours_per_year"][0] == pytest.approx(3.75)        # 0.25 + 1 + 1 + 0.5 + 1
    assert out["wet_events_per_year"][0] == 2                           # two dry-to-wet transitions
    assert out["longest_liquid_spell_hours"][0] == pytest.approx(2.75)  # 0.25 + 1 + 1 + 0.5
    # a_w >= 0.5 and T >= 245.15 K: steps 1-3 (2.25 h) plus the half step in which the brine dried,
    # judged by its last water activity (0.60); the final step's a_w 0.40 is below the threshold
    assert out["habitable_hours_per_year"][0] == pytest.approx(2.75)
    assert out["liquid_water_activity_min"][0] == pytest.approx(0.40)
    # the step that ended dry is judged at its last wet sample (250 K), not its dry end
    assert out["liquid_temperature_min"][0] == pytest.approx(250.0)


def test_brine_ending_in_a_cold_step_does_not_widen_the_temperature_range():
    acc = Accumulator.new(1)
    C, B = states.CRYSTALLINE, states.BRINE
    _add(acc, [1.0, 0.1], [B, C], [0.7, np.nan], [250.0, 190.0])
    out = acc.finish(years=1.0)
    assert out["liquid_temperature_min"][0] == pytest.approx(250.0)


def test_hand_counted_liquid_water_hours():
    # Issue 10: a water-weighted statistic beside the hours, kg m-2 h of liquid water.  Hand count
    # (the module's definition): steps liquid at both ends take the mean of the two samples' brine
    # water, a step where the brine began or ended takes the water at its wet end.
    acc = Accumulator.new(1)
    C, B = states.CRYSTALLINE, states.BRINE
    liq = [0.0, 0.5, 1.0, 1.0, 0.25, 0.0]
    phase = [C, B, B, B, C, C]
    lw = [0.0, 0.2, 0.4, 0.2, 0.0, 0.003]  # the last: a damp salt's film (state crystalline): not liquid
    aw = [np.nan, 0.7, 0.7, 0.7, np.nan, np.nan]
    _add(acc, liq, phase, aw, [250.0] * 6, lw=lw)
    out = acc.finish(years=2.0)
    # 0.5*0.2 + 1*(0.2+0.4)/2 + 1*(0.4+0.2)/2 + 0.25*0.2 = 0.1 + 0.3 + 0.3 + 0.05 = 0.75 kg m-2 h, over 2 years
    assert out["liquid_water_hours_per_year"][0] == pytest.approx(0.375)
    assert out["liquid_hours_per_year"][0] == pytest.approx(2.75 / 2.0)


def test_trace_and_wet_soil_differ_in_water_hours_not_in_hours():
    # The same liquid time with 1e-6 and 1 kg m-2 of brine: equal hours, water-hours in that ratio.
    out = []
    for w in (1e-6, 1.0):
        acc = Accumulator.new(1)
        _add(acc, [1.0] * 4, [states.BRINE] * 4, [0.6] * 4, [250.0] * 4, lw=[w] * 4)
        out.append(acc.finish(years=1.0))
    assert out[0]["liquid_hours_per_year"][0] == out[1]["liquid_hours_per_year"][0] == pytest.approx(4.0)
    assert out[1]["liquid_water_hours_per_year"][0] / out[0]["liquid_water_hours_per_year"][0] == pytest.approx(1e6)


def test_extrapolated_liquid_steps_counted():
    # validity_flag bit 8 (brine past the published water-activity data) is counted only with liquid.
    acc = Accumulator.new(1)
    _add(acc, [1.0, 1.0, 0.0], [states.SUPERSATURATED] * 2 + [states.CRYSTALLINE], [0.3, 0.2, np.nan],
         [280.0] * 3, flags=[8, 0, 8])
    assert acc.finish(years=1.0)["extrapolated_liquid_steps"][0] == 1
