"""The settings of the site's calibration and of the forecasts read from it: the names of the dusk
and nowcast inputs and methods, the learner's penalties, memories and thresholds, and the switches
that benchmarks set to try a variant (bench/forecast_variants.py). Constants, and
`modules_binding`, which finds where a variant must be set.

Every module that reads one of these binds it by name (`from frostwatch.forecast.settings import
X`), so a variant must be set in each of them: `READERS` names them (`forecast.projection` reads
its few as `settings.X`, from this module), and tests/test_forecast_settings.py keeps the list
whole.
"""

from __future__ import annotations

FEATURES = ("T0", "Td0", "cloud0", "wind0", "wind_trend0", "pressure_trend0")
NOWCAST_FEATURES = ("sqrt_curve_drop", "sqrt_hours_left", "recent_slope_x_hours_left", "wind", "cloud", "depression")
DUSK_METHODS = ("regression", "drop_regression", "prior", "evening_curve")
NOWCAST_METHODS = ("learned", "refit", "dusk_curve", "naive")

PRIOR_BAND_C = 2.0  # 1-sigma uncertainty of the physics prior before any calibration
RIDGE_LAMBDA = 2.0  # ridge penalty on the standardised dusk regression slopes
MIN_REGRESSION_NIGHTS = 3  # below this many nights the physics prior (with its learned offset) speaks
PRIOR_OFFSET_SHRINK_NIGHTS = 0.5  # the prior's offset is the mean error shrunk by n / (n + this)
NOWCAST_RIDGE_LAMBDA = 1.0
NOWCAST_MIN_SAMPLES = 20  # training points in an hours-left bin before its learned nowcast is used
NOWCAST_BIN_H = 1.0  # the learned nowcast and its band are kept per hour left to sunrise
NOWCAST_BINS = 14
NOWCAST_HALF_WEIGHT_H = 1.0  # with no skill known yet, tonight's re-fit weighs as much as the dusk curve after this
SKILL_HALF_LIFE = 30.0  # nights (dusk) or samples per bin (nowcast) for the recent-skill average
SKILL_MIN_SCORED = 5  # scored nights before a method's skill sets its weight
SKILL_FLOOR_C2 = 0.05  # added to each mean squared error so one lucky method cannot take all the weight
SKILL_SHRINK = 0.0  # share of the error covariance shrunk to its diagonal
BAND_QUANTILES = (0.1, 0.9)  # the 80 % band
BAND_Z = 1.2816  # the 10 % and 90 % points of a normal distribution, before residuals are known
BAND_MIN_RESIDUALS = 20
BAND_MEMORY = 300  # residuals kept per band bin (the most recent)
SIMILAR_WIDTH_C = 5.0  # dusk regression weighted toward similar nights (Gaussian width); None: all alike
SIMILAR_BY = 1  # ... similar in this input of FEATURES: 1 the dew point at t0 (the air mass), 0 T0
T0_STRATUM_C = 2.0  # nights are pooled in strata this wide of that input
# The dusk regression on fewer inputs (positions in FEATURES; None: none kept): fitted beside the full one
# from the same moment matrices, and used in its place once its walk-forward absolute error on the nights
# learned is lower than the full one's by more than REDUCED_SWITCH_Z standard errors of the mean
# difference (REDUCED_MIN_NIGHTS scored at least). A site where cloud, wind and their trends at dusk
# only add noise (a maritime site under a steady overcast) keeps the inputs that carry its cooling.
REDUCED_INPUTS: tuple[int, ...] | None = (0, 1)  # T0, Td0 (the Allen-type inputs, FAO-FP ch. 5)
REDUCED_SWITCH_Z = 1.0
REDUCED_MIN_NIGHTS = 10
PROTECTION_QUANTITIES = ("sprinkler_running", "wind_machine_running")
DUSK_CLEAR_CLOUD_FRAC = 0.3  # a dusk is "clear and calm" (the physics prior's own ground) at or below this
DUSK_CALM_WIND_M_S = 2.5  # ... and this wind (the wind-machine cut-off, FAO-FP)
SKILL_BY_REGIME = True
FORCE_DUSK_METHOD = None  # for benchmarks of one method alone
USE_EVENING = True
PRIOR_CLEAR_CALM_ONLY = True  # True: the physics prior enters the blend only on clear calm dusks
# True: the evening curve, too, enters the skill blend only on clear calm dusks (benchmark variant). Off as
# shipped: Reuter's law carried from the evening is warm on cloudy or windy dusks (+0.2 to +0.7 degC on the
# open years), but leaving it out there costs Greensboro's radiation nights (bench/forecast_variants.py)
EVENING_CLEAR_CALM_ONLY = False
LEARNING_MEAN = True
NOWCAST_BLEND = True  # False: the learned nowcast alone once it exists (benchmark variant)
USE_PRESSURE_TREND = True
BAND_FROM_QUANTILES = True  # False: a normal band from the residuals' spread (benchmark variant)
BAND_PER_SQRT_HOUR = True  # dusk band residuals scaled by sqrt(hours to sunrise) (benchmark variant)
INVERSION_MEMORY = 30  # clear calm nights whose inversion at the minimum is kept (the most recent)
COLD_EVENING_WEIGHT = 0.75  # share of the evening curve beside the prior while no regression exists
USE_NAIVE = True  # the naive fall (the mean fall over the 2 h before past nights' minima) enters the nowcast blend
NAIVE_WHEN_COOLING = False  # True: the naive fall only while the last 2 h cooled (benchmark variant)
# The nowcast's approach correction: the blend's fall still to come, against the fall that came, at the
# instant 2 h before each past night's minimum (its half-hourly point nearest then), per hours-left bin;
# tonight's blend is corrected by it at every instant of that bin, on the colder half of nights (dusk
# forecast below the mean minimum learned; on the others it costs more at a lead fixed in advance than
# it gains). "scale": the fall times a ratio
# (least squares through the origin); "add": minus the mean error; "affine": both. Each shrunk toward
# no correction by LEAD_SHRINK (degC^2 for "scale", nights for "add"), past nights decayed with a
# half-life of LEAD_HALF_LIFE nights.
NOWCAST_LEAD_CORRECTION = True
LEAD_MODE = "scale"
LEAD_SHRINK = 2.0
LEAD_HALF_LIFE = 100.0
LEAD_HOURS = 2.0  # the lead before the minimum it is learned at
LEAD_COLD_NIGHTS = True  # learned and applied only on nights forecast at dusk below the mean minimum learned
LEAD_BAND_RAW = True  # the nowcast band stays the blend's own (residuals and centre before the correction)
# The approach blend: the corrected blend still falls short where a minimum is 2 h away, which the
# naive fall knows by construction. On the same nights as the correction, at instants whose last 2 h
# cooled, the corrected fall and the naive fall are mixed by their skill at the points 2 h before past
# nights' minima only (Bates & Granger 1969, as the blend's own weights; one record for all hours left).
# APPROACH_WHEN_COOLING False: at every instant of those nights (benchmark variant).
NOWCAST_APPROACH_BLEND = True
APPROACH_WHEN_COOLING = True
APPROACH_METHODS = ("corrected", "naive")

# The modules of frostwatch.forecast that bind these settings by name (this one first): a benchmark
# or test trying a variant sets a setting in every one of them that has it.
READERS = ("settings", "calibration", "features", "dusk_regression", "learner", "skill", "snapshot_plan", "records")


def modules_binding(name: str) -> list:
    """The modules of `READERS` that hold the setting `name` by name: a benchmark or test trying a
    variant sets it in each (KeyError for a name that is not a setting)."""
    import importlib

    if name not in globals() or not name.isupper() or name == "READERS":
        raise KeyError(f"not a setting of frostwatch.forecast.settings: {name}")
    mods = (importlib.import_module(f"frostwatch.forecast.{r}") for r in READERS)
    return [m for m in mods if hasattr(m, name)]
