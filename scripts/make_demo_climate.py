"""Write forcing/climate_demo.nc: an INVENTED climate-model-style forcing file (demo only).

    python scripts/make_demo_climate.py

Ten days of three-hourly surface fields over an imaginary cold desert plateau on Earth, laid
out as climate models write them, to exercise the reader: CF time in the "noleap" calendar,
latitude descending (north to south), longitudes in -180..180 while the demo scenario's grid uses
0..360, dimensions in the order (time, lon, lat), vapour pressure in hPa.  Values are invented:
a diurnal surface-temperature cycle of 250-276 K that varies smoothly across the region, a
vapour pressure of 0.5-0.9 hPa peaking in the afternoon, a surface pressure of 62-66 kPa falling
with an invented elevation.
"""

from pathlib import Path

import numpy as np
import xarray as xr

OUT = Path(__file__).resolve().parents[1] / "forcing" / "climate_demo.nc"


def main():
    hours = np.arange(0, 10 * 24, 3.0)                    # 80 records
    lat = np.array([-70.5, -71.0, -71.5, -72.0])           # descending
    lon = np.array([-12.0, -11.0, -10.0, -9.0, -8.0])      # -180..180 convention
    h = hours % 24.0
    diurnal = np.cos(2 * np.pi * (h - 14.0) / 24.0)        # peak at 14 h local time (invented)
    ramp_lat = (lat + 70.5) / -1.5                         # 0 north .. 1 south
    ramp_lon = (lon + 12.0) / 4.0
    ts = (263.0 + 13.0 * diurnal[:, None, None] - 3.0 * ramp_lat[None, None, :]
          + 1.5 * ramp_lon[None, :, None])
    e_hpa = 0.7 + 0.2 * diurnal[:, None, None] + 0.0 * ramp_lon[None, :, None] - 0.05 * ramp_lat[None, None, :]
    ps = (66000.0 - 4000.0 * ramp_lat[None, None, :] + 0.0 * ramp_lon[None, :, None]) * np.ones_like(ts)
    ds = xr.Dataset(
        {"ts": (("time", "lon", "lat"), ts.astype("float32"),
                {"units": "K", "standard_name": "surface_temperature", "long_name": "surface temperature"}),
         "e": (("time", "lon", "lat"), e_hpa.astype("float32"),
               {"units": "hPa", "standard_name": "water_vapor_partial_pressure_in_air",
                "long_name": "near-surface water vapour pressure"}),
         "ps": (("time", "lon", "lat"), ps.astype("float32"),
                {"units": "Pa", "standard_name": "surface_air_pressure", "long_name": "surface pressure"})},
        coords={"time": ("time", hours, {"units": "hours since 2031-01-05 00:00:00", "calendar": "noleap",
                                         "standard_name": "time", "axis": "T"}),
                "lat": ("lat", lat, {"units": "degrees_north", "standard_name": "latitude", "axis": "Y"}),
                "lon": ("lon", lon, {"units": "degrees_east", "standard_name": "longitude", "axis": "X"})},
        attrs={"title": "INVENTED demo forcing for wetcycle (not real data)", "Conventions": "CF-1.8",
               "source": "scripts/make_demo_climate.py"})
    ds.to_netcdf(OUT, encoding={"time": {"_FillValue": None}, "lat": {"_FillValue": None},
                                "lon": {"_FillValue": None}})
    print(f"wrote {OUT} ({OUT.stat().st_size} bytes)")


if __name__ == "__main__":
    main()
