"""Water supply (wetcycle.forcing.supply): the default climatology, user tables, and the
vertical distribution of the column.  Sources beside each check."""

import numpy as np
import pytest
import xarray as xr

from wetcycle.errors import ConfigError, InputDataError
from wetcycle.forcing import supply
from wetcycle.orbit import MARS
from wetcycle.water import saturation_vapor_pressure_ice

EPS = 0.018015268 / MARS.molar_mass_air_kg_mol


def _kepler_weights(ls_deg):
    # time spent per unit Ls ~ r^2 ~ (1 + e cos(Ls - Ls_p))^-2 (Kepler's second law, common practice)
    e, lsp = MARS.eccentricity, MARS.ls_perihelion_deg
    return (1.0 + e * np.cos(np.deg2rad(ls_deg - lsp))) ** -2


def test_default_climatology_matches_the_published_anchors():
    t = supply.default_climatology(scale=1.0)          # the table as shipped (TES-based)
    assert "memory" in t.name
    ls = np.arange(0.0, 360.0, 1.0)
    lat = np.arange(-89.5, 90.0, 1.0)
    w = t.column(ls, lat, np.zeros_like(lat)) / supply.PRECIPITABLE_MICRON_KG_M2    # [ls, lat] pr-um
    wt = _kepler_weights(ls)[:, None] * np.cos(np.deg2rad(lat))[None, :]
    north, south = lat > 0, lat < 0
    mean_n = np.sum((w * wt)[:, north]) / np.sum(wt[:, north])
    mean_s = np.sum((w * wt)[:, south]) / np.sum(wt[:, south])
    # Smith (2002), JGR 107(E11) 5115 (abstract, read): annual means 17 (north) and 9.5 pr-um
    # (south).  Tolerance 10 %: the table is a rounded reconstruction from memory (its file says so)
    assert mean_n == pytest.approx(17.0, rel=0.10)
    assert mean_s == pytest.approx(9.5, rel=0.10)
    # same source: northern high-latitude midsummer maximum ~100 pr-um, southern ~50 pr-um
    # (band means of a zonal table lie below the peak; within -40 %/+10 %)
    assert 60.0 <= w[:, lat > 60].max() <= 110.0
    assert 30.0 <= w[:, lat < -60].max() <= 55.0
    # same source: mid and high latitudes below 5 pr-um in autumn and winter (winter here)
    autumn_winter_n = (ls >= 240) & (ls <= 330)
    autumn_winter_s = (ls >= 60) & (ls <= 150)
    assert w[np.ix_(autumn_winter_n, (lat > 50) & (lat < 80))].max() < 5.0
    assert w[np.ix_(autumn_winter_s, (lat < -50) & (lat > -80))].max() < 5.0


def test_default_supply_is_scaled_to_later_instruments():
    # the default multiplies the TES-based table by 0.7: later instruments' polar-summer maxima
    # 60-70 pr-um (SPICAM, Trokhimovskiy et al. 2015; CRISM, Khayat et al. 2019; read) against
    # TES's ~100 (Smith 2002, read); Phoenix measured ~30 pr-um at Ls ~100 (Savijarvi et al.
    # 2020, read): the default must lie within 40 % of it
    t = supply.default_climatology()
    w = t.column(np.array([100.0]), np.array([68.22]), np.array([234.25]))[0, 0] / 1e-3
    assert w == pytest.approx(30.0, rel=0.4)
    assert np.allclose(t.column_kg_m2, 0.7 * supply.default_climatology(1.0).column_kg_m2)


def test_interpolation_is_periodic_in_ls_and_linear_in_latitude(tmp_path):
    # hand-made table (invented values)
    p = tmp_path / "col.csv"
    p.write_text("# invented\nls_deg,latitude_deg,column_pr_um\n"
                 "0,-10,2\n0,10,4\n180,-10,6\n180,10,8\n")
    t = supply.read_column_table(p)
    w = t.column(np.array([0.0, 90.0, 270.0, 360.0]), np.array([0.0, -30.0]), np.array([0.0, 0.0])) / 1e-3
    np.testing.assert_allclose(w[:, 0], [3.0, 5.0, 5.0, 3.0])          # midway in latitude
    np.testing.assert_allclose(w[:, 1], [2.0, 4.0, 4.0, 2.0])          # clamped at the edge band
    assert t.sha256 and len(t.sha256) == 64


def test_netcdf_table_with_longitudes_round_trips(tmp_path):
    ls = np.array([0.0, 120.0, 240.0])
    lat = np.array([-45.0, 0.0, 45.0])
    lon = np.array([0.0, 180.0])
    vals = np.arange(18, dtype=float).reshape(3, 3, 2)
    ds = xr.Dataset({"h2o": (("ls", "lat", "lon"), vals, {"units": "pr-um"})},
                    coords={"ls": ls, "lat": lat, "lon": lon})
    path = tmp_path / "col.nc"
    ds.to_netcdf(path)
    t = supply.read_column_table(path, "h2o")
    w = t.column(np.array([120.0]), np.array([0.0]), np.array([90.0]))[0, 0] / 1e-3
    assert w == pytest.approx(0.5 * (vals[1, 1, 0] + vals[1, 1, 1]))   # midway in longitude
    with pytest.raises(ConfigError, match="water_column_variable"):
        supply.read_column_table(path)
    ds["h2o"].attrs["units"] = "furlongs"
    ds.to_netcdf(tmp_path / "bad.nc")
    with pytest.raises(InputDataError, match="units"):
        supply.read_column_table(tmp_path / "bad.nc", "h2o")


@pytest.mark.parametrize("text, match", [
    ("ls_deg,latitude_deg\n0,0\n", "needs columns"),
    ("ls_deg,latitude_deg,column_pr_um\n0,0,1\n0,0,2\n", "repeats"),
    ("ls_deg,latitude_deg,column_pr_um\n0,0,1\n90,10,2\n", "do not fill"),
    ("ls_deg,latitude_deg,column_pr_um\n0,0,1\n90,0,x\n", "non-numeric"),
    ("ls_deg,latitude_deg,column_pr_um,extra\n0,0,1,2\n", "unknown column"),
    ("ls_deg,latitude_deg,column_pr_um\n0,0,-1\n", "not allowed"),
])
def test_bad_tables_are_one_line_errors(tmp_path, text, match):
    p = tmp_path / "t.csv"
    p.write_text(text)
    with pytest.raises(InputDataError, match=match) as exc:
        supply.read_column_table(p)
    assert "\n" not in str(exc.value)


def test_spreadsheet_byte_order_mark_is_accepted(tmp_path):
    p = tmp_path / "bom.csv"
    p.write_bytes("\ufeffls_deg,latitude_deg,column_pr_um\n0,0,1\n".encode("utf-8"))
    assert supply.read_column_table(p).column_kg_m2.shape == (1, 1)


def _column_from_profile(q0, ps, t0, lapse, zc):
    # integrate the constructed profile on a fine grid (0.1 m): q0 below z_c, ice saturation
    # above, up to the kernel's profile top (40 km, or where the air falls to 115 K)
    top = min(40000.0, (t0 - supply.PROFILE_T_MIN) / lapse)
    z = np.linspace(0.0, top, int(top / 0.1) + 1)
    t = t0 - lapse * z
    expo = MARS.gravity_m_s2 / (8.314462618 / MARS.molar_mass_air_kg_mol * lapse)
    p = ps * (t / t0) ** expo
    qs = EPS * saturation_vapor_pressure_ice(t) / p
    q = np.where(z < zc, q0, np.minimum(qs, q0))
    return np.trapezoid(q[::-1], p[::-1]) / MARS.gravity_m_s2


@pytest.mark.parametrize("w_prum, ps, t0", [(10.0, 610.0, 210.0), (30.0, 850.0, 215.0), (3.0, 700.0, 205.0),
                                           (2.0, 900.0, 200.0), (60.0, 1000.0, 250.0), (20.0, 700.0, 230.0)])
def test_vertical_distribution_closes_the_column(w_prum, ps, t0):
    # The well-mixed-below-a-condensation-level profile (Smith 2002 retrieval assumption,
    # common practice) must hold exactly the given column: integrate it independently on a
    # 0.1-m-fine grid.  Tolerance 0.2 %: the kernel's 25 levels with power-law segments
    # (measured 5e-5 median, 1.4e-3 largest over 941 random columns).
    w = w_prum * 1e-3
    q0, zc = supply.near_surface_mixing_ratio(w, ps, t0)
    assert 0.0 < zc < 40000.0          # a condensation level inside the profile: the case tested
    assert _column_from_profile(float(q0), ps, t0, supply.DEFAULT_LAPSE_RATE_K_M, float(zc)) == pytest.approx(w, rel=2e-3)
    # confined below a condensation level, the near-surface ratio exceeds the fully mixed W g / p
    assert q0 >= w * MARS.gravity_m_s2 / ps * (1 - 1e-9)


def test_vertical_distribution_limits():
    # Savijarvi et al. (2015, JGR Planets, abstract, read): 5.5 pr-um over Gale <-> 28-30 ppmm
    # when well mixed; a warm, dry column is fully mixed: q0 = W g / p_s (hydrostatics).
    q0, zc = supply.near_surface_mixing_ratio(5.5e-3, 740.0, 240.0, lapse_rate_k_m=1.0e-3)
    assert q0 == pytest.approx(5.5e-3 * 3.71 / 740.0, rel=0.02) and 27.0e-6 < q0 < 30.5e-6
    # a column too wet for the air: saturated at the ground, z_c = 0 (3 pr-um cannot stay
    # unsaturated over 195 K air: the saturated column holds ~1.7 pr-um)
    q0, zc = supply.near_surface_mixing_ratio(3e-3, 700.0, 195.0)
    assert zc == 0.0 and _column_from_profile(float(q0), 700.0, 195.0, supply.DEFAULT_LAPSE_RATE_K_M, 0.0) < 3e-3
    q0, zc = supply.near_surface_mixing_ratio(1.0, 600.0, 200.0)
    assert zc == 0.0
    assert q0 == pytest.approx(EPS * saturation_vapor_pressure_ice(200.0) / 600.0, rel=1e-9)
    with pytest.raises(ConfigError, match="temperature_k"):
        supply.near_surface_mixing_ratio(1e-3, 600.0, 50.0)


def test_constant_mixing_ratio_supply():
    t = supply.constant_mixing_ratio_table(1.5e-4)
    assert t.vmr == 1.5e-4 and "0.00015" in t.name
    with pytest.raises(ConfigError, match="vapour_mixing_ratio"):
        supply.constant_mixing_ratio_table(0.5)
