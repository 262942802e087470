"""Seasonal surface pressure (wetcycle.forcing.pressure) against lander records.

Sources beside each check.  The Viking bin means are 15-degree-Ls averages of the Viking
Lander daily-mean pressures (NASA PDS data set VL1/VL2-M-MET-4-DAILY-AVG-PRESSURE-V1.0;
Hess et al. 1980, Geophys. Res. Lett. 7, 197), read from a public binned copy of the PDS
file, all years (1977 storms included): the data the default cycles were fitted to.  Phoenix
and the first Viking sols are out of sample.
"""

import numpy as np
import pytest

from wetcycle.errors import ConfigError, ValidityError
from wetcycle.forcing import pressure

LS_BINS = np.arange(7.5, 360.0, 15.0)
VL1_MBAR = np.array([8.069, 8.181, 8.263, 8.315, 8.236, 7.978, 7.617, 7.245, 6.974, 6.846, 6.860, 7.024,
                     7.290, 7.684, 8.156, 8.583, 8.863, 8.907, 8.837, 8.653, 8.455, 8.210, 8.075, 8.011])
VL2_MBAR = np.array([8.845, 8.907, 9.020, 9.042, 8.963, np.nan, 8.114, 7.825, 7.576, 7.438, 7.446, 7.569,
                     7.950, 8.426, 8.998, 9.492, 9.766, 9.864, 9.814, 9.752, 9.390, 9.064, 8.870, 8.836])
CYCLE = pressure.LanderPressureCycle()


def test_viking_landers_within_the_issue_tolerance():
    # Issue requirement: Viking 1 and 2 seasonal cycles within 3 %.  The fits leave every VL1
    # bin within 0.9 % and every VL2 bin within 1.9 % (their stated residuals); 2 % and 3 % here.
    p = CYCLE(LS_BINS, [pressure.VIKING1_LATITUDE, pressure.VIKING2_LATITUDE],
              [pressure.VIKING1_ELEVATION_M, pressure.VIKING2_ELEVATION_M]) / 100.0
    assert np.nanmax(np.abs(p[:, 0] / VL1_MBAR - 1)) < 0.01
    assert np.nanmax(np.abs(p[:, 1] / VL2_MBAR - 1)) < 0.02
    # minimum near Ls 150 and maximum near Ls 250-265 (Hess et al. 1979, 1980, read: the
    # southern cap's growth and sublimation); peak-to-peak 26 % of the mean for VL1 over the
    # first 57 % of a year (Hess et al. 1979, JGR 84, 2923, read) -- the full year's 29 % here
    fine = np.arange(0.0, 360.0, 1.0)
    q = CYCLE(fine, [pressure.VIKING1_LATITUDE], [pressure.VIKING1_ELEVATION_M])[:, 0]
    assert 140 <= fine[np.argmin(q)] <= 160 and 245 <= fine[np.argmax(q)] <= 275
    assert 0.24 < (q.max() - q.min()) / q.mean() < 0.32


def test_out_of_sample_landers():
    # Phoenix (68.22 N, -4.126 km; elevation read in a secondary source): 8.35 mbar on sol 17
    # (Ls ~84, NASA sol-17 report, read) and 8.5 -> 7.85 mbar over sols 1-63 (Ls 76-105, a
    # summary of NASA reports, read in a secondary source).  Tolerance 3 % (issue).
    p = CYCLE(np.array([84.0, 76.5, 105.0]), [68.22], [-4126.0])[:, 0] / 100.0
    assert p[0] == pytest.approx(8.35, rel=0.03)
    assert p[1] == pytest.approx(8.5, rel=0.03) and p[2] == pytest.approx(7.85, rel=0.03)
    # Viking 1's first four sols (Ls 97-100): mean 7.65 mbar (Hess et al. 1976, Science 193,
    # 788, read); tolerance 3 %
    assert CYCLE(np.array([98.5]), [22.27], [-3637.0])[0, 0] / 100 == pytest.approx(7.65, rel=0.03)


def test_elevation_scaling_and_no_season():
    # isothermal barometric law (Wallace & Hobbs 2006 eq. 3.29): one scale height lower
    # multiplies the pressure by e
    c = pressure.LanderPressureCycle(10000.0, seasonal=False)
    p = c(np.array([0.0, 200.0]), [0.0, 0.0], [0.0, -10000.0])
    np.testing.assert_allclose(p[:, 1] / p[:, 0], np.e, rtol=1e-12)
    np.testing.assert_allclose(p[0], p[1], rtol=1e-12)      # no season: same at every Ls
    with pytest.raises(ValidityError, match="elevation"):
        c(np.array([0.0]), [0.0], [1e6])
    with pytest.raises(ConfigError, match="scale_height"):
        pressure.LanderPressureCycle(10.0)


def test_harmonic_cycle_is_periodic_and_refuses_nonsense():
    h = pressure.VIKING1_PRESSURE_CYCLE
    assert h(0.0) == pytest.approx(h(360.0), rel=1e-12)
    # mean over Ls of a pure harmonic series is exactly 1 (common practice)
    assert np.mean(h(np.arange(0.0, 360.0, 0.5))) == pytest.approx(1.0, abs=1e-12)
    with pytest.raises(ConfigError, match="zero"):
        pressure.HarmonicCycle([0.8], [0.5], "bad")
    with pytest.raises(ValidityError, match="non-finite"):
        h(np.array([np.nan]))
