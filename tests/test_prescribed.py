"""Tests of wetcycle.forcing.prescribed: sinusoids and chamber programmes."""

from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from wetcycle.clock import make_clock
from wetcycle.errors import ConfigError, InputDataError
from wetcycle.forcing import prescribed as pr

DEMO = Path(__file__).resolve().parents[1] / "forcing" / "chamber_demo.toml"


def _prog(segments, **kw):
    return pr.chamber_programme_from_dict({"pressure_Pa": 700.0, "segment": segments, **kw})


def test_hold_and_ramp_hand_computed():
    # Hand-computed: hold 250 K / RH 0.1 for 100 s, ramp to 270 K / RH 0.5 over 200 s, hold 260 K.
    p = _prog([
        {"mode": "hold", "duration_s": 100.0, "temperature_K": 250.0, "relative_humidity": 0.1},
        {"mode": "ramp", "duration_s": 200.0, "temperature_K": 270.0, "relative_humidity": 0.5},
        {"mode": "hold", "duration_s": 50.0, "temperature_K": 260.0, "relative_humidity": 0.3,
         "pressure_Pa": 600.0},
    ])
    t = np.array([0.0, 50.0, 100.0, 150.0, 250.0, 299.0, 300.0, 349.0, 350.0])
    f = p.evaluate(t)
    # ramp: T = 250 + 20 (t - 100)/200; RH = 0.1 + 0.4 (t - 100)/200
    np.testing.assert_allclose(f.temperature_K, [250, 250, 250, 255, 265, 269.9, 260, 260, 260], rtol=1e-14)
    np.testing.assert_allclose(f.relative_humidity, [0.1, 0.1, 0.1, 0.2, 0.4, 0.498, 0.3, 0.3, 0.3], rtol=1e-12)
    np.testing.assert_allclose(f.surface_pressure_Pa, [700] * 6 + [600] * 3)
    assert p.duration_s == 350.0
    assert f.vapor_pressure_Pa is None


def test_after_end_policies():
    segs = [{"mode": "hold", "duration_s": 10.0, "temperature_K": 250.0, "vapor_pressure_Pa": 1.0},
            {"mode": "ramp", "duration_s": 10.0, "temperature_K": 260.0, "vapor_pressure_Pa": 3.0}]
    with pytest.raises(ConfigError, match="after the end"):
        _prog(segs).evaluate([25.0])
    np.testing.assert_allclose(_prog(segs, after_end="repeat").evaluate([25.0]).vapor_pressure_Pa, [1.0])
    np.testing.assert_allclose(_prog(segs, after_end="hold").evaluate([25.0]).temperature_K, [260.0])
    np.testing.assert_allclose(_prog(segs).evaluate([15.0]).vapor_pressure_Pa, [2.0])  # mid-ramp


@pytest.mark.parametrize("bad,match", [
    ({"mode": "ramp"}, "segment 1 mode: 'ramp' is not allowed for the first segment"),
    ({"mode": "soak"}, "segment 1 mode: 'soak' is not allowed; allowed: hold, ramp"),
    ({"duration_s": 0.0}, "segment 1 duration_s: 0.0 is not allowed"),
    ({"temperature_K": 20.0}, "segment 1 temperature_K: 20.0 is not allowed"),
    ({"relative_humidity": 1.5}, "segment 1 relative_humidity: 1.5 is not allowed"),
    ({"colour": "red"}, "unknown field 'colour'"),
])
def test_segment_validation_one_line(bad, match):
    seg = {"mode": "hold", "duration_s": 10.0, "temperature_K": 250.0, "relative_humidity": 0.2, **bad}
    with pytest.raises(ConfigError, match=match) as ei:
        _prog([seg])
    assert "\n" not in str(ei.value)


def test_mixed_humidity_kinds_refused():
    with pytest.raises(ConfigError, match="segment 2 vapor_pressure_Pa"):
        _prog([{"mode": "hold", "duration_s": 1.0, "temperature_K": 250.0, "relative_humidity": 0.2},
               {"mode": "hold", "duration_s": 1.0, "temperature_K": 250.0, "vapor_pressure_Pa": 0.2}])


def test_demo_programme_file(tmp_path):
    p = pr.load_chamber_programme(DEMO)
    assert p.humidity_kind == "relative_humidity"
    f = p.evaluate(np.arange(0.0, p.duration_s + 1, 60.0))
    assert np.all((f.relative_humidity >= 0) & (f.relative_humidity <= 1))
    # hand-computed from the file: after 1 h of hold and 1 h of the 2-h RH ramp 0.05 -> 0.85
    assert p.evaluate([7200.0]).relative_humidity[0] == pytest.approx(0.45, rel=1e-12)
    bad = tmp_path / "bad.toml"
    bad.write_text("segment = [\n")
    with pytest.raises(InputDataError, match="not valid TOML"):
        pr.load_chamber_programme(bad)


def test_sinusoid_on_clock():
    c = make_clock("mars", steps_per_sol=48, n_sols=1)
    temp = pr.Sinusoid(mean=210.0, diurnal_amplitude=40.0, diurnal_peak_h=13.0)
    rh = pr.Sinusoid(mean=0.3, diurnal_amplitude=0.2, diurnal_peak_h=1.0)
    f = pr.prescribed_forcing(c, 0.0, temp, relative_humidity=rh, surface_pressure_pa=650.0)
    ltst = c.local_true_solar_time(0.0)
    i = np.argmin(np.abs(ltst - 13.0))
    # maximum where the local true solar time is nearest 13 h (half-hour steps: within 7.5 deg)
    assert np.argmax(f.temperature_K) == i
    assert f.temperature_K.max() == pytest.approx(250.0, abs=40.0 * (1 - np.cos(np.pi / 24)))
    f2 = pr.prescribed_forcing(c, np.array([0.0, 180.0]), temp, relative_humidity=rh)
    assert f2.temperature_K.shape == (48, 2)
    with pytest.raises(ConfigError, match="relative_humidity"):
        pr.prescribed_forcing(c, 0.0, temp, relative_humidity=pr.Sinusoid(mean=0.9, diurnal_amplitude=0.2))
    with pytest.raises(ConfigError, match="diurnal_amplitude"):
        pr.Sinusoid(mean=1.0, diurnal_amplitude=-1.0)


def test_forcing_series_conversions():
    # RH -> e uses Murphy & Koop (2005) over liquid; at 273.16 K p_liq = 611.657 Pa (IAPWS
    # triple point); tolerance 1e-4: MK eq. (10) reproduces the triple point to ~1e-5.
    f = pr.ForcingSeries(time_s=[0.0, 1.0], temperature_K=[273.16, 273.16], relative_humidity=[0.5, 1.0])
    np.testing.assert_allclose(f.vapor_pressure(), [305.83, 611.657], rtol=1e-4)
    with pytest.raises(ConfigError, match="exactly one"):
        pr.ForcingSeries(time_s=[0.0], temperature_K=[250.0])
    with pytest.raises(ConfigError, match="time_s"):
        pr.ForcingSeries(time_s=[1.0, 0.0], temperature_K=[250.0, 250.0], vapor_pressure_Pa=0.1)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(st.sampled_from(["hold", "ramp"]), st.floats(1.0, 1e4),
                          st.floats(150.0, 300.0), st.floats(0.0, 1.0)), min_size=1, max_size=6))
def test_programme_invariants(segs):
    d = [{"mode": m if i else "hold", "duration_s": dur, "temperature_K": t, "relative_humidity": rh}
         for i, (m, dur, t, rh) in enumerate(segs)]
    p = _prog(d)
    t = np.linspace(0.0, p.duration_s, 301)
    f = p.evaluate(t)
    temps = [s["temperature_K"] for s in d]
    # piecewise-linear between segment values: never outside their range
    assert np.all(f.temperature_K >= min(temps) - 1e-9) and np.all(f.temperature_K <= max(temps) + 1e-9)
    assert f.temperature_K[-1] == pytest.approx(temps[-1])
