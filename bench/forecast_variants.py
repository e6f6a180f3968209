"""The variants tried for the projection (issue 15), each measured by bench/forecast_skill.py on the
same three open years, as a change from what ships; writes bench/results/forecast_variants.json.

    python -m bench.forecast_variants [--only TEXT ...]   (all: about 7 minutes at load 2-5; not part of `python -m bench`)

Each variant sets settings of `frostwatch.forecast.settings` for the run in every module that
binds them (`settings.READERS`: `forecast.calibration`, `features`, `dusk_regression`, `learner`,
`skill`, `snapshot_plan`, `records`, which import those they use) and restores them. Figures per
site: dusk forecast MAE/bias on radiation, cold and all nights; the projection 2 h before the minimum (beside the naive drop) and 2 h before sunrise (cold nights; and all nights, beside the naive drop at that lead); the 80 % band's coverage at dusk
and 2 h before the minimum; the median crossing error 3 h ahead; the cold-start bias; the "below
0 degC" event's POD/FAR at dusk. Choices were made on Greensboro and Sand Point; Miami's figures
are shown, not used to choose.
"""

from __future__ import annotations

import datetime as dt
import json
import sys
import tempfile
from pathlib import Path

from bench import forecast_skill as fs

RESULTS = Path(__file__).resolve().parent / "results"

VARIANTS: dict[str, dict[str, object]] = {
    "shipped": {},
    "dusk: K regression alone (no skill blend)": {"FORCE_DUSK_METHOD": "regression"},
    "dusk: fall regression alone": {"FORCE_DUSK_METHOD": "drop_regression"},
    "dusk: physics prior blended on every dusk (not only clear calm ones)": {"PRIOR_CLEAR_CALM_ONLY": False},
    "dusk: one skill record (not split clear-calm / other)": {"SKILL_BY_REGIME": False},
    "dusk: skill covariance shrunk halfway to its diagonal": {"SKILL_SHRINK": 0.5},
    "dusk: all nights alike (no weighting toward similar nights)": {"SIMILAR_WIDTH_C": None},
    "dusk: nights weighted toward similar T0, s = 8 degC (before: not the dew point, 5)": {"SIMILAR_BY": 0, "SIMILAR_WIDTH_C": 8.0},
    "dusk: nights weighted toward similar T0, s = 5 degC": {"SIMILAR_BY": 0, "SIMILAR_WIDTH_C": 5.0},
    "dusk: nights weighted toward similar dew point, s = 3 degC (not 5)": {"SIMILAR_WIDTH_C": 3.0},
    "dusk: nights weighted toward similar dew point, s = 8 degC": {"SIMILAR_WIDTH_C": 8.0},
    "dusk: no pressure tendency input": {"USE_PRESSURE_TREND": False},
    "dusk: no evening curve": {"USE_EVENING": False},
    "cold start: evening curve weight 0.5 (not 0.75)": {"COLD_EVENING_WEIGHT": 0.5},
    "cold start: evening curve weight 1.0": {"COLD_EVENING_WEIGHT": 1.0},
    "cold start: regression alone from the 3rd night (no learning mean)": {"LEARNING_MEAN": False},
    "nowcast: learned alone (no skill blend)": {"NOWCAST_BLEND": False},
    "nowcast: 40 points per bin before the learned nowcast (not 20)": {"NOWCAST_MIN_SAMPLES": 40},
    "nowcast: no naive fall in the blend (what shipped before it)": {"USE_NAIVE": False},
    "nowcast: the naive fall only while the last 2 h cooled (none otherwise)": {"NAIVE_WHEN_COOLING": True},
    "band: normal from the residual spread (not quantiles)": {"BAND_FROM_QUANTILES": False},
    "band: dusk residuals not scaled by sqrt(hours to sunrise)": {"BAND_PER_SQRT_HOUR": False},
    # issue 15, fourth pass: the nowcast's approach correction (calibration.NOWCAST_LEAD_CORRECTION)
    "nowcast: no approach correction (what shipped before it)": {"NOWCAST_LEAD_CORRECTION": False},
    "nowcast: approach correction on every night (not only those forecast below the mean minimum)": {"LEAD_COLD_NIGHTS": False},
    "nowcast: approach correction as an offset (add, k = 2 nights)": {"LEAD_MODE": "add"},
    "nowcast: approach correction offset and ratio (affine, k = 5)": {"LEAD_MODE": "affine", "LEAD_SHRINK": 5.0},
    "nowcast: approach correction ratio, k = 1 degC^2 (not 2)": {"LEAD_SHRINK": 1.0},
    "nowcast: approach correction ratio, k = 5, half-life 30 nights (not 100)": {"LEAD_SHRINK": 5.0, "LEAD_HALF_LIFE": 30.0},
    "nowcast: approach correction, the band around the corrected blend (its residuals)": {"LEAD_BAND_RAW": False},
    # issue 15, fifth pass: the approach blend (calibration.NOWCAST_APPROACH_BLEND)
    "nowcast: no approach blend (what shipped before it)": {"NOWCAST_APPROACH_BLEND": False},
    "nowcast: approach blend at every instant of the corrected nights (not only while the last 2 h cooled)":
        {"APPROACH_WHEN_COOLING": False},
    # issue 15, eighth pass: the dusk regression on T0 and Td0 alone in place of the full one once its
    # walk-forward absolute error is lower by more than one standard error (calibration.REDUCED_INPUTS)
    "dusk: no regression on fewer inputs (what shipped before it)": {"REDUCED_INPUTS": None},
    "dusk: regression on T0, Td0 as soon as its error is lower (z = 0, not 1 standard error)": {"REDUCED_SWITCH_Z": 0.0},
    "dusk: regression on T0, Td0 only beyond 2 standard errors": {"REDUCED_SWITCH_Z": 2.0},
    "dusk: the reduced regression on T0, Td0 and wind": {"REDUCED_INPUTS": (0, 1, 3)},
    # issue 15, ninth pass: Miami's cold nights (held out). The evening curve is Reuter's square-root law
    # carried from the evening's own cooling; like the physics prior it is radiative cooling's curve
    "dusk: the evening curve in the blend on clear calm dusks only (as the physics prior)": {"EVENING_CLEAR_CALM_ONLY": True},
}

# What main had before this issue (commit 2a3d308, the same bench), for the record.
BEFORE = {
    "greensboro": {
        "dusk_radiation": "1.57/+0.41",
        "dusk_cold": "2.08/+0.34",
        "dusk_all": "2.09/-0.59",
        "before_min_2h_cold": "0.97/-0.37 (naive 0.72)",
        "before_sunrise_2h_cold": "0.90",
        "band_dusk_inside_below": "0.65/0.13",
        "band_2h_inside_below": "0.81/0.09",
        "crossing_3h_median_min": 80.7,
        "cold_start_bias": 1.568,
        "event_below_0_pod_far": "0.912/0.307"
    },
    "sand_point": {
        "dusk_cold": "0.86/+0.08",
        "dusk_all": "0.82/+0.05",
        "before_min_2h_cold": "0.50/+0.26 (naive 0.40)",
        "before_sunrise_2h_cold": "0.52",
        "band_dusk_inside_below": "0.86/0.09",
        "band_2h_inside_below": "0.70/0.26",
        "crossing_3h_median_min": 124.6,
        "cold_start_bias": -0.371,
        "event_below_0_pod_far": "0.989/0.231"
    },
    "miami": {
        "dusk_cold": "3.00/+1.35",
        "dusk_all": "4.22/-3.41",
        "before_min_2h_cold": "1.06/-0.50 (naive 0.56)",
        "before_sunrise_2h_cold": "0.96",
        "band_dusk_inside_below": "0.27/0.08",
        "band_2h_inside_below": "0.55/0.07",
        "crossing_3h_median_min": None,
        "cold_start_bias": 0.609,
        "event_below_0_pod_far": "None/None"
    }
}

# Tried in a scratch walk-forward harness on the hourly rows (same nights, same classes), not
# shipped; figures are MAE/bias in degC unless said.
HARNESS = [
    {"variant": "dusk regression + wind direction (north and east wind components)",
     "figures": "Greensboro radiation 1.59/+0.88, cold 2.06; Miami cold 2.58 (from 3.30): no gain where frost matters"},
    {"variant": "dusk regression + 24 h change of T, of Td; + 3 h dew-point trend; + yesterday's minimum",
     "figures": "each within +-0.05 of the base on every site; all of them together worse (Greensboro radiation 1.95)"},
    {"variant": "dusk regression weighted toward nights whose outcome was near tonight's first guess (s = 2, 3, 5 degC)",
     "figures": "Greensboro cold 2.10-2.16 (base 2.04), Sand Point 0.88-0.91 (0.86): worse"},
    {"variant": "exponentially recent-weighted dusk regression (half-life 30 / 90 nights)",
     "figures": "Greensboro cold 2.05 / 2.02 (base 2.04): no gain"},
    {"variant": "running bias correction of the dusk regression (EWMA of errors, half-life 5 / 15 nights)",
     "figures": "Greensboro radiation bias +0.17 / +0.48 but cold MAE 2.19 / 2.10 (base 2.04)"},
    {"variant": "inverse-MSE weights (no error covariance) for the skill blend",
     "figures": "Greensboro cold 2.12, Sand Point 0.93: the prior kept a third of the weight with twice the error"},
    {"variant": "nowcast: per-hour-left constant (the mean fall still to come at that hour left)",
     "figures": "2 h before the minimum Greensboro 0.95, Sand Point 0.49, naive 0.72 / 0.39"},
    {"variant": "nowcast: path model (T 1..8 h ahead regressed per lead) for crossing times",
     "figures": "T10 + margin crossing 3 h ahead, median |error| Greensboro 93 min, Sand Point 193 min (shipped curve ~110 / ~110)"},
    {"variant": "physics prior: latent heat of the deposit kept in the layer's capacity (before)",
     "figures": "FAO-FP sample MAE 1.25 (1.07 without); Greensboro clear calm nights bias +1.3 (+0.7 without)"},
    {"variant": "physics prior: Brunt's clock from sunset (onset 2 h before t0), constant retuned (700)",
     "figures": "FAO-FP sample MAE 1.06 (same); Greensboro clear calm nights +0.8 (+0.6 from t0): not taken"},
    # issue 15, second pass: the nowcast 2 h before the minimum, cold nights, walk-forward on the
    # NightRecords' half-hourly points (the harness gives 0.88 / 0.58 / 0.68 for what ships; naive
    # 0.70 / 0.40 / 0.56 on the same points), Greensboro / Sand Point / Miami
    {"variant": "nowcast: each method's recent mean error per hours-left bin taken off before the skill blend",
     "figures": "0.92 / 0.52 / 0.69 (2 h before sunrise 0.78 / 0.45 / 0.61, shipped 0.76 / 0.42 / 0.64): mixed"},
    {"variant": "nowcast: re-fit and dusk curves carried 0.5 / 1 h past sunrise (the minimum comes at or just after it)",
     "figures": "0.88 / 0.57 / 0.66 and 0.88 / 0.57 / 0.65: within noise"},
    {"variant": "nowcast: ridge on richer features (1-, 2-, 3-h slopes, cooling and warming apart, changes of wind, cloud and dew point, the dusk forecast's fall to come), one model or per hour left",
     "figures": "0.99-1.03 / 0.49-0.54 / 0.65-0.77"},
    {"variant": "nowcast: analogues (the k nearest earlier points in hours left, 1- and 2-h slopes, cloud, wind, depression and their changes; k = 20, 50)",
     "figures": "0.91-0.95 / 0.52: a flexible model fares no better. The naive drop knows the minimum is 2 h away; at a time not chosen by the outcome no model here beats what ships"},
    {"variant": "dusk: similar nights by T0 and dew point together (2-D Gaussian, widths 8/5, 12/5, 16/5 degC)",
     "figures": "Greensboro radiation 1.48-1.53, cold 1.92-1.95; Miami cold 2.52-2.56: no better than the dew point alone (1.46, 1.91, 2.51)"},
    # issue 15, third pass (the bench itself, cold nights, Greensboro / Sand Point / Miami; naive 0.72 / 0.40 / 0.56
    # 2 h before the minimum; 0.83 / 0.48 / 0.60 over all nights 2 h before sunrise)
    {"variant": "nowcast: the naive fall (mean fall over the 2 h before earlier nights' minima) as a fourth method of the skill blend",
     "figures": "2 h before the minimum 0.85 / 0.51 / 0.61 (from 0.90 / 0.57 / 0.66); 2 h before sunrise, all nights, "
                "0.74 / 0.50 / 0.58 (from 0.74 / 0.47 / 0.58): shipped"},
    {"variant": "nowcast: with the naive fall, skill scored only on points before the night's minimum",
     "figures": "0.84 / 0.47 / 0.61; 2 h before sunrise 0.77 / 0.53 / 0.63: loses the lead not chosen by the outcome, not shipped"},
    {"variant": "nowcast: the naive fall per hours-left bin of the instant 2 h before past nights' minima (5 nights or more, "
                "else the mean of all)",
     "figures": "2 h before the minimum 0.85 / 0.51 / 0.59; 2 h before sunrise, all nights, 0.74 / 0.50 / 0.58: within "
                "0.02 of the one mean, not shipped"},
    {"variant": "nowcast: with the naive fall, the learned regression and its skill on points before the night's minimum only",
     "figures": "0.87 / 0.46 / 0.61; 2 h before sunrise 0.76 / 0.54 / 0.63: the same trade, not shipped"},
    {"variant": "crossings: the curve's clock from 2 h before t0, or the curve linear (power 1) or power 0.75 in time since t0",
     "figures": "T10 + margin 3 h ahead, median |error| Greensboro / Sand Point: 102 / 105, 79 / 115, 101 / 105 min "
                "(shipped 105 / 114); half the 3-h projections do not cross before sunrise at all (the level, not the shape, "
                "is what misses), and the cold edge comes later (late on 30-55 %): not shipped"},
    {"variant": "crossings: tonight's cooling since sunset fitted to Reuter's curve T = a + b sqrt(t - sunset) (3 readings "
                "or more), its own crossing; or half of it and half the projected curve; or the last 3 h's slope carried on",
     "figures": "T10 + margin 3 h ahead, median |error| Greensboro / Sand Point: 100 / 130, 100 / 130, 100 / 134 min "
                "(shipped 105 / 114); 1 h ahead 56 / 88, 52 / 89, 44 / 87 (shipped 47 / 72): not shipped"},
    {"variant": "band: dusk residual quantiles kept apart for clear calm and other dusks, or for forecasts below and above "
                "the site's mean minimum",
     "figures": "'below 0 degC' POD / FAR Greensboro 0.947 / 0.349 and 0.930 / 0.338, Sand Point 0.989 / 0.262 and "
                "0.979 / 0.252 (shipped 0.947 / 0.341, 0.979 / 0.264); coverage within 2 points: not shipped"},
    {"variant": "events: 'below 0 degC' decided from the forecast minus a constant q instead of the band's cold edge",
     "figures": "Sand Point q = 1.0: POD 0.979, FAR 0.148 (q = 0.5: 0.936 / 0.111; 1.5: 0.989 / 0.268). Greensboro: "
                "q = 1.0 0.877 / 0.206, 2.0 0.930 / 0.243, 3.0 0.947 / 0.341; three of its 57 events were forecast 3.4, "
                "8.1 and 9.0 degC at dusk (observed -1.7, -1.1, -0.6), so no edge reaches POD 0.95 there below FAR 0.34. "
                "A separate event edge would also be a second cold edge beside the band's: not shipped"},
    # issue 15, fourth pass, through the bench itself with switches since removed (2 h before the minimum,
    # cold nights, Greensboro / Sand Point / Miami; what shipped then 0.85 / 0.51 / 0.61, naive 0.72 / 0.40 / 0.56;
    # 2 h before sunrise 0.90 / 0.53 / 0.78, naive 1.02 / 0.50 / 0.72). Why the blend lost: at the instants
    # 2 h before the minimum the blend's own naive member alone scores 0.72 / 0.40 (the bench's naive), but
    # its weights are set at every half hour of past nights, where the naive fall is poor; the
    # square-root curves (re-fit and dusk curve) are +1.0 degC too warm at Greensboro when the minimum is
    # within 3 h of sunrise (their fall flattens late in the night) and about right when it comes earlier
    {"variant": "nowcast: skill weights (or also the learned model, or also the band) kept apart for instants whose "
                "last 2 h cooled and the others, per hours-left bin",
     "figures": "0.84 / 0.52 / 0.63, 0.85 / 0.53 / 0.63, 0.85 / 0.53 / 0.63; 2 h before sunrise 0.94-0.95 / 0.53 / "
                "0.77-0.83: no gain"},
    {"variant": "nowcast: a fifth member, the last 2 h's cooling rate carried on for up to 1 h, 2 h, or to sunrise",
     "figures": "0.84 / 0.51 / 0.59, 0.84 / 0.52 / 0.56, 0.88 / 0.53 / 0.57; 2 h before sunrise 0.91 / 0.53 / "
                "0.77-0.78; 1-h crossing Greensboro 41 min (47), Sand Point 79 (72): within noise"},
    {"variant": "nowcast: the re-fit and dusk curves T = T0 + b (t - t0)^p with p = 0.75 or 1 (not Reuter's 0.5)",
     "figures": "0.94 / 0.52 / 0.63 and 1.01 / 0.54 / 0.67 (bias -0.16 / +0.29 / +0.18 and -0.34 / +0.22 / +0.02): "
                "moves the bias, not the error"},
    {"variant": "nowcast: skill half-life 5, 10, 15 or 100 samples per bin (not 30)",
     "figures": "0.82 / 0.50 / 0.61, 0.84 / 0.50 / 0.61, 0.85 / 0.50 / 0.61, 0.84 / 0.52 / 0.61; 2 h before "
                "sunrise within 0.02: the window's length is not the cause"},
    {"variant": "nowcast: approach correction as an offset learned from the corrected blend's own errors (so it "
                "settles at half the bias), k = 5 / 2 nights, half-life 30 / 100",
     "figures": "0.80 / 0.45 / 0.54 and 0.78 / 0.44 / 0.53; 2 h before sunrise 0.91 / 0.56-0.57 / 0.76; the band "
                "around the corrected blend: Greensboro 2-h band 85 % inside"},
    {"variant": "nowcast: approach correction (offset, or ratio) kept apart for cooling and other instants",
     "figures": "offset: 0.79 / 0.44 / 0.54, 2 h before sunrise 0.93 / 0.58 / 0.72; ratio: 0.76 / 0.47 / 0.54, "
                "0.92 / 0.56 / 0.73: no better than one per bin"},
    # the ratio on every night (as "approach correction on every night" above) costs at the lead fixed in
    # advance over all nights: 0.76 / 0.54 / 0.72 (without it 0.74 / 0.50 / 0.58, naive 0.83 / 0.48 / 0.60), Miami's
    # warm nights above all; these tried to keep that cost down, before the gate on the colder nights that shipped
    {"variant": "nowcast: approach ratio learned and applied only where the last 2 h cooled; only under a clear "
                "sky and calm air; the ratio capped at 1.3; shrunk with k = 5",
     "figures": "2 h before the minimum 0.78 / 0.50 / 0.57, 0.85 / 0.51 / 0.60 (the gate almost never opens on "
                "these files), 0.75 / 0.48 / 0.54, 0.75 / 0.47 / 0.52; 2 h before sunrise, all nights, 0.74 / 0.51 / "
                "0.63, 0.74 / 0.50 / 0.59, 0.75 / 0.53 / 0.62, 0.75 / 0.53 / 0.67"},
    # events: the dusk band's 10 % and 90 % points from the last 300 walk-forward residuals weighted toward
    # nights like tonight (Gaussian in one dusk input), scored offline on the backtest's rows
    {"variant": "band: dusk residual quantiles weighted toward nights of similar dew point (s = 3, 5 degC), dusk "
                "forecast (3, 5), T0 (5), cloud fraction (0.2-0.5) or wind (1.5, 3 m/s)",
     "figures": "Sand Point 'below 0 degC' POD / FAR 0.979 / 0.287, 0.258, 0.989 / 0.268, 0.979 / 0.252, 0.246, cloud "
                "0.979 / 0.220-0.227, wind 0.240-0.246 (shipped 0.979 / 0.264), but the band then holds 72-75 % with "
                "12-13 % below its lower edge (shipped 76 / 11): the FAR falls only as the band narrows past its "
                "limits. Greensboro 0.947 / 0.325-0.372 (0.341): not shipped"},
    # issue 15, fifth pass, through the bench itself with switches since removed (cold nights, Greensboro / Sand
    # Point / Miami; what shipped then, the approach correction alone: 2 h before the minimum 0.777 / 0.478 / 0.542,
    # naive 0.721 / 0.401 / 0.557; 2 h before sunrise, all nights, 0.750 / 0.529 / 0.604, naive 0.832 / 0.485 /
    # 0.598; T10 + margin crossing 1 h ahead, median |error|, 38 / 72 min)
    {"variant": "nowcast: the naive fall conditioned on tonight (a ridge, lambda 10, on the last 2 h's slope x hours left, "
                "wind, cloud and depression at past nights' points 2 h before the minimum, from the 10th night) in "
                "place of the mean fall; inputs (slope, depression), or all six nowcast features",
     "figures": "2 h before the minimum 0.769 / 0.480 / 0.532, (2): 0.772 / 0.479 / 0.533, (6): 0.77 / 0.48 / 0.54; "
                "2 h before sunrise 0.744 / 0.530 / 0.610; crossing 1 h ahead 28 / 65 min. At those points alone it "
                "beats the mean fall at Greensboro (0.65 against 0.70) but not at Sand Point (0.40 / 0.39): within "
                "0.01 on the headline, not shipped. With the approach blend: 0.681 / 0.434 / 0.512, 2 h before "
                "sunrise 0.749 / 0.578 / 0.619; with it only while cooling 0.704 / 0.461 / 0.511"},
    {"variant": "nowcast: approach correction only at instants whose last 2 h cooled; or on nights forecast below "
                "the mean minimum + 1, 2, 3 degC (or - 1 degC)",
     "figures": "0.81 / 0.50 / 0.59 (2 h before sunrise 0.742 / 0.508 / 0.585); margins: 0.76 / 0.47 / 0.54, "
                "0.77 / 0.46 / 0.54, 0.76 / 0.46 / 0.54, 0.79 / 0.49 / 0.54 (2 h before sunrise 0.743-0.753 / "
                "0.526-0.539 / 0.595-0.654): a continuum of the same trade, no gain"},
    {"variant": "nowcast: approach blend only ever adding to the fall (min of the corrected and the mixed fall); "
                "or only within 3 h / 5 h of sunrise",
     "figures": "0.77 / 0.44 / 0.53; 0.75 / 0.45 / 0.53 and 0.75 / 0.45 / 0.53, 2 h before sunrise 0.77 / "
                "0.57-0.58 / 0.61: Greensboro's gain is from the corrected blend's too-cold falls at minima early "
                "in the night (the naive fall warms them), which these give up; not shipped"},
    # scored offline on the NightRecords (walk-forward, the learner's own points nearest 2 h before the minimum and
    # 2 h before sunrise; what shipped then 0.760 / 0.477 / 0.553 and 0.620 / 0.425 / 0.511 there)
    {"variant": "nowcast: approach blend over more members (learned, re-fit, dusk curve, naive, conditioned naive), "
                "or per hours-left bin, or half-life 10 / 100 points",
     "figures": "all five 0.707 / 0.439 / 0.581 (2 h before sunrise 0.591 / 0.456 / 0.505); per bin 0.800 / 0.494 "
                "/ 0.599; half-life 10: 0.696 / 0.428 / 0.572, 100: 0.723 / 0.480 / 0.593. The corrected blend and "
                "the naive fall alone: 0.691 / 0.425 / 0.522 (0.622 / 0.480 / 0.528); while cooling 0.715 / 0.448 / "
                "0.527 (0.611 / 0.440 / 0.514): the two-member form shipped"},
    # through the bench, with the approach blend as shipped (0.711 / 0.453 / 0.519; 2 h before sunrise, all nights,
    # 0.742 / 0.545 / 0.604)
    {"variant": "nowcast: approach blend's skill half-life 10 / 100 nights (not 30, the blend's own)",
     "figures": "0.724 / 0.453 / 0.517 and 0.712 / 0.453 / 0.519; 2 h before sunrise 0.747 / 0.546 / 0.604 and "
                "0.742 / 0.545 / 0.604: no gain"},
    {"variant": "nowcast: approach blend with the correction as offset and ratio (affine, k = 5) or as an offset (add)",
     "figures": "0.711 / 0.434 / 0.509 (bias +0.09 / +0.21 / +0.19) and 0.716 / 0.434 / 0.515 (+0.05 / +0.18 / "
                "+0.17); 2 h before sunrise 0.754 / 0.567 / 0.619 and 0.763 / 0.577 / 0.630: the same trade as "
                "before the blend, not shipped"},
    # issue 15, sixth pass, through the bench with switches since removed (cold nights 2 h before the minimum, then
    # all nights 2 h before sunrise, Greensboro / Sand Point / Miami; what ships 0.711 / 0.453 / 0.519 and 0.742 /
    # 0.545 / 0.604, naive 0.721 / 0.401 / 0.557 and 0.832 / 0.485 / 0.598)
    {"variant": "nowcast: each method's error clipped at +-0.5, 1.0 or 1.5 degC before its skill moments (weights "
                "closer to least absolute error, which the rows score)",
     "figures": "0.714 / 0.471 / 0.539 and 0.767 / 0.525 / 0.598; 0.710 / 0.468 / 0.543 and 0.747 / 0.527 / 0.589; "
                "0.704 / 0.460 / 0.536 and 0.743 / 0.532 / 0.596: Sand Point moves along the same trade (sunrise "
                "lead -0.02, minimum's lead +0.01-0.02), not shipped"},
    {"variant": "nowcast: the mean fall still to come in the hours-left bin (past points' mean) as a fifth member",
     "figures": "0.719 / 0.453 / 0.521 and 0.747 / 0.547 / 0.608: the learned regression's intercept already is it"},
    {"variant": "nowcast: the final fall corrected by its own recent mean error at every half-hourly point of past "
                "nights, per hours-left bin and cold / other night (shrunk by 5 points; half-life 60 or 20 points)",
     "figures": "0.790 / 0.481 / 0.542 and 0.737 / 0.526 / 0.599; 0.777 / 0.480 / 0.542 and 0.733 / 0.526 / "
                "0.599: unbiased at instants fixed in advance undoes the approach correction's gain"},
    {"variant": "nowcast: clipped skill errors (1.0 degC) with the approach blend at every instant of the corrected "
                "nights; with the correction affine (k = 5); with the correction's half-life 30 nights",
     "figures": "0.709 / 0.438 / 0.527 and 0.772 / 0.568 / 0.603; 0.708 / 0.441 / 0.525 and 0.761 / 0.555 / 0.611; "
                "0.705 / 0.477 / 0.546 and 0.747 / 0.523 / 0.587: Sand Point's two rows sum to 0.995-1.006 in "
                "every one (what ships 0.998, the two naive drops 0.886)"},
    # scored offline at the bench's own probe instants (the nowcast's members recorded by wrapping the projection)
    {"variant": "nowcast at Sand Point: each member alone; the members' median; instants split by the air above the "
                "lowest reading since sunset, the hours since it, or the air minus the dusk forecast",
     "figures": "2 h before the minimum / 2 h before sunrise: re-fitted curve 0.78 / 0.45, dusk curve 0.67 / 0.45, "
                "learned 0.53 / 0.51, naive member 0.41 / 0.69, blend 0.52 / 0.51, median of the four 0.56 / 0.48. "
                "On nights forecast colder than usual the fall still to come is -0.8 to -1.0 degC at the first and "
                "-0.1 to -0.3 at the second in every split: what separates the rows is the instant's choice by the outcome, not anything known then"},
    {"variant": "nowcast: a final stacking fitted walk-forward at earlier nights' instants 2 h before the minimum "
                "(weighted k times) and 2 h before sunrise, by least absolute deviations on the inputs a learned "
                "night holds (features, hours left, the four members, blend, corrected and final falls, cold "
                "night; standardised, ridge lambda 1 or 10); scored offline at the bench's probe instants",
     "figures": "k = 2, lambda 10: 0.694 / 0.493 / 0.606 and 0.731 / 0.519 / 0.628 (bias +0.25 / +0.31 / +0.42 "
                "2 h before the minimum); k = 1.5: 0.691 / 0.503 / 0.612 and 0.730 / 0.506 / 0.618; k = 3: "
                "0.697 / 0.482 / 0.611 and 0.732 / 0.538 / 0.646; lambda 1: 0.715 / 0.505 / 0.644 and 0.735 / "
                "0.522 / 0.631: Sand Point trades the same way, Miami (held out) loses on both, not built"},
    {"variant": "ceiling: one linear function of 25 inputs known at the instant (features, hours left, members, "
                "blend, corrected and final falls, cold night, the readings' recent shape and 3-h changes of "
                "pressure, cloud, wind, dew point; Sand Point's pressure is one constant) fitted in hindsight by least absolute deviations on both rows' "
                "instants (python -m bench.nowcast_ceiling)",
     "figures": "Sand Point, the minimum's instants weighted 1 / 2 / 2.5 / 3 / 4: 0.478 / 0.442, 0.430 / 0.482, "
                "0.415 / 0.501, 0.405 / 0.518, 0.381 / 0.565; naive 0.401 / 0.485: no forecast linear in these "
                "inputs beats both naive drops there, even fitted on the outcomes (each row fitted alone, knowing "
                "which row an instant is in: 0.319 / 0.421). Greensboro and Miami: it can"},
    # issue 15, seventh pass: the analog ensemble (Delle Monache et al. 2013, Mon. Wea. Rev. 141: the k past
    # instants nearest in standardised predictors, their realised falls weighted by 1 / distance), through the
    # bench with switches since removed (the commit "forecast.analog: the analog ensemble ... behind measurement
    # switches"); cold nights 2 h before the minimum, then all nights 2 h before sunrise, Greensboro / Sand Point /
    # Miami; what ships 0.711 / 0.453 / 0.519 and 0.742 / 0.545 / 0.604, naive 0.721 / 0.401 / 0.557 and 0.832 /
    # 0.485 / 0.598. The analogs: past nights' half-hourly training points of the same hours-left bin (the last 300),
    # on the six nowcast features
    {"variant": "nowcast: the analog ensemble as a fifth member of the skill blend, k = 25 (k = 10; 50; 1000 "
                "analogs per bin); or alone in place of the blend (the approach correction and blend on it)",
     "figures": "0.714 / 0.451 / 0.523 and 0.740 / 0.547 / 0.603 (0.709 / 0.451 / 0.521 and 0.736 / 0.547 / 0.601; "
                "0.715 / 0.451 / 0.515 and 0.744 / 0.548 / 0.603; 0.714 / 0.451 / 0.524 and 0.739 / 0.547 / 0.603); "
                "alone 0.739 / 0.459 / 0.554 and 0.749 / 0.544 / 0.608: within 0.005 as a member, worse alone"},
    {"variant": "nowcast: the approach blend's naive fall from the analogs among past nights' instants 2 h before "
                "the minimum (every night's point nearest then; k = 10, 25)",
     "figures": "0.712 / 0.452 / 0.523 and 0.737 / 0.540 / 0.605; 0.712 / 0.452 / 0.510 and 0.737 / 0.540 / 0.603 "
                "(Sand Point's bias +0.27, was +0.25)"},
    {"variant": "nowcast: both (the member k = 10, the approach blend's naive fall k = 25; or k = 10 both)",
     "figures": "0.708 / 0.450 / 0.512 and 0.731 / 0.542 / 0.599 (bias +0.12 / +0.26 / +0.21); every MAE a little "
                "lower, but Sand Point's bias +0.261 (+0.254), the 2-h band at Miami 12.1 % below its lower edge "
                "(11.8), the T10 + margin crossing 1 h ahead 55.3 min at Greensboro (54.8; 3 h ahead 79 against 86). "
                "k = 10 both: 0.709 / 0.450 / 0.526 and 0.731 / 0.543 / 0.602, the crossing 3 h ahead 100 min (86), "
                "1 h ahead 46 (55): the crossings move 10-15 min between near-identical variants and the rows by "
                "0.003-0.011 degC, Sand Point stays behind both naive drops, and the analogs cost 20-28 us of CPU "
                "each at 300 points (51-56 at 1000; about 1 ms a member per 50-block cycle, already over its 50 ms) "
                "and about 4,500 stored points per block: not shipped"},
    # scored offline at the bench's probe instants (python -m bench.nowcast_ceiling, which keeps these figures)
    {"variant": "nowcast: the analog ensemble alone, walk-forward, from the nights learned before the instant (the "
                "same hours-left bin, the last 300 points, k = 10 / 25 / 50); half and half with what ships",
     "figures": "Greensboro 0.872-0.930 and 0.730-0.754, Sand Point 0.498-0.532 (bias +0.35) and 0.506-0.511, Miami "
                "0.670-0.685 and 0.588-0.592; half and half 0.758-0.782 / 0.464-0.476 / 0.559-0.579 and 0.719-0.738 "
                "/ 0.523-0.525 / 0.588-0.589. From the whole season's points with the hours left as a predictor "
                "(a scratch run): Sand Point 0.50-0.55 and 0.48-0.49. Unbiased at instants fixed in advance, too "
                "warm where the minimum is 2 h away, as every member trained at every half hour"},
    {"variant": "ceiling: the analog ensemble in hindsight on the 25 inputs of the linear ceiling, the analogs drawn "
                "from both rows' instants of every other night (later nights too), the first row's weighted 1-4 times, "
                "k = 10 / 25 / 50",
     "figures": "Sand Point 0.436-0.499 / 0.476-0.523: the pairs run from 0.488 / 0.476 (k = 25, w = 1) to 0.436 / "
                "0.513 (w = 4), never below both naive drops (0.401 / 0.485), as the linear ceiling; Greensboro "
                "0.642-0.672 / 0.704-0.718 and Miami 0.542-0.571 / 0.572-0.582 beat both. On fewer predictors (a "
                "scratch run, the same instants): hours left, air temperature, the last hour's change, the 2-h slope, "
                "dew-point depression, wind and cloud: Sand Point 0.428-0.486 / 0.499-0.556; with the 3-h changes of "
                "cloud and dew point and the air above the night's lowest reading, 0.422-0.486 / 0.484-0.551: "
                "never both"},
    # issue 15, eighth pass: the dusk forecast against the simple methods. Scored offline on each site's NightRecords
    # (the learner replayed walk-forward, the dusk skill blend copied outside it and checked to give the bench's own
    # figures to the last digit); cells: Greensboro radiation / cold / all, Sand Point cold / all, Miami cold / all
    # (MAE degC). What shipped then: 1.459 / 1.912 / 1.619, 0.892 / 0.841, 2.515 / 1.443; its members alone, from
    # the 4th night: K regression 1.509 / 1.863 / 1.581, 0.877 / 0.829, 2.467 / 1.457; fall regression 1.728 /
    # 2.059 / 1.766, 0.885 / 0.832; physics prior 1.821 / 2.591 / 2.157, 1.317 / 1.245; evening curve 2.194 /
    # 2.812 / 2.374, 1.194 / 1.142. The blend loses to its K regression on Greensboro's and Sand Point's cold and
    # all rows (on clear calm dusks above all: Sand Point's 14 of them 16.0 against 11.8 degC summed, where the
    # record of 16 nights a year never leaves its initial equal weights); it wins on Greensboro's radiation row
    # (bias +0.18 against the regression's +0.61: the prior's -1.23 there pulls it down)
    {"variant": "dusk: the simple methods as members of the skill blend, walk-forward (T0 minus the mean, or the "
                "median, fall of earlier nights; the same weighted toward nights of similar dew point, s = 5 degC; "
                "least squares on T0, Td0, plain or so weighted); on every dusk",
     "figures": "+ mean fall 1.506 / 1.929 / 1.643 (radiation bias +0.44), 0.859 / 0.813, 2.596 / 1.442; + median fall "
                "1.505 / 1.928 / 1.641, 0.861 / 0.814; + T0, Td0 regression 1.439 / 1.910 / 1.612 (+0.47), 0.877 / "
                "0.825, 2.477 / 1.446; weighted 1.451 / 1.922 / 1.606, 0.875 / 0.823, 2.471 / 1.442; + weighted mean fall "
                "1.519 / 1.940 / 1.639, 0.866 / 0.819; + mean fall and T0, Td0 regression 1.470 / 1.928 / 1.635 (+0.59), "
                "0.859 / 0.810, 2.553 / 1.447. Alone (from the 4th night): mean fall 2.446 / 2.414 / 2.184, 0.850 / "
                "0.824, 3.611 / 1.738; median fall 0.844 / 0.811 at Sand Point (bias +0.19); T0, Td0 regression 0.878 / "
                "0.822. Sand Point gains 0.02-0.03, Greensboro's radiation bias and cold row lose: not shipped"},
    {"variant": "dusk: Reuter's K regressed on T0, Td0 alone (all nights alike, or weighted toward similar dew "
                "point) as a fifth member, on every dusk or on those not clear and calm only; with the mean fall too",
     "figures": "every dusk: 1.451 / 1.910 / 1.614 (radiation bias +0.48), 0.863 / 0.813, 2.522 / 1.447; weighted "
                "1.459 / 1.922 / 1.617 (+0.41), 0.857 / 0.808, 2.470 / 1.439; not clear and calm only: 1.463 / 1.929 / "
                "1.631, 0.867 / 0.817, 2.522 / 1.446; weighted 1.453 / 1.944 / 1.637, 0.861 / 0.812, 2.470 / 1.438; with "
                "the mean fall 1.461 / 1.954 / 1.653, 0.855 / 0.808, 2.587 / 1.448. Alone: Sand Point 0.848 / 0.802 (0.836 / "
                "0.791 weighted), Greensboro 2.374 / 2.222 / 1.853 (1.939 / 2.089 / 1.748 weighted): each site wants its own "
                "inputs, and a fifth member's weight noise costs Greensboro what it gives Sand Point. As a choice between "
                "the two regressions by their walk-forward error instead: shipped (calibration.REDUCED_INPUTS)"},
    {"variant": "dusk: the regression's inputs chosen per site by walk-forward absolute error, other rules (the "
                "choice alone, the blend as it was); the full regression against T0, Td0 or T0, Td0, wind, weighted "
                "toward similar dew point",
     "figures": "as soon as lower (z = 0): 1.461 / 1.919 / 1.623, 0.863 / 0.816, 2.552 / 1.451 (Miami takes T0, Td0 "
                "on 29 nights, 128-173, and loses there); by 0.5 / 1 / 2 standard errors: Greensboro and "
                "Miami unchanged, Sand Point 0.868 / 0.820, 0.870 / 0.823 (shipped), 0.888 / 0.838; T0, Td0, wind: 0.879 "
                "/ 0.830 (z = 0: 0.871 / 0.822); T0, Td0, cloud 0.879 / 0.829; by the error of the last 30 or 100 nights "
                "(half-life), squared or absolute: Sand Point 0.863-0.868 / 0.815-0.819, Greensboro within 0.006 "
                "but for half-life 30, squared: 1.458 / 1.966 / 1.657; three-way (+ T0, Td0, wind) 0.860 / 0.812 at z = 0. "
                "Which inputs (K, all nights alike): Sand Point's best are T0, Td0, wind (0.839 / 0.796; with cloud "
                "0.855 / 0.808: its pressure is one constant, its cloud costs 0.012); Greensboro's keep cloud (T0, Td0, "
                "cloud, wind, pressure tendency 1.986 / 1.699; without cloud 1.87 and worse)"},
    {"variant": "dusk: the fall regression's inputs chosen the same way (T0, Td0 alone once their walk-forward "
                "absolute error is lower by one standard error), beside the shipped choice for the K regression",
     "figures": "Greensboro and Miami never switch; Sand Point switches on 47 nights: 0.870 / 0.822 against 0.870 / "
                "0.823 (the blend's fall member carries a third of the weight at most): not shipped"},
    {"variant": "dusk blend: the skill record's memory and start (half-life 60 / 100 nights; initial moments 1 degC^2 "
                "not 4; the moments as a decayed mean holding p = 0.5-20 nights of the initial 4 I; each regime's "
                "record shrunk toward the record of all dusks by p = 1-40 nights; covariance floor 0.2; errors "
                "clipped at 1.5 degC)",
     "figures": "half-life 60: 1.436 / 1.929 / 1.635, 0.898 / 0.847, 2.528 / 1.453; 100: 1.424 / 1.940 / 1.643, 0.906 / "
                "0.854; initial 1: 1.507 / 1.907 / 1.606, 0.888 / 0.837, 2.536 / 1.441; p = 0.5-20: radiation 1.47-1.60, "
                "cold 1.90-1.92, all 1.60-1.63, Sand Point 0.878-0.902 / 0.828-0.850, Miami cold 2.49-2.61; shrunk toward "
                "all dusks: radiation 1.59-1.69, cold 1.89-1.92, all 1.59-1.61, Sand Point 0.879 / 0.832; floor 0.2: "
                "within 0.003 (Miami cold 2.543); clipped 1.402 / 2.014 / 1.705, 0.923 / 0.869. Every rule that lets the clear calm record "
                "learn from its few nights costs Greensboro's radiation row (1.46 -> 1.5-1.7) what it gives elsewhere"},
    {"variant": "dusk blend: other combination rules on each member's recent absolute error (half-life 30 / 100, per "
                "regime or one record): the best member alone, inverse-MAE weights, the members' median, the mean of "
                "the best two or three; equal weights (clear calm: the four; other dusks: the regression alone, or "
                "with the fall regression); a stacking ridge with intercept toward equal weights (lambda 0.05-1)",
     "figures": "best alone 1.593-1.886 / 1.879-1.919 / 1.597-1.616, 0.888-0.893 / 0.836-0.841; inverse MAE 1.42-1.52 "
                "/ 1.96-1.99 / 1.66-1.69, 0.907-0.928 / 0.856-0.873; median 1.379 / 1.945 / 1.654, 0.899 / 0.849; best "
                "three of the regressions and mean falls, one record: 1.488 / 1.934 / 1.637 (radiation bias +0.91), "
                "0.826 / 0.784, 2.638 / 1.492; equal weights, regression alone on other dusks: 1.484 / 1.902 / 1.611 "
                "(+0.26), 0.893 / 0.846, 2.481 / 1.454; stacking 1.55-1.71 / 1.94-2.02 / 1.66-1.71 (bias -0.2), "
                "0.851-0.875 / 0.806-0.830, 2.35-2.66 / 1.44-1.48: none keeps Greensboro and helps Sand Point"},
    {"variant": "dusk blend: the clear calm record's weights only from 10 / 20 / 30 scored nights of its own (before "
                "them: the regression alone, the other dusks' weights, all dusks' weights, or the regression and the "
                "prior half and half); a guard that takes the member that beat the blend by more than z standard errors "
                "on earlier nights (z = 0, 1, 2; per regime or not)",
     "figures": "from 20, regression alone: 1.431 / 1.886 / 1.605 (radiation bias +0.32), 0.878 / 0.829, 2.515 / 1.444 "
                "(beside the shipped reduced regression: 1.431 / 1.886 / 1.605 (+0.32), 0.857 / 0.810, 2.515 / 1.444: "
                "every MAE lower, Greensboro's radiation bias out of +-0.2); the other or all dusks' "
                "weights 1.51-1.53 / 1.91 / 1.62; half and half 1.546 / 1.925 / 1.620 (+0.02), 0.932 / 0.880. Guard, "
                "z = 1 per regime: 1.475 / 1.890 / 1.605 (+0.25), Sand Point 0.871 / 0.825 (after the reduced "
                "regression: no gain), Miami 2.475 / 1.448; z = 0: 1.532 / 1.891 / 1.592. Greensboro's radiation row "
                "(17 nights) holds its bias by the clear calm record's equal weights; not shipped"},
    {"variant": "dusk regression: ridge penalty 5 / 10 / 30 / 100 (not 2) on the standardised slopes",
     "figures": "1.544 / 1.936 / 1.645, 0.887 / 0.837; 1.629 / 1.970 / 1.683, 0.883 / 0.834; 1.762 / 2.063 / 1.777, "
                "0.876 / 0.829; 1.849 / 2.179 / 1.882, 0.870 / 0.826 (Miami cold 2.60-2.93): Sand Point wants fewer "
                "slopes, Greensboro all of them"},
    {"variant": "Miami's cold nights (held out; what was looked at, nothing fitted to them)",
     "figures": "its 35 nights below 15 degC come mostly behind fronts: the pressure tendency at dusk 0 to +3 "
                "(its mean +0.95), wind 1-7 m/s, the dew point mostly 3-15 K below the air, falls mostly 5-11 degC "
                "against the site's mean 2.7; 16 of them fall in the year's first 57 nights (the file's January and "
                "February), while the learner knows fewer than 60 nights: bias +2.74 there, +1.20 on the other 19. "
                "The dew-point weighting already carries the most (the K regression alone 2.467 against 2.852 with all "
                "nights alike); the pressure tendency and wind are inputs already; a 24-h dew-point change and wind "
                "direction were tried before (above)"},
    # issue 15, ninth pass: Miami's cold nights (35 below 15 degC; held out, and looked at to diagnose: nothing
    # shipped, so nothing was chosen on them). Members, weights and class-free baselines: python -m bench.dusk_members
    {"variant": "diagnosis: the dusk blend's members on Miami's cold nights (bench.dusk_members)",
     "figures": "every member is warm on them: K regression 2.47/+1.63 (its share of the blend 0.61), fall regression "
                "2.86/+1.75 (0.12), evening curve 3.09/+2.21 (0.25), physics prior 3.17/+2.13 (0.02: clear calm dusks "
                "only); the blend 2.52/+1.91 is warmer than its K regression by the evening curve's share. Learner knows "
                "< 60 nights (16 nights): blend +2.74, K regression +2.21, evening curve +2.87 at 0.37 of the blend; later "
                "(19): +1.20, +1.14, +1.66 at 0.14. Not inputs carried from warm nights: the full regression (cloud, wind, "
                "trends) beats the one on T0, Td0 on these nights (2.47 against 2.81). The class is chosen by the "
                "outcome: the simple methods of forecast_skill.py are fitted on the class's own earlier nights (the "
                "walk-forward regression used on every night would score 8.35/-8.16); fitted on every earlier night, as "
                "a forecast must be, the same walk-forward regression scores 3.13/+1.85 and T minus the mean drop "
                "3.80/+3.61 on them, and least squares on the six dusk inputs fitted in hindsight on all 353 nights "
                "2.73/+1.76. Chosen by what is known at dusk instead (the 27 nights forecast below 15 degC, 25 of them "
                "observed below): frostwatch 1.63/+0.68, its K regression 1.52/+0.29. The evening curve (Reuter's law "
                "carried from the evening's own cooling) is unbiased on clear calm dusks (Greensboro / Sand Point / Miami "
                "+0.02 / -0.01 / -0.36) and warm on cloudy or windy ones (+0.47 / +0.23 / +0.66), where Miami gives it "
                "0.27 of the blend over all nights (Greensboro 0.11, Sand Point 0.15): Miami's all-night bias (+0.19) is "
                "mostly that share (0.27 x +0.63)"},
    # scored offline on each site's NightRecords (the learner replayed walk-forward, the blend checked to give the
    # bench's dusk figures to the last digit; python -m bench.dusk_members shows the check); cells: Greensboro
    # radiation / cold / all, Sand Point cold / all, Miami cold / all, MAE/bias degC; cold start = the first 10
    # nights. What ships: 1.459/+0.18, 1.912/+0.30, 1.619/+0.06 (cold start 2.120/+0.31), 0.870/+0.08, 0.823/+0.07
    # (0.685/+0.36), 2.515/+1.90, 1.443/+0.19 (1.618/+0.42)
    {"variant": "dusk: the evening curve corrected by its mean error on the nights learned (shrunk n / (n + k), k = 0.5, "
                "5, 20; plain or half-life 30 nights; one offset or one per dusk regime)",
     "figures": "k = 0.5: Greensboro 1.542-1.552 (+0.25 to +0.27) / 1.916-1.921 / 1.621-1.625, cold start +0.64 to +0.68; "
                "Sand Point 0.870-0.871 / 0.824-0.826; Miami 2.426-2.432 (+1.68 to +1.71) / 1.418-1.424. k = 5: "
                "Greensboro radiation 1.511-1.516 (+0.21 to +0.23), cold start +0.48 to +0.51; Miami 2.443-2.451. "
                "k = 20: Greensboro 1.485-1.488 (+0.19 to +0.21) / 1.915 / 1.620-1.622, cold start 2.150-2.160 "
                "(+0.38); Sand Point 0.870 / 0.823; Miami 2.468-2.474 / 1.424-1.427: Miami gains 0.04-0.09, "
                "Greensboro's radiation row and cold start lose"},
    {"variant": "dusk: the same offset for the evening curve, the K regression and the fall regression",
     "figures": "Greensboro 1.488-1.794 / 1.934-1.987 / 1.638-1.679 (bias -0.04 to -0.23 on all nights), Sand Point "
                "0.873-0.883 / 0.826-0.839, Miami 2.430-2.511: the regressions' walk-forward mean error is noise"},
    {"variant": "dusk: the evening curve's fall calibrated to the site (least squares on the nights learned, shrunk "
                "toward no correction: a ratio, k = 2 / 10 / 50 degC^2; an offset, k = 2 / 10 nights; both, k = 2 / 10); "
                "on every dusk, on cloudy or windy dusks only, or learned and applied on those only",
     "figures": "every dusk, ratio: Greensboro 1.561-1.576 (+0.49 to +0.52) / 1.914-1.916 / 1.611-1.612, Sand Point "
                "0.863-0.864 / 0.816, Miami 2.417-2.456 / 1.422-1.431; both: Greensboro 1.578-1.584 (+0.50), Sand "
                "Point 0.845-0.848 / 0.801-0.803, Miami 2.420-2.426 / 1.417-1.419. Learned and applied on cloudy or "
                "windy dusks only (where it is warm): ratio 1.508-1.510 (+0.34), Miami 2.409-2.417 (+1.61); offset "
                "1.482-1.504 (+0.21 to +0.25), Miami 2.433-2.453; both 1.515-1.522 (+0.32 to +0.34) / 1.930-1.932, "
                "Sand Point 0.852-0.860 / 0.807-0.814, Miami 2.393-2.420 / 1.417-1.422, Greensboro's cold start +0.64 "
                "to +0.69. Sand Point and Miami gain; Greensboro's radiation row loses on every form (applied on every "
                "dusk it moves clear calm dusks, where the curve is unbiased; learned on the cloudy or windy ones it "
                "starts from Greensboro's first season, where the curve was too cold, -0.85 degC over the first 60 "
                "nights), and its cold start: not shipped"},
    {"variant": "dusk: the evening curve's initial error moment in the skill record of cloudy or windy dusks 2 / 4 / 10 "
                "times the others' (its weight starts lower there); in both records 2 / 4 times",
     "figures": "cloudy or windy record: Greensboro 1.445 (+0.21) / 1.906 / 1.613, 1.434 (+0.25) / 1.901 / 1.610, "
                "1.426 (+0.28) / 1.895 / 1.607, cold start 2.138-2.171 (+0.33 to +0.36); Sand Point 0.864-0.867 / "
                "0.816-0.819; Miami 2.489 / 2.465 / 2.465 (+1.84 / +1.78 / +1.72), all 1.441-1.451, cold start "
                "1.654-1.700 (from 1.618). Both records: Greensboro 1.432 (+0.22) and 1.413 (+0.25). Every MAE but "
                "the cold starts' gains, and Greensboro's radiation bias leaves +-0.2: not shipped"},
    {"variant": "dusk: no evening curve on nights whose evening did not cool (its fitted fall above -0.05 / -0.5 degC; "
                "the slope is clipped at 0, so a warming evening forecasts no fall)",
     "figures": "Greensboro 1.459 (+0.19) / 1.913-1.914 / 1.620-1.622, cold start 2.211/+0.21; Sand Point 0.867 / 0.819 "
                "and 0.856 / 0.812 (cold start 0.742/+0.05 at -0.5); Miami 2.517-2.519 / 1.465-1.466: no help to "
                "Miami (the evening curve was +1.8 degC warm on its 39 such nights, but the other members are warm on "
                "the cold ones too)"},
    {"variant": "dusk: more inputs, in hindsight (least squares on all nights, leave-one-out): the six dusk inputs plus "
                "one of the 3-h change of T, of Td, the 6-h and 24-h changes of Td and T, the 3-h pressure change, the "
                "northerly wind, wind x pressure tendency, northerly wind x pressure tendency; or all of them",
     "figures": "Miami's cold nights 2.77-2.89 (the six alone 2.83, all 2.96; the 24-h dew-point change 2.77/+1.65); "
                "Greensboro's cold 1.955-2.022 (1.983), Sand Point's 0.845-0.858 (0.852): no dusk input tells "
                "Miami's frontal nights from the rest, even fitted on them"},
]


def _row(res: dict) -> dict:
    out = {}
    for key, s in res.items():
        c = s["classes"]
        row: dict = {}
        for cl in ("radiation", "cold", "all"):
            if cl in c:
                f = c[cl]["frostwatch"]
                row[f"dusk_{cl}"] = f"{f['mae_c']:.2f}/{f['bias_c']:+.2f}"
        cc = c["cold"]
        p, n = cc.get("projection_2h_before_min"), cc.get("naive_2h_before_min")
        row["before_min_2h_cold"] = f"{p['mae_c']:.2f}/{p['bias_c']:+.2f} (naive {n['mae_c']:.2f})"
        sr = cc.get("projection_2h_before_sunrise")
        row["before_sunrise_2h_cold"] = f"{sr['mae_c']:.2f}"
        a = c["all"]
        sa, sn = a.get("projection_2h_before_sunrise"), a.get("naive_2h_before_sunrise")
        row["before_sunrise_2h_all"] = f"{sa['mae_c']:.2f}/{sa['bias_c']:+.2f} (naive {sn['mae_c']:.2f})"
        row["band_dusk_inside_below"] = f"{a['band_inside_frac']:.2f}/{a['band_below_frac']:.2f}"
        row["band_2h_inside_below"] = f"{a.get('band_2h_inside_frac', 0):.2f}/{a.get('band_2h_below_frac', 0):.2f}"
        x = s["crossings"].get("lead_3h", {})
        row["crossing_3h_median_min"] = x.get("median_abs_min")
        row["cold_start_bias"] = s["cold_start"].get("bias_c")
        ev = s["events"].get("below 0 degC", {})
        row["event_below_0_pod_far"] = f"{ev.get('pod')}/{ev.get('far')}"
        out[key] = row
    return out


def run_variant(patch: dict[str, object]) -> dict:
    from frostwatch.forecast import projection as proj
    from frostwatch.forecast import settings

    # the settings live in forecast.settings (projection reads its own there); the modules that
    # import one hold their own binding, each set too
    old = {(m, k): getattr(m, k) for k in patch for m in settings.modules_binding(k)}
    process_figures = fs._process_figures
    try:
        for (m, k) in old:
            setattr(m, k, patch[k])
        proj._prior_cached.cache_clear()
        proj._PRIMED.clear()
        # the figures only: not the timing of `frostwatch backtest` as a new process (which would not see the patch)
        fs._process_figures = lambda log, cfg_path: {}
        return {k: fs.run_site(k, Path(tempfile.mkdtemp(prefix="fw-variant-"))) for k in fs.tmy.SITES}
    finally:
        fs._process_figures = process_figures
        for (m, k), v in old.items():
            setattr(m, k, v)


def main(argv: list[str] | None = None) -> int:
    """All variants, or with `--only TEXT` (repeatable) those whose name contains one of the texts
    (a text that is a variant's whole name, such as "shipped", picks that one alone): the other rows
    are kept from the last results, each with when it was measured."""
    args = sys.argv[1:] if argv is None else argv
    only = [args[k + 1] for k, a in enumerate(args) if a == "--only" and k + 1 < len(args)]
    exact = {o for o in only if o in VARIANTS}
    only = [o for o in only if o not in VARIANTS]
    old: dict = {}
    path = RESULTS / "forecast_variants.json"
    if (only or exact) and path.exists():
        old = {r["variant"]: r for r in json.loads(path.read_text(encoding="utf-8")).get("variants", [])}
    stamp = f"{dt.date.today().isoformat()}, {_head()}"
    rows = []
    for name, patch in VARIANTS.items():
        if (only or exact) and name not in exact and not any(o in name for o in only) and name in old:
            rows.append({"measured": "against what shipped before the approach correction (at 92f8554)", **old[name]})
            continue
        res = run_variant(patch)
        rows.append({"variant": name, "change": {k: v for k, v in patch.items()}, "measured": stamp, "sites": _row(res)})
        print(name, json.dumps(rows[-1]["sites"]), flush=True)
    doc = {"about": __doc__.split("\n\n")[0] + " " + __doc__.split("\n\n")[2].replace("\n", " "),
           "cells": "MAE/bias in degC; band: share inside / share below the lower edge; event: POD/FAR",
           "before_2a3d308": BEFORE, "variants": rows, "harness": HARNESS}
    RESULTS.mkdir(parents=True, exist_ok=True)
    path.write_text(json.dumps(doc, indent=1) + "\n", encoding="utf-8")
    print(f"results: {path}")
    return 0


def _head() -> str:
    import subprocess

    try:
        out = subprocess.run(["git", "rev-parse", "--short", "HEAD"], capture_output=True, text=True,
                             cwd=Path(__file__).resolve().parent, check=False)
        return out.stdout.strip() or "unknown commit"
    except OSError:
        return "unknown commit"


if __name__ == "__main__":
    sys.exit(main())
