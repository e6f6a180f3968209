"""A block's night, projected (`project_block`), and the site's calibration learned from its own
past nights (`Learner`, `Calibration`, `night_record`). Topics: `sensors` (which sensor speaks,
values known at an instant), `calibration` (the learned models, skill weights and band, as a
snapshot), `settings` (its settings and the benchmarks' switches), `features` (the models' inputs,
kinds of dusk, nowcast bins), `dusk_regression` (the dew-point weighting and the reduced
regression), `past_night` (what a past night did, as learned), `learner` (the calibration
learned night by night), `ridge` (ridge regression from moment matrices), `nowcast` (tonight's
cooling as features, and a past night's training points), `curves` (Reuter's curve, the evening
curve and the threshold crossings), `projection` (the projection), `records` (what a night did),
`inversion` (tower minus crop height), `offsets` (each thermometer's steady offset from the farm's
others in windy hours, for the reports).
"""

from frostwatch.forecast.calibration import Calibration
from frostwatch.forecast.curves import crossing_time
from frostwatch.forecast.features import feature_vector
from frostwatch.forecast.learner import Learner, fit_calibration
from frostwatch.forecast.nowcast import feature_matrix, features_at
from frostwatch.forecast.past_night import NightRecord
from frostwatch.forecast.projection import prior_c, project_block
from frostwatch.forecast.records import night_record, night_records
from frostwatch.forecast.sensors import (
    STUCK_MIN_READINGS,
    STUCK_WINDOW_S,
    DuskInputs,
    Series,
    as_of,
    dusk_inputs,
    speaking_station,
    station_state,
    usual_interval_s,
)
from frostwatch.forecast.settings import (
    FEATURES,
    MIN_REGRESSION_NIGHTS,
    NOWCAST_FEATURES,
    PRIOR_BAND_C,
    PROTECTION_QUANTITIES,
)

__all__ = [
    "FEATURES", "MIN_REGRESSION_NIGHTS", "NOWCAST_FEATURES", "PRIOR_BAND_C", "PROTECTION_QUANTITIES",
    "STUCK_MIN_READINGS", "STUCK_WINDOW_S", "Calibration", "DuskInputs", "Learner", "NightRecord", "Series",
    "as_of", "crossing_time", "dusk_inputs", "feature_matrix", "feature_vector", "features_at", "fit_calibration",
    "night_record", "night_records", "prior_c", "project_block", "speaking_station", "station_state", "usual_interval_s",
]
