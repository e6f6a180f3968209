"""Pure, vectorised physics: SI units in and out (temperatures in degC unless a name says _k).

Every function cites its published source in its docstring. No I/O, no clock. Physical constants
(zero Celsius, Stefan-Boltzmann, latent heats, the Magnus coefficients) come from
`frostwatch.constants`, degF conversions from `frostwatch.units`. The rooms:

Moist air (psychrometrics; `humidity` gathers them for callers that want one import)
    saturation          saturation vapour pressure over water and ice (Hyland & Wexler 1983)
    dew_frost_point     dew point, frost point, relative humidity (over water, WMO convention)
    wet_bulb            ASHRAE wet (ice) bulb, its inverse, the humidity ratio
    air_pressure        standard pressure, pressure from elevation (FAO-56)

Night radiation
    sky_emissivity      clear-sky emissivity models (Brutsaert, Brunt, Swinbank, Idso, Prata,
                        Dilley & O'Brien) and the range they are applied over
    cloud_cover         cloud corrections (Jacobs, Konzelmann, Unsworth & Monteith), cloud
                        fraction from an infrared sky thermometer
    longwave            downwelling, upwelling and net longwave; FAO-56 hourly Rnl

Night cooling
    sqrt_time_cooling   Brunt's conduction law, the FAO-FP (Reuter) square-root trend, its fit
    wind_mixing         log-law transfer coefficient, Louis's stability factor, Richardson number
    night_energy_balance  the energy-balance projection of a radiation night
    clear_night_prior   the physics prior for the minimum while a site is still learning
    sun                 sunrise, sunset, solar elevation (NOAA, after Meeus)

Crops
    crop_stage_tables   published critical bud temperatures, stored as published
    crops               look-ups by crop and stage, growing degree hours, stage suggestion

Protection methods
    sprinklers, sprinkler_timing, exchange   over-tree sprinklers: heat budget, rate, start/stop
    undertree           under-tree and micro-sprinklers
    windmachine         wind machines and the inversion
    heaters             orchard heaters
"""
