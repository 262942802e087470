"""The one table of output variable names, units, long names and CF standard names.

Readers map outside names into these; the writer takes every attribute from
here.  Units follow UDUNITS; standard names are CF standard names where CF has
one (CF Standard Name Table v84), otherwise omitted.
"""

from .phase.states import FLAG_MEANINGS, FLAG_VALUES

#: name -> (units, long_name, standard_name or None)
VARIABLES = {
    # coordinates
    "time": ("s", "time since the start of the run", "time"),
    "sol": ("1", "sol number since the start of the run", None),
    "solar_longitude": ("degree", "areocentric solar longitude Ls", None),
    "local_solar_time": ("hour", "local true solar time", None),
    "latitude": ("degrees_north", "latitude", "latitude"),
    "longitude": ("degrees_east", "longitude", "longitude"),
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
    "liquid_water": ("kg m-2", "liquid water held as brine per unit area", None),
    "hydrate_water": ("kg m-2", "water held in salt hydrates per unit area", None),
    "ice_water": ("kg m-2", "water held as ice formed from the salt's brine per unit area", None),
    "liquid_fraction": ("1", "fraction of the step with liquid brine present", None),
    "water_exchanged": ("kg m-2", "water taken up from vapour or frost during the step (negative: lost)", None),
    "validity_flag": ("1", "model validity flags of the step (sum of bits; 0: none)", None),
    # statistics
    "liquid_hours_per_year": ("hour", "hours per year with liquid brine", None),
    "longest_liquid_spell_hours": ("hour", "longest continuous spell with liquid brine", None),
    "wet_events_per_year": ("1", "number of transitions from no liquid to liquid per year", None),
    "habitable_hours_per_year": ("hour", "hours per year with brine meeting both habitability thresholds", None),
    "liquid_hours_by_ls": ("hour", "hours per year with liquid brine, by Ls bin", None),
    "liquid_hours_by_local_time": ("hour", "hours per year with liquid brine, by local-time bin", None),
    "liquid_temperature_min": ("K", "lowest temperature of the liquid brine", None),
    "liquid_temperature_max": ("K", "highest temperature of the liquid brine", None),
    "liquid_water_activity_min": ("1", "lowest water activity of the liquid brine", None),
    "liquid_water_activity_max": ("1", "highest water activity of the liquid brine", None),
    "clamped_steps": ("1", "steps whose temperature lay outside the salt's validity range", None),
    "clamped_liquid_steps": ("1", "steps with liquid brine whose temperature lay outside the salt's validity range",
                             None),
    "molality_limit_steps": ("1", "steps in which a brine was crystallised at the model's molality limit", None),
    "salt_water_uptake": ("kg m-2", "water taken up by the salt from vapour or frost over the run", None),
    "surface_water_delivered": ("kg m-2", "water delivered to the ground by the surface layer over the run "
                                "(deposition and uptake, gross)", None),
    "uptake_exceeds_supply_steps": ("1", "steps in which the salt took up more water than the surface layer "
                                    "delivered plus the frost present", None),
    "lower_limit_freezes": ("1", "supercooled brine frozen at the salt's lower validity limit, above its "
                            "supercooling limit", None),
}

#: Extra attributes for categorical variables (CF flags).
FLAGS = {
    "phase_state": dict(flag_values=list(FLAG_VALUES), flag_meanings=FLAG_MEANINGS),
    # a bit field (CF-1.8 sec. 3.5, flag_masks): 0 is "ok", several bits can be set in one step
    "validity_flag": dict(flag_masks=[1, 2, 4],
                          flag_meanings="temperature_outside_validity molality_limit_crystallised "
                                        "frozen_at_lower_validity_limit"),
}


def attrs(name):
    """CF attributes of a variable from the vocabulary."""
    units, long_name, std = VARIABLES[name]
    out = {"units": units, "long_name": long_name}
    if std:
        out["standard_name"] = std
    out.update(FLAGS.get(name, {}))
    return out
