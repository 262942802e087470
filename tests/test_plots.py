"""Figures: the result figure and the phase diagram draw, save and refuse bad input clearly.

The result used here is synthetic: invented forcing at two invented sites, stepped
through the real phase kernel with ``wetcycle.run_series``, arranged in the layout
of a site result (output.build_dataset); the Ls of each step is invented too (a figure test needs
variety, not a real season).  Physical values asserted on the diagram are the
system's own derived values (eutectic: derived, see test_salt_references.py;
ice line: Murphy & Koop 2005, see test_water.py) -- what is checked is that the
figure draws them where they are.
"""

import numpy as np
import pytest
import xarray as xr

import wetcycle
from wetcycle import plots, salts
from wetcycle.errors import ConfigError, InputDataError, UnknownNameError, ValidityError, WetcycleError
from wetcycle.phase import states
from wetcycle.vocabulary import attrs
from wetcycle.water import ice_water_activity, saturation_vapor_pressure_ice, saturation_vapor_pressure_liquid

SOL = 88775.244          # Mars sol [s], Allison & McEwen (2000)
STEPS = 48
SALTS = ("Mg(ClO4)2", "CaCl2")
PNG_MIN_BYTES = 20_000   # a multi-panel 150-dpi PNG; an empty or failed canvas is a few kB


def make_result(n_sols=5, dry_first_sol=True):
    """A small site result dataset (the layout of output.build_dataset) from invented forcing."""
    t = np.arange(n_sols * STEPS) * (SOL / STEPS)
    frac = (t / SOL) % 1.0
    sol = np.floor(t / SOL).astype(int)
    sites = dict(name=["Alpha Flat", "Beta Ridge"], lat=[-42.0, 12.5], lon=[310.0, 25.0],
                 T_mean=[232.0, 240.0], T_amp=[20.0, 22.0])
    forcing = {k: [] for k in ("surface_temperature", "salt_temperature", "vapor_pressure",
                               "relative_humidity", "relative_humidity_ice", "local_solar_time")}
    per_salt = {k: [] for k in ("phase_state", "brine_water_activity", "liquid_water", "liquid_fraction")}
    for i in range(2):
        T = sites["T_mean"][i] + sites["T_amp"][i] * np.sin(2 * np.pi * (frac - 0.375))
        Ts = sites["T_mean"][i] + 1.3 * sites["T_amp"][i] * np.sin(2 * np.pi * (frac - 0.33))
        e = saturation_vapor_pressure_ice(T.min() + 2.0) * np.ones_like(t)
        if dry_first_sol:
            e[sol == 0] *= 0.05
        cap = saturation_vapor_pressure_ice(T)               # frost caps the vapour pressure
        e = np.minimum(e, cap)
        rh = e / saturation_vapor_pressure_liquid(T)
        forcing["surface_temperature"].append(Ts)
        forcing["salt_temperature"].append(T)
        forcing["vapor_pressure"].append(e)
        forcing["relative_humidity"].append(rh)
        forcing["relative_humidity_ice"].append(e / cap)
        forcing["local_solar_time"].append(frac * 24.0)      # invented: run sols start at local midnight
        for k in per_salt:
            per_salt[k].append([])
        for s in SALTS:
            r = wetcycle.run_series(s, t, T, rh)
            for k in per_salt:
                per_salt[k][i].append(r[k].values)
    ls = (t / SOL * 60.0 + 10.0) % 360.0                      # invented: 60° of Ls per sol
    ls_idx = (ls // 30).astype(int)
    lf = np.asarray(per_salt["liquid_fraction"]).transpose(1, 0, 2)      # salt, site, time
    by_ls = np.stack([(lf * (ls_idx == b)).sum(axis=-1) * (SOL / STEPS) / 3600.0 for b in range(12)], -1)
    data = {k: (("site", "time"), np.asarray(v), attrs(k)) for k, v in forcing.items()}
    for k, v in per_salt.items():
        data[k] = (("salt", "site", "time"), np.asarray(v).transpose(1, 0, 2), attrs(k))
    data["phase_state"] = (data["phase_state"][0], data["phase_state"][1].astype(np.int8), data["phase_state"][2])
    data["liquid_hours_by_ls"] = (("salt", "site", "ls_bin"), by_ls, attrs("liquid_hours_by_ls"))
    data["liquid_hours_per_year"] = (("salt", "site"), by_ls.sum(-1), attrs("liquid_hours_per_year"))
    coords = dict(site=("site", sites["name"]), latitude=("site", sites["lat"]),
                  longitude=("site", sites["lon"]), salt=("salt", list(SALTS)),
                  time=("time", t, attrs("time")), sol=("time", sol, attrs("sol")),
                  solar_longitude=("time", ls), ls_bin=("ls_bin", 15.0 + 30.0 * np.arange(12)))
    ds = xr.Dataset(data, coords=coords)
    ds = ds.set_coords("local_solar_time")
    ds.attrs.update(scenario_name="plot-test", steps_per_sol=STEPS, law="equilibrium", Conventions="CF-1.8")
    return ds


@pytest.fixture(scope="module")
def result():
    return make_result()


def first_wet_sol(ds, site=0):
    liquid = np.isin(ds.phase_state.isel(site=site).values, states.LIQUID).any(axis=0)
    return int(ds.sol.values[liquid][0])


def assert_png(path):
    assert path.is_file()
    head = path.read_bytes()[:8]
    assert head == b"\x89PNG\r\n\x1a\n"
    assert path.stat().st_size > PNG_MIN_BYTES


# ---- result figure -------------------------------------------------------------------
def test_plot_result_writes_png_with_every_panel(result, tmp_path):
    out = plots.plot_result(result, tmp_path / "result.png")
    assert out == tmp_path / "result.png"
    assert_png(out)
    assert not list(tmp_path.glob(".*.part"))              # nothing half-written left
    fig = plots.result_figure(result)
    # temperature, humidity, one band per salt (+ its twin for liquid water), yearly bars
    assert len(fig.axes) == 2 + 2 * len(SALTS) + 1


def test_default_window_starts_at_first_wet_sol(result):
    # the synthetic forcing keeps sol 0 dry (vapour pressure cut to 5 %)
    wet = first_wet_sol(result)
    assert wet >= 1
    fig = plots.result_figure(result)
    x0, x1 = fig.axes[0].get_xlim()
    assert x0 == pytest.approx(wet, abs=1e-9)
    assert x1 == pytest.approx(wet + 3, abs=1e-9)          # three whole sols
    assert "sols %d–%d" % (wet, wet + 2) in fig.get_suptitle()


def test_chosen_sols_salts_and_site(result):
    fig = plots.result_figure(result, sols=(3, 4), salts=["cacl2"], site="Beta Ridge")
    assert len(fig.axes) == 2 + 2 + 1
    assert fig.axes[0].get_xlim() == pytest.approx((3.0, 5.0))
    title = fig.get_suptitle()
    assert "Beta Ridge" in title and "12.5°N" in title
    assert plots.CAVEAT in [t.get_text() for t in fig.texts]


def test_state_band_colours_follow_the_states(result):
    # invariant: every coloured span in a band has the colour of a state in the series
    from matplotlib.colors import to_hex
    fig = plots.result_figure(result, sols=(0, 4), salts=["Mg(ClO4)2"])
    band = fig.axes[2]
    used = {to_hex(c.get_facecolor()[0]) for c in band.collections}
    present = set(np.unique(result.phase_state.sel(salt="Mg(ClO4)2").isel(site=0).values))
    assert used == {plots.STATE_COLOURS[int(c)].lower() for c in present}
    legend = [t.get_text() for t in band.get_legend().get_texts()]
    assert legend == [n.replace("_", " ") for n in states.NAMES]


def test_statistics_only_result_draws_the_yearly_panel(result, tmp_path):
    stats = result.drop_dims("time")
    fig = plots.result_figure(stats)
    assert len(fig.axes) == 1
    assert "statistics only" in fig.get_suptitle()
    assert_png(plots.plot_result(stats, tmp_path / "stats.png"))


def test_run_series_result_and_netcdf_path(result, tmp_path):
    t = np.arange(0, 2 * SOL, SOL / STEPS)
    T = 230.0 + 15.0 * np.sin(2 * np.pi * t / SOL)
    single = wetcycle.run_series("Mg(ClO4)2", t, T, np.full(t.size, 0.4))
    fig = plots.result_figure(single)
    assert len(fig.axes) == 2 + 2                           # no yearly statistics in a series run
    path = tmp_path / "result.nc"
    result.to_netcdf(path)
    assert_png(plots.plot_result(path, tmp_path / "from-file.png"))


@pytest.mark.parametrize("kwargs, error, text", [
    (dict(salts=["KCl"]), ConfigError, "salts: 'KCl' is not in the result"),
    (dict(sols=(4, 9)), ConfigError, "outside the run"),
    (dict(sols=(3, 2)), ConfigError, "reversed"),
    (dict(sols="all"), ConfigError, "not a pair"),
    (dict(site="Gamma"), ConfigError, "site: 'Gamma' is not in the result"),
    (dict(site=5), ConfigError, "outside the result"),
])
def test_result_errors(result, tmp_path, kwargs, error, text):
    with pytest.raises(error, match=text) as info:
        plots.plot_result(result, tmp_path / "x.png", **kwargs)
    assert "\n" not in str(info.value)
    assert not (tmp_path / "x.png").exists()


def test_result_errors_on_paths_and_content(result, tmp_path):
    with pytest.raises(ConfigError, match="suffix"):
        plots.plot_result(result, tmp_path / "x.jpeg")
    with pytest.raises(ConfigError, match="does not exist"):
        plots.plot_result(result, tmp_path / "missing" / "x.png")
    empty = result[["liquid_hours_per_year"]]              # no series and no liquid_hours_by_ls
    with pytest.raises(InputDataError, match="neither series"):
        plots.plot_result(empty, tmp_path / "x.png")
    with pytest.raises(InputDataError, match="does not exist"):
        plots.plot_result(tmp_path / "none.nc", tmp_path / "x.png")
    assert issubclass(InputDataError, WetcycleError)


# ---- phase diagram ---------------------------------------------------------------------
def _lines(ax):
    return [ln for ln in ax.get_lines() if len(ln.get_xdata())]


def test_plot_diagram_writes_png_and_draws_the_eutectic(tmp_path):
    out = plots.plot_diagram("NaCl", tmp_path / "nacl.png")
    assert_png(out)
    fig = plots.diagram_figure("NaCl")
    assert len(fig.axes) == 1
    ax = fig.axes[0]
    s = salts.load("NaCl")
    # eutectic line at the system's derived eutectic (derived, see test_salt_references.py)
    te = s.eutectic()["temperature_K"]
    vertical = [ln for ln in _lines(ax) if np.ptp(np.asarray(ln.get_xdata(), float)) == 0]
    assert any(float(ln.get_xdata()[0]) == pytest.approx(te, abs=1e-9) for ln in vertical)
    # efflorescence RH from the data file as a horizontal line
    flat = [ln for ln in _lines(ax) if np.ptp(np.asarray(ln.get_ydata(), float)) == 0
            and ln.get_ydata()[0] != 0 and len(ln.get_xdata()) == 2]
    assert any(float(ln.get_ydata()[0]) == pytest.approx(s.efflorescence_rh) for ln in flat)
    assert ax.get_xlim() == (s.T_min, s.T_max)
    assert "NaCl" in fig.get_suptitle()
    assert ax.get_xlabel() == "temperature [K]"


def test_diagram_ice_line_is_the_ice_water_activity():
    # Murphy & Koop (2005) a_w,ice, itself checked in test_water.py
    fig = plots.diagram_figure("Mg(ClO4)2")
    ax = fig.axes[0]
    dashed = [ln for ln in _lines(ax) if ln.get_linestyle() == "--" and len(ln.get_xdata()) > 2]
    assert dashed
    T = np.asarray(dashed[0].get_xdata(), float)
    y = np.asarray(dashed[0].get_ydata(), float)
    ok = T <= 273.15
    np.testing.assert_allclose(y[ok], ice_water_activity(T[ok]), rtol=1e-12)
    assert np.all(np.isnan(y[~ok]))


def test_diagram_stable_drh_is_the_system_drh():
    # thick curve = DRH of the stable solid above the eutectic (derived, see test_salt_references.py)
    s = salts.load("MgCl2")
    ax = plots.diagram_figure("MgCl2").axes[0]
    thick = [ln for ln in _lines(ax) if ln.get_linewidth() == pytest.approx(2.2)]
    assert len(thick) == len(s.solids)
    T = np.asarray(thick[0].get_xdata(), float)
    y = np.fmax.reduce([np.asarray(ln.get_ydata(), float) for ln in thick])   # one stable curve per T
    above = T > s.eutectic()["temperature_K"] + 0.5
    want = np.asarray(s.deliquescence_rh(T[above]), float)
    got = y[above]
    ok = np.isfinite(want) & np.isfinite(got)
    assert ok.mean() > 0.95
    np.testing.assert_allclose(got[ok], want[ok], rtol=1e-9)


@pytest.mark.parametrize("name", salts.names())
def test_every_system_draws(name, tmp_path):
    assert_png(plots.plot_diagram(name, tmp_path / "d.png"))


def test_diagram_with_trajectory(result, tmp_path):
    fig = plots.diagram_figure("Mg(ClO4)2", trajectory=result, site=0)
    ax = fig.axes[0]
    from matplotlib.colors import to_hex
    colours = {to_hex(c.get_facecolor()[0]) for c in ax.collections
               if c.get_offsets().size and c.get_offsets().shape[0] > 0 and c.__class__.__name__ == "PathCollection"}
    present = set(np.unique(result.phase_state.sel(salt="Mg(ClO4)2").isel(site=0).values))
    assert colours == {plots.STATE_COLOURS[int(c)].lower() for c in present}
    # salt not in the run: one grey trajectory
    fig = plots.diagram_figure("NaClO4", trajectory=result, site="Beta Ridge")
    pc = [c for c in fig.axes[0].collections if c.__class__.__name__ == "PathCollection"]
    assert len(pc) == 1
    assert_png(plots.plot_diagram("CaCl2", tmp_path / "traj.png", trajectory=result, T_range=(215, 260)))


def test_diagram_errors(result, tmp_path):
    with pytest.raises(UnknownNameError, match="not known"):
        plots.plot_diagram("NaBr", tmp_path / "x.png")
    with pytest.raises(ValidityError, match="T_range"):
        plots.plot_diagram("NaCl", tmp_path / "x.png", T_range=(200.0, 300.0))
    with pytest.raises(ConfigError, match="T_range"):
        plots.plot_diagram("NaCl", tmp_path / "x.png", T_range=250.0)
    with pytest.raises(InputDataError, match="no series"):
        plots.plot_diagram("NaCl", tmp_path / "x.png", trajectory=result.drop_dims("time"))
    with pytest.raises(ConfigError, match="site"):
        plots.plot_diagram("NaCl", tmp_path / "x.png", trajectory=result, site="Gamma")
    assert not (tmp_path / "x.png").exists()


def test_time_decoded_to_dates_gives_the_same_sol_positions(result):
    # xarray's default CF decoding (CF-1.8 sec. 4.4) turns "seconds since <date>" into dates; the
    # figures must place the steps at the same sol positions either way.
    dated = result.assign_coords(time=np.datetime64("2031-01-01T00:00:00", "ns")
                                 + (result.time.values * 1e9).astype("timedelta64[ns]"))
    (x_dated, sol_dated), (x_s, sol_s) = plots._sol_position(dated), plots._sol_position(result)
    np.testing.assert_allclose(x_dated, x_s, atol=1e-9)
    assert sol_dated == pytest.approx(sol_s, rel=1e-12)


def test_long_windows_are_drawn_as_daily_summaries():
    # Issue: a whole-year plot of steps is an aliased moire.  A window longer than
    # plots.DAILY_AFTER_SOLS sols is drawn as daily ranges and daily liquid hours.
    ds = make_result(n_sols=plots.DAILY_AFTER_SOLS + 2)
    fig = plots.result_figure(ds, sols=(0, plots.DAILY_AFTER_SOLS + 1))
    labels = [ax.get_ylabel() for ax in fig.axes]
    assert any("liquid h/sol" in lb for lb in labels)
    assert any("daily summaries" in ax.get_xlabel() for ax in fig.axes)
    bars = [ax for ax in fig.axes if "liquid h/sol" in ax.get_ylabel()][0]
    heights = [p.get_height() for p in bars.patches]
    lf = ds.liquid_fraction.sel(salt=SALTS[0]).isel(site=0).values
    np.testing.assert_allclose(sum(heights), lf.sum() * SOL / STEPS / 3600.0, rtol=1e-9)  # hours = sum f dt
    short = plots.result_figure(ds, sols=(0, 2))
    assert not any("liquid h/sol" in ax.get_ylabel() for ax in short.axes)


def test_night_shading_follows_the_sun_at_the_site():
    # Solar elevation (spherical astronomy, common practice): at 80 N in northern summer (Ls 90,
    # declination +25.2 deg on Mars) the sun never sets; at the equator it sets every sol.
    ds = make_result(n_sols=2)
    ds = ds.assign_coords(solar_longitude=("time", np.full(ds.sizes["time"], 90.0)),
                          latitude=("site", [80.0, 0.0]))
    idx = np.arange(ds.sizes["time"])
    assert plots.sun_up(ds, 0, idx).all()
    up = plots.sun_up(ds, 1, idx)
    lt = ds.local_solar_time.isel(site=1).values
    assert not up[(lt < 5.5) | (lt > 18.5)].any() and up[(lt > 6.5) & (lt < 17.5)].all()
