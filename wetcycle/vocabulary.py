"""The one table of output variable names, units, long names and CF standard names.

Readers map outside names into these; the writer takes every attribute from
here.  Units follow UDUNITS; standard names are CF standard names where CF has
one (CF Standard Name Table v84), otherwise omitted.
"""

from .orbit import EARTH, MARS
from .phase.states import FLAG_MEANINGS, FLAG_VALUES

#: name -> (units, long_name, standard_name or None)
VARIABLES = {
    # coordinates
    "time": ("s", "time since the start of the run", "time"),
    "period": ("s", "period simulated, over which the statistics are taken", "time"),
    "sol": ("1", "sol number since the start of the run", None),
    "solar_longitude": ("degree", "areocentric solar longitude Ls", None),
    "local_solar_time": ("hour", "local true solar time", None),
    "latitude": ("degrees_north", "latitude", "latitude"),
    "longitude": ("degrees_east", "longitude", "longitude"),
    "lat": ("degrees_north", "latitude of the cell centre", "latitude"),
    "lon": ("degrees_east", "longitude of the cell centre", "longitude"),
    "salt": (None, "salt system (formula of the anhydrous salt) or the name of a salt mixture", None),
    "ion": (None, "ion of a mixture's brine", None),
    "ion_molality": ("mol kg-1", "molality of each ion in a salt mixture's brine (NaN without brine; "
                     "single salts: NaN)", None),
    "site": (None, "site name", None),
    "ls_bin": ("degree", "centre of the bin of areocentric solar longitude Ls", None),
    "hour_bin": ("hour", "centre of the bin of local true solar time", None),
    # forcing
    "surface_temperature": ("K", "surface temperature", "surface_temperature"),
    "salt_temperature": ("K", "temperature at the depth of the salt", None),
    "vapor_pressure": ("Pa", "partial pressure of water vapour at the surface", "water_vapor_partial_pressure_in_air"),
    "relative_humidity": ("1", "relative humidity with respect to liquid water at the salt", "relative_humidity"),
    "relative_humidity_ice": ("1", "relative humidity with respect to ice at the salt", None),
    "surface_pressure": ("Pa", "surface air pressure", "surface_air_pressure"),
    "water_frost": ("kg m-2", "surface water frost per unit area", None),
    "co2_frost": ("kg m-2", "surface CO2 frost per unit area", None),
    "air_temperature": ("K", "air temperature at the sensor height", "air_temperature"),
    "air_vapor_pressure": ("Pa", "partial pressure of water vapour at the sensor height",
                           "water_vapor_partial_pressure_in_air"),
    "air_relative_humidity_ice": ("1", "relative humidity with respect to ice at the sensor height", None),
    "surface_vapor_pressure": ("Pa", "partial pressure of water vapour at the ground surface (pore air of the "
                               "top regolith node; ice saturation over frost)", None),
    "sensible_heat_flux": ("W m-2", "sensible heat flux from the ground to the air",
                           "surface_upward_sensible_heat_flux"),
    "downwelling_longwave": ("W m-2", "infrared flux from the atmosphere onto a horizontal surface",
                             "surface_downwelling_longwave_flux_in_air"),
    "surface_water_flux": ("kg m-2", "water vapour deposited on or taken into the ground during the step "
                           "(negative: released)", None),
    "atmosphere_exchange": ("kg m-2", "water gained by the near-surface air from the free atmosphere during the "
                            "step (negative: returned)", None),
    "dust_optical_depth": ("1", "visible dust optical depth at the site",
                           "atmosphere_optical_thickness_due_to_dust_ambient_aerosol_particles"),
    "free_vapor_pressure": ("Pa", "partial pressure of water vapour of the free atmosphere above the "
                            "near-surface air, at surface pressure", None),
    # phase state
    "phase_state": ("1", "phase state of the salt", None),
    "brine_water_activity": ("1", "water activity of the brine (NaN without brine)", None),
    "liquid_water": ("kg m-2", "water held as brine per unit area (below the liquid threshold: a damp salt, "
                     "not counted as liquid)", None),
    "hydrate_water": ("kg m-2", "water held in salt hydrates per unit area", None),
    "ice_water": ("kg m-2", "water held as ice formed from the salt's brine per unit area", None),
    "liquid_fraction": ("1", "fraction of the step with liquid brine present", None),
    "initial_water": ("kg m-2", "water held by the salt parcel before the first step (as hydrate)", None),
    "water_exchanged": ("kg m-2", "water taken up from vapour or frost during the step (negative: lost)", None),
    "validity_flag": ("1", "model validity flags of the step (sum of bits; 0: none)", None),
    # statistics
    "month": ("1", "calendar month (UTC), 1 = January", None),
    "ls_bin_coverage": ("1", "times each Ls bin was simulated (simulated time in the bin / its length)", None),
    "month_coverage": ("1", "times each calendar month was simulated (simulated time in it / its length)", None),
    # totals over the simulated time (always present)
    "liquid_hours": ("hour", "hours with liquid brine over the simulated time", None),
    "liquid_water_hours": ("kg m-2 h", "time integral of the liquid brine water over the simulated time", None),
    "habitable_hours": ("hour", "hours with brine meeting both habitability thresholds over the simulated time",
                        None),
    "wet_events": ("1", "number of transitions from no liquid to liquid over the simulated time", None),
    "liquid_hours_by_month": ("hour", "hours with liquid brine per occurrence of the calendar month simulated",
                              None),
    # per-year statistics: units name the year (see :func:`per_year_units`)
    "liquid_hours_per_year": ("h {year}-1", "hours per year with liquid brine", None),
    "liquid_water_hours_per_year": ("kg m-2 h {year}-1", "time integral of the liquid brine water per year", None),
    "longest_liquid_spell_hours": ("hour", "longest continuous spell with liquid brine", None),
    "wet_events_per_year": ("{year}-1", "number of transitions from no liquid to liquid per year", None),
    "habitable_hours_per_year": ("h {year}-1", "hours per year with brine meeting both habitability thresholds",
                                 None),
    "liquid_hours_by_ls": ("hour", "hours with liquid brine per occurrence of the Ls bin simulated", None),
    "liquid_hours_by_local_time": ("h {year}-1", "hours per year with liquid brine, by local-time bin", None),
    "liquid_temperature_min": ("K", "lowest temperature of the liquid brine", None),
    "liquid_temperature_max": ("K", "highest temperature of the liquid brine", None),
    "liquid_water_activity_min": ("1", "lowest water activity of the liquid brine", None),
    "liquid_water_activity_max": ("1", "highest water activity of the liquid brine", None),
    "clamped_steps": ("1", "steps whose temperature lay outside the salt's validity range", None),
    "clamped_liquid_steps": ("1", "steps with liquid brine whose temperature lay outside the salt's validity range",
                             None),
    "molality_limit_steps": ("1", "steps in which a crystal-free brine reached the end of the model's supersaturated "
                             "range before its efflorescence RH and was solidified there", None),
    "salt_water_uptake": ("kg m-2", "water taken up by the salt from vapour or frost over the run", None),
    "surface_water_delivered": ("kg m-2", "water delivered to the ground by the surface layer over the run "
                                "(deposition and uptake, gross)", None),
    "uptake_exceeds_supply_steps": ("1", "steps in which the salt took up more water than the surface layer "
                                    "delivered plus the frost present", None),
    "lower_limit_freezes": ("1", "supercooled brine frozen at the salt's lower validity limit, above its "
                            "supercooling limit", None),
    "extrapolated_liquid_steps": ("1", "steps with liquid brine more concentrated than the salt's published "
                                  "water-activity data, or (mixtures) using a binary below its validity range "
                                  "(extrapolated)", None),
}

#: Extra attributes for categorical variables (CF flags).
FLAGS = {
    "phase_state": dict(flag_values=list(FLAG_VALUES), flag_meanings=FLAG_MEANINGS),
    # a bit field (CF-1.8 sec. 3.5, flag_masks): 0 is "ok", several bits can be set in one step
    "validity_flag": dict(flag_masks=[1, 2, 4, 8],
                          flag_meanings="temperature_outside_validity supersaturated_range_end_solidified "
                                        "frozen_at_lower_validity_limit water_activity_extrapolated"),
}


#: CF axis of coordinate variables (CF-1.8 sec. 4).
AXES = {"lat": "Y", "lon": "X", "time": "T"}

#: CF cell_methods of the statistics (CF-1.8 sec. 7.3): each is a reduction over the simulated
#: period, the scalar coordinate ``period`` whose bounds are the run's start and end.
_SUM = "period: sum"
CELL_METHODS = {
    "liquid_hours_per_year": _SUM + " (divided by the number of years simulated)",
    "liquid_water_hours_per_year": _SUM + " (divided by the number of years simulated)",
    "habitable_hours_per_year": _SUM + " (divided by the number of years simulated)",
    "wet_events_per_year": _SUM + " (divided by the number of years simulated)",
    "liquid_hours_by_ls": _SUM + " (within each bin, divided by the times the bin was simulated when more than once)",
    "liquid_hours_by_month": _SUM + " (within each month, divided by the times the month was simulated when more "
                                    "than once)",
    "liquid_hours": _SUM, "liquid_water_hours": _SUM, "habitable_hours": _SUM, "wet_events": _SUM,
    "liquid_hours_by_local_time": _SUM + " (divided by the number of years simulated)",
    "longest_liquid_spell_hours": "period: maximum",
    "liquid_temperature_min": "period: minimum (over steps with liquid brine)",
    "liquid_temperature_max": "period: maximum (over steps with liquid brine)",
    "liquid_water_activity_min": "period: minimum (over steps with liquid brine)",
    "liquid_water_activity_max": "period: maximum (over steps with liquid brine)",
    "clamped_steps": _SUM, "clamped_liquid_steps": _SUM, "molality_limit_steps": _SUM,
    "lower_limit_freezes": _SUM, "extrapolated_liquid_steps": _SUM,
}


def per_year_units(planet_year_days):
    """The UDUNITS spelling of "per year" for a year of ``planet_year_days`` days.

    UDUNITS' own ``year`` is an Earth (tropical) year, so "hours per Mars year" is written as
    hours per 686.9726 days: ``h (686.9726 d)-1``.  A unit-aware reader converts it correctly.
    """
    return f"({planet_year_days:.7g} d)"


def readable_units(units):
    """Units as a label for people: the UDUNITS per-year forms read "h per Mars year"."""
    for planet, days in YEAR_DAYS.items():
        year = per_year_units(days)
        if units == f"h {year}-1":
            return f"h per {planet.capitalize()} year"
        if units == f"kg m-2 h {year}-1":
            return f"kg m-2 h per {planet.capitalize()} year"
        if units == f"{year}-1":
            return f"per {planet.capitalize()} year"
    return "–" if units in ("1", "") else units


def attrs(name, *, planet="mars"):
    """CF attributes of a variable from the vocabulary.

    ``planet`` ("mars" or "earth") names the year of per-year statistics, in the units
    (:func:`per_year_units`) and the long name.
    """
    units, long_name, std = VARIABLES[name]
    out = {"long_name": long_name.replace("per year", f"per {planet.capitalize()} year")}
    if units is not None:
        out["units"] = units.replace("{year}", per_year_units(YEAR_DAYS[planet]))
    if std:
        out["standard_name"] = std
    if name in AXES:
        out["axis"] = AXES[name]
    if name in CELL_METHODS:
        out["cell_methods"] = CELL_METHODS[name]
    out.update(FLAGS.get(name, {}))
    return out


#: Length of the year [d] by planet (:mod:`wetcycle.orbit`: Allison & McEwen 2000 for Mars).
YEAR_DAYS = {"mars": MARS.year_days, "earth": EARTH.year_days}

#: Coordinate reference systems of result files (CF-1.8 sec. 5.6, grid_mapping with crs_wkt).
#: Mars: IAU 2015 Mars sphere, planetocentric latitude, east-positive longitude, radius the IAU
#: equatorial radius 3396.19 km (Archinal et al. 2018, Celest. Mech. Dyn. Astron. 130:22,
#: doi:10.1007/s10569-017-9805-5; IAU_2015:49900).  Earth: WGS 84 (EPSG:4326).
CRS = {
    "mars": {
        "grid_mapping_name": "latitude_longitude",
        "semi_major_axis": 3396190.0,
        "semi_minor_axis": 3396190.0,
        "inverse_flattening": 0.0,
        "longitude_of_prime_meridian": 0.0,
        "reference_ellipsoid_name": "Mars (2015) - Sphere",
        "horizontal_datum_name": "Mars (2015) - Sphere",
        "prime_meridian_name": "Reference Meridian",
        "geographic_crs_name": "Mars (2015) - Sphere / Ocentric",
        "crs_wkt": (
            'GEOGCRS["Mars (2015) - Sphere / Ocentric",DATUM["Mars (2015) - Sphere",'
            'ELLIPSOID["Mars (2015) - Sphere",3396190,0,LENGTHUNIT["metre",1]],'
            'ANCHOR["Viking 1 lander: 47.95137 W"]],PRIMEM["Reference Meridian",0,'
            'ANGLEUNIT["degree",0.0174532925199433]],CS[ellipsoidal,2],'
            'AXIS["geodetic latitude (Lat)",north,ORDER[1],ANGLEUNIT["degree",0.0174532925199433]],'
            'AXIS["geodetic longitude (Lon)",east,ORDER[2],ANGLEUNIT["degree",0.0174532925199433]],'
            'ID["IAU",49900,2015]]'),
    },
    "earth": {
        "grid_mapping_name": "latitude_longitude",
        "semi_major_axis": 6378137.0,
        "inverse_flattening": 298.257223563,
        "longitude_of_prime_meridian": 0.0,
        "reference_ellipsoid_name": "WGS 84",
        "horizontal_datum_name": "World Geodetic System 1984",
        "prime_meridian_name": "Greenwich",
        "geographic_crs_name": "WGS 84",
        "crs_wkt": (
            'GEOGCRS["WGS 84",DATUM["World Geodetic System 1984",ELLIPSOID["WGS 84",6378137,'
            '298.257223563,LENGTHUNIT["metre",1]]],PRIMEM["Greenwich",0,ANGLEUNIT["degree",'
            '0.0174532925199433]],CS[ellipsoidal,2],AXIS["geodetic latitude (Lat)",north,ORDER[1],'
            'ANGLEUNIT["degree",0.0174532925199433]],AXIS["geodetic longitude (Lon)",east,ORDER[2],'
            'ANGLEUNIT["degree",0.0174532925199433]],ID["EPSG",4326]]'),
    },
}
