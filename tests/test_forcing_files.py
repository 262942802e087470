"""Tests of wetcycle.forcing.files: CSV and NetCDF forcing readers."""

from pathlib import Path

import numpy as np
import pytest
import xarray as xr

from wetcycle import orbit
from wetcycle.clock import make_clock
from wetcycle.errors import ConfigError, InputDataError
from wetcycle.forcing import files

DEMO_CSV = Path(__file__).resolve().parents[1] / "forcing" / "analog_site_demo.csv"


def earth_clock(start="2024-12-10T00:00:00Z", steps=24, n=1):
    return make_clock("earth", steps_per_sol=steps, n_sols=n, start_utc=start)


def write(tmp_path, text, name="f.csv"):
    p = tmp_path / name
    p.write_text(text)
    return p


CSV_ISO = """# invented test series
time_utc,temperature_K,relative_humidity_percent,surface_pressure_hPa
2024-12-10T00:00:00Z,250.0,40,845.0
2024-12-10T06:00:00Z,256.0,30,845.0
2024-12-10T12:00:00Z,268.0,10,846.0
2024-12-10T18:00:00Z,262.0,20,846.0
2024-12-11T00:00:00Z,250.0,40,845.0
"""


def test_csv_iso_times_hand_interpolated(tmp_path):
    c = earth_clock(steps=8)  # 3-hour steps from 2024-12-10 00:00 UTC
    f = files.read_csv_forcing(write(tmp_path, CSV_ISO), c)
    # hand-computed linear interpolation at 00, 03, 06, ... 21 h; % -> fraction, hPa -> Pa
    np.testing.assert_allclose(f.temperature_K, [250, 253, 256, 262, 268, 265, 262, 256], rtol=1e-12)
    np.testing.assert_allclose(f.relative_humidity, [.40, .35, .30, .20, .10, .15, .20, .30], rtol=1e-12)
    np.testing.assert_allclose(f.surface_pressure_Pa[:3], [84500, 84500, 84500])
    assert f.time_s is not None and f.n_steps == 8


def test_csv_relative_seconds_and_sols(tmp_path):
    c = make_clock("mars", steps_per_sol=4, n_sols=1)
    sol = orbit.MARS.sol_s
    p = write(tmp_path, "time_sol,temperature_degC,vapor_pressure_Pa\n0,-50,0.1\n1,-30,0.3\n")
    f = files.read_csv_forcing(p, c)
    np.testing.assert_allclose(f.temperature_K, 223.15 + 20 * np.arange(4) / 4, rtol=1e-12)
    np.testing.assert_allclose(f.vapor_pressure_Pa, 0.1 + 0.2 * np.arange(4) / 4, rtol=1e-12)
    p2 = write(tmp_path, f"time_s,temperature_K,vapor_pressure_Pa\n0,223.15,0.1\n{sol},243.15,0.3\n", "s.csv")
    np.testing.assert_allclose(files.read_csv_forcing(p2, c).temperature_K, f.temperature_K, rtol=1e-12)


GAPPY = """time_s,temperature_K,vapor_pressure_Pa
0,200,0.1
3600,210,
7200,220,0.3
14400,240,0.5
"""


def test_gap_policy_refuse(tmp_path):
    c = make_clock("earth", steps_per_sol=24, n_sols=1, start_utc="2024-12-10T00:00:00Z")
    p = write(tmp_path, GAPPY)
    with pytest.raises(InputDataError, match=r"f\.csv: row 4 \(line 5\), time column: .*missing rows") as ei:
        files.read_csv_forcing(p, c)
    assert "\n" not in str(ei.value)
    p2 = write(tmp_path, GAPPY.replace("14400,240,0.5", "10800,230,0.4"), "g.csv")
    with pytest.raises(InputDataError, match=r"g\.csv: row 2 \(line 3\), column 'vapor_pressure_Pa': missing value"):
        files.read_csv_forcing(p2, c)


def test_gap_policy_interpolate(tmp_path):
    c = make_clock("earth", steps_per_sol=24, n_sols=1, start_utc="2024-12-10T00:00:00Z")
    text = GAPPY + "".join(f"{t},240,0.5\n" for t in range(18000, 90001, 3600))
    p = write(tmp_path, text)
    f = files.read_csv_forcing(p, c, gap_policy="interpolate", max_gap_s=7200.0)
    # hand-computed: the missing value at 1 h is 0.2 (linear 0.1 -> 0.3), 3 h is 230 K / 0.4 Pa
    np.testing.assert_allclose(f.vapor_pressure_Pa[:5], [0.1, 0.2, 0.3, 0.4, 0.5], rtol=1e-12)
    np.testing.assert_allclose(f.temperature_K[3], 230.0)
    with pytest.raises(InputDataError, match="exceeds max_gap_s = 3600 s"):
        files.read_csv_forcing(p, c, gap_policy="interpolate", max_gap_s=3600.0)
    with pytest.raises(ConfigError, match="max_gap_s"):
        files.read_csv_forcing(p, c, gap_policy="interpolate")


@pytest.mark.parametrize("text,match", [
    ("time_s,temperature_K,vapor_pressure_Pa\n0,200,0.1\n1,abc,0.2\n",
     r"row 2 \(line 3\), column 'temperature_K': 'abc' is not a number"),
    ("time_s,temperature_K,vapor_pressure_Pa\n0,200,0.1\n1,200\n", r"row 2 \(line 3\): 2 fields"),
    ("time_s,temperature_K,vapor_pressure_Pa\n0,200,0.1\n1,900,0.2\n",
     r"row 2 \(line 3\), column 'temperature_K': 900.0 .* outside"),
    ("time_s,temp,vapor_pressure_Pa\n0,200,0.1\n", r"column 'temp' is not known"),
    ("time_s,temperature_K\n0,200\n1,200\n", "exactly one humidity column"),
    ("time_s,temperature_K,vapor_pressure_Pa\n0,200,0.1\n0,200,0.2\n", r"row 2 \(line 3\), time column"),
    ("time_utc,temperature_K,vapor_pressure_Pa\n2024-12-10T00:00:00Z,200,0.1\nyesterday,200,0.1\n",
     r"row 2 \(line 3\), column 'time_utc'"),
])
def test_malformed_csv(tmp_path, text, match):
    c = make_clock("earth", steps_per_sol=1, n_sols=1, start_utc="2024-12-10T00:00:00Z")
    with pytest.raises(InputDataError, match=match) as ei:
        files.read_csv_forcing(write(tmp_path, text, "bad.csv"), c)
    assert str(ei.value).startswith("bad.csv") and "\n" not in str(ei.value)


def test_csv_must_cover_clock(tmp_path):
    c = make_clock("earth", steps_per_sol=24, n_sols=2, start_utc="2024-12-10T00:00:00Z")
    with pytest.raises(InputDataError, match="no extrapolation"):
        files.read_csv_forcing(write(tmp_path, CSV_ISO), c)


def test_demo_csv():
    c = make_clock("earth", steps_per_sol=48, n_sols=3, start_utc="2024-12-10T00:00:00Z")
    f = files.read_csv_forcing(DEMO_CSV, c)
    assert f.n_steps == 144 and np.all(f.relative_humidity < 1)


def test_netcdf_round_trip_with_mapping(tmp_path):
    # write with xarray, CF time units "hours since ...", degC and %, then read back via a mapping
    times = np.array(["2024-12-10T00:00", "2024-12-10T06:00", "2024-12-10T12:00",
                      "2024-12-10T18:00", "2024-12-11T00:00"], dtype="datetime64[ns]")
    ds = xr.Dataset(
        {"tsurf": ("t", np.array([-23.15, -17.15, -5.15, -11.15, -23.15]), {"units": "degC"}),
         "rh": ("t", np.array([40.0, 30.0, np.nan, 20.0, 40.0]), {"units": "%"}),
         "ps": ("t", np.full(5, 845.0), {"units": "hPa"})},
        coords={"t": ("t", times)},
    )
    ds.t.encoding = {"units": "hours since 2024-12-10 00:00:00", "calendar": "standard"}
    path = tmp_path / "series.nc"
    ds.to_netcdf(path)
    c = earth_clock(steps=8)
    mapping = {"time": "t", "temperature": "tsurf", "relative_humidity": "rh", "surface_pressure": "ps"}
    with pytest.raises(InputDataError, match=r"series\.nc: index 2, column 'rh': missing value"):
        files.read_netcdf_forcing(path, c, mapping)
    f = files.read_netcdf_forcing(path, c, mapping, gap_policy="interpolate", max_gap_s=12 * 3600.0)
    # hand-computed (same values as the CSV test, degC -> K): 250, 253, 256, ...
    np.testing.assert_allclose(f.temperature_K, [250, 253, 256, 262, 268, 265, 262, 256], rtol=1e-12)
    # RH gap at 12 h filled linearly between 30% (6 h) and 20% (18 h)
    np.testing.assert_allclose(f.relative_humidity[4], 0.25, rtol=1e-12)
    np.testing.assert_allclose(f.surface_pressure_Pa, 84500.0)
    with pytest.raises(InputDataError, match="variable 'nope'"):
        files.read_netcdf_forcing(path, c, {**mapping, "temperature": "nope"})
    with pytest.raises(ConfigError, match="'temp'"):
        files.read_netcdf_forcing(path, c, {"time": "t", "temp": "tsurf"})


def test_netcdf_units_checked(tmp_path):
    ds = xr.Dataset({"T": ("n", [200.0, 210.0], {"units": "F"}),
                     "e": ("n", [0.1, 0.2], {"units": "Pa"}),
                     "time": ("n", [0.0, 1.0], {"units": "sol"})})
    path = tmp_path / "u.nc"
    ds.to_netcdf(path)
    c = make_clock("mars", steps_per_sol=2, n_sols=1)
    m = {"time": "time", "temperature": "T", "vapor_pressure": "e"}
    with pytest.raises(InputDataError, match="units 'F' not allowed; allowed: K, degC"):
        files.read_netcdf_forcing(path, c, m)


def _raw_series(tmp_path, name, calendar, n_t=5, n_T=5):
    # numbers as stored in a file; time attributes written verbatim (no xarray encoding)
    attrs = {"units": "hours since 2024-12-10 00:00:00"}
    if calendar is not None:
        attrs["calendar"] = calendar
    ds = xr.Dataset({"time": ("t", np.arange(n_t) * 6.0, attrs),
                     "tsurf": ("t2" if n_T != n_t else "t", np.linspace(250.0, 262.0, n_T), {"units": "K"}),
                     "e": ("t", np.full(n_t, 0.5), {"units": "Pa"})})
    path = tmp_path / name
    ds.to_netcdf(path)
    return path


@pytest.mark.parametrize("calendar", [None, "standard", "noleap", "365_day", "all_leap", "360_day"])
def test_netcdf_cf_calendars_within_a_day(tmp_path, calendar):
    # CF conventions 1.11 sec. 4.4.1: within one day of the reference date no calendar's labels
    # differ, so a day's record reads the same whatever the calendar.
    path = _raw_series(tmp_path, f"cal_{calendar}.nc", calendar)
    f = files.read_netcdf_forcing(path, earth_clock(steps=8),
                                  {"time": "time", "temperature": "tsurf", "vapor_pressure": "e"})
    # hand-computed: linear 250 -> 262 K over 24 h, sampled every 3 h
    np.testing.assert_allclose(f.temperature_K, 250.0 + 12.0 * np.arange(8) * 3.0 / 24.0, rtol=1e-12)


def test_netcdf_noleap_labels_are_read_as_real_dates(tmp_path):
    # CF conventions sec. 4.4.1 / cftime: in "noleap", day 59 after 2024-01-01 is labelled 1 March
    # (31 + 28 days), while 59 real days reach 29 February.  The label is what the model means.
    attrs = {"units": "days since 2024-01-01 00:00:00", "calendar": "noleap"}
    days = np.array([58.0, 58.5, 59.0, 59.5, 60.0])
    ds = xr.Dataset({"time": ("t", days, attrs),
                     "tsurf": ("t", np.array([250.0, 251.0, 252.0, 253.0, 254.0]), {"units": "K"}),
                     "e": ("t", np.full(5, 0.5), {"units": "Pa"})})
    path = tmp_path / "noleap.nc"
    ds.to_netcdf(path)
    c = make_clock("earth", steps_per_sol=24, n_sols=1, start_utc="2024-03-01T00:00:00Z")
    f = files.read_netcdf_forcing(path, c, {"time": "time", "temperature": "tsurf", "vapor_pressure": "e"},
                                  gap_policy="interpolate", max_gap_s=2 * 86400.0)
    # 1 March 00:00 is the sample labelled 252 K (day 59), 12:00 the one labelled 253 K
    assert f.temperature_K[0] == pytest.approx(252.0, abs=1e-6)
    assert f.temperature_K[12] == pytest.approx(253.0, abs=1e-6)


def test_netcdf_calendar_and_length_refused(tmp_path):
    m = {"time": "time", "temperature": "tsurf", "vapor_pressure": "e"}
    with pytest.raises(InputDataError, match="calendar 'julian' not allowed; allowed: standard"):
        files.read_netcdf_forcing(_raw_series(tmp_path, "j.nc", "julian"), earth_clock(steps=8), m)
    with pytest.raises(InputDataError, match=r"'tsurf' \(temperature\) has dimensions \{'t2': 4\}"):
        files.read_netcdf_forcing(_raw_series(tmp_path, "l.nc", "standard", n_T=4), earth_clock(steps=8), m)


def test_csv_from_a_spreadsheet_with_byte_order_mark(tmp_path):
    # Unicode 15.0 sec. 23.8: U+FEFF at the start of a UTF-8 file is a byte-order mark, not text;
    # spreadsheets write it.  CRLF line ends (RFC 4180) and indented comment lines are read too.
    p = tmp_path / "bom.csv"
    p.write_bytes(b"\xef\xbb\xbf" + CSV_ISO.replace("\n", "\r\n").replace("# invented", "  # invented").encode())
    f = files.read_csv_forcing(p, earth_clock(steps=4))
    np.testing.assert_allclose(f.temperature_K, [250.0, 256.0, 268.0, 262.0])  # the file's own samples


def test_csv_not_utf8_is_one_line(tmp_path):
    p = tmp_path / "latin1.csv"
    p.write_bytes("time_s,temp\u00e9rature_K\n0,1\n".encode("latin-1"))
    with pytest.raises(InputDataError, match="is not UTF-8 text") as ei:
        files.read_csv_forcing(p, earth_clock())
    assert "\n" not in str(ei.value)


def test_csv_rows_keep_their_line_numbers_past_comments(tmp_path):
    text = CSV_ISO.replace("2024-12-10T12:00:00Z,268.0", "# a note\n\n2024-12-10T12:00:00Z,968.0")
    with pytest.raises(InputDataError, match=r"row 3 \(line 7\), column 'temperature_K': 968.0"):
        files.read_csv_forcing(write(tmp_path, text), earth_clock(steps=4))


def test_netcdf_360_day_labels_are_read_as_real_dates(tmp_path):
    # CF conventions sec. 4.4.1: a "360_day" year has twelve 30-day months; day 59 after 1 January
    # is labelled 30 February, which no real calendar has (dropped), day 60 is 1 March.  xarray's
    # convert_calendar (align_on="date") keeps each label's meaning.
    attrs = {"units": "days since 2023-01-01 00:00:00", "calendar": "360_day"}
    days = np.array([57.0, 58.0, 59.0, 60.0, 61.0])   # 28, 29, 30 February, 1, 2 March
    ds = xr.Dataset({"time": ("t", days, attrs),
                     "tsurf": ("t", np.array([250.0, 251.0, 252.0, 253.0, 254.0]), {"units": "K"}),
                     "e": ("t", np.full(5, 0.5), {"units": "Pa"})})
    path = tmp_path / "d360.nc"
    ds.to_netcdf(path)
    c = make_clock("earth", steps_per_sol=1, n_sols=2, start_utc="2023-03-01T00:00:00Z")
    f = files.read_netcdf_forcing(path, c, {"time": "time", "temperature": "tsurf", "vapor_pressure": "e"},
                                  gap_policy="interpolate", max_gap_s=3 * 86400.0)
    np.testing.assert_allclose(f.temperature_K, [253.0, 254.0], atol=1e-9)  # the labels 1 and 2 March
