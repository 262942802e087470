"""Per-year statistics of liquid brine (wetcycle.stats) on hand-built series.

The definitions (module docstring of wetcycle.stats) are checked on series small enough to
count by hand; the thresholds are the defaults after Rummel et al. (2014), from memory.
"""

import numpy as np
import pytest

from wetcycle.phase import states
from wetcycle.stats import HABITABILITY_DEFAULTS, Accumulator


def _add(acc, liq, phase, aw, T, dt=3600.0):
    n = len(liq)
    col = lambda a, dtype=float: np.asarray(a, dtype=dtype).reshape(n, 1)
    acc.add(col(liq), col(phase, np.int64), col(aw), col(T), np.zeros(n), col(np.arange(n) % 24),
            col(np.zeros(n), np.int64), dt)


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
