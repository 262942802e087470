"""Write forcing/demo_region.nc: an INVENTED map of surface properties for the grid demo.

    python scripts/make_demo_region.py

Smooth made-up fields on a 5-degree lat/lon grid (40 S-40 N, 0-90 E): albedo, thermal inertia
and elevation of an imaginary region with a bright dusty highland and a dark low plain, plus a
masked (NaN) crater floor.  Nothing here is observed data.
"""

from pathlib import Path

import numpy as np
import xarray as xr

ROOT = Path(__file__).resolve().parents[1]


def main():
    lat = np.arange(-40.0, 40.1, 5.0)
    lon = np.arange(0.0, 90.1, 5.0)
    LA, LO = np.meshgrid(lat, lon, indexing="ij")
    high = np.exp(-(((LA - 15.0) / 15.0) ** 2 + ((LO - 60.0) / 20.0) ** 2))   # invented highland
    low = np.exp(-(((LA + 20.0) / 12.0) ** 2 + ((LO - 25.0) / 18.0) ** 2))   # invented low plain
    albedo = 0.18 + 0.12 * high - 0.04 * low
    inertia = 250.0 - 150.0 * high + 200.0 * low
    elevation = -1000.0 + 4000.0 * high - 3000.0 * low
    crater = ((LA - 0.0) ** 2 + (LO - 40.0) ** 2) < 6.0 ** 2
    albedo = np.where(crater, np.nan, albedo)
    ds = xr.Dataset(
        {"alb": (("lat", "lon"), albedo, {"units": "1", "long_name": "invented bolometric albedo"}),
         "ti": (("lat", "lon"), inertia, {"units": "J m-2 K-1 s-1/2", "long_name": "invented thermal inertia"}),
         "elev": (("lat", "lon"), elevation, {"units": "m", "long_name": "invented elevation"})},
        coords={"lat": ("lat", lat, {"units": "degrees_north", "standard_name": "latitude"}),
                "lon": ("lon", lon, {"units": "degrees_east", "standard_name": "longitude"})},
        attrs={"title": "INVENTED surface properties for the wetcycle grid demo (not observed data)",
               "Conventions": "CF-1.8"},
    )
    out = ROOT / "forcing" / "demo_region.nc"
    ds.to_netcdf(out)
    print(f"wrote {out}")


if __name__ == "__main__":
    main()
