"""Protection advice per block (pure): a `Projection` and the block's config in, `Advice` out.

The rules are those of the trade as the reference sheet records them: wind machines need an
inversion and light wind (FAO-FP 2005 p. 160); sprinklers must be running before the wet bulb
reaches the critical temperature and may stop only after sunrise once the wet bulb is above it
and rising (FAO-FP p. 168; UF/IFAS Circ. 348); the start time leaves the crew its mobilisation
time (grower-needs C1). It advises; the grower decides.
"""

from __future__ import annotations

import datetime as dt
import math

from frostwatch.config import Block
from frostwatch.display import Display
from frostwatch.models import Advice, Projection
from frostwatch.physics import humidity, radiation, sprinklers, windmachine

CAUTIONS = (
    "frostwatch advises; the grower decides.",
    "Check with your own calibrated thermometers at bud height before acting.",
    "Local agronomic advice, codes and water rights prevail.",
    "Keep clear of wind machines when starting them; ice-loaded trees and wet ground are hazards under sprinklers.",
)

SPRINKLER_METHODS = ("overtree_sprinkler", "undertree_sprinkler")
STANDBY_HORIZON_H = 3.0  # standby when the margin line is projected to be crossed within this


def _fmt_delta(minutes: float) -> str:
    return f"{minutes:.0f} min"


def advise(
    projection: Projection,
    block: Block,
    now_utc: dt.datetime,
    pressure_hpa: float = 1013.25,
    display: Display | None = None,
) -> Advice:
    """What to do about `block` at `now_utc`, from its projection; text in the display unit."""
    p = projection
    d = display or Display()
    T = d.temp
    t10, t90, margin = block.kill_10pct_c, block.kill_90pct_c, block.margin_c
    method = block.protection
    base = dict(time_utc=now_utc, block=block.id, threshold_c=t10, margin_c=margin, cautions=CAUTIONS)
    if p.predicted_min_c is None or p.air_temp_c is None:
        return Advice(
            **base, risk="unknown", action="check the block's sensors: it is not monitored",
            reasons=tuple(p.notes) or ("no healthy crop-height sensor",), start_by_utc=None,
            trigger="air", trigger_temp_c=None,
        )
    sprinkler = method in SPRINKLER_METHODS
    # sprinklers are governed by the wet bulb (grower-needs C3), everything else by the air
    trigger = "wet-bulb" if sprinkler and p.wet_bulb_c is not None else "air"
    now_c = p.wet_bulb_c if trigger == "wet-bulb" else p.air_temp_c
    key = "wet_bulb_t10_margin" if trigger == "wet-bulb" else "t10_margin"
    crossing = p.crossings_utc.get(key)
    band = p.band_c or 0.0
    reasons: list[str] = []
    after_sunrise = p.sunrise_utc is not None and now_utc >= p.sunrise_utc
    mob = dt.timedelta(minutes=block.mobilisation_min)

    if after_sunrise:
        risk = "morning"
    elif p.air_temp_c <= t10:
        # damage is done at bud temperature, which crop-height air stands for: the air decides
        risk = "now"
        reasons.append(f"crop-height air {T(p.air_temp_c)} is at or below T10 {T(t10)}")
    elif p.predicted_min_c <= t10 + margin:
        risk = "likely"
        reasons.append(
            f"projected minimum {T(p.predicted_min_c)} (+/- {d.delta(band)}) reaches T10 + margin "
            f"{T(t10 + margin)}"
        )
    elif p.predicted_min_c - band <= t10 + margin:
        risk = "possible"
        reasons.append(
            f"projected minimum {T(p.predicted_min_c)} is within its uncertainty ({d.delta(band)}) of "
            f"T10 + margin {T(t10 + margin)}"
        )
    else:
        risk = "low"
        reasons.append(f"projected minimum {T(p.predicted_min_c)} stays above T10 + margin {T(t10 + margin)}")
    reasons.extend(n for n in p.notes if "assumed" in n or "does not hold" in n or "left out" in n)

    start_by = crossing - mob if crossing else None
    details: dict = {"crossing_utc": crossing, "mobilisation_min": block.mobilisation_min}
    start_air = stop_air = rate = gain = None
    action = "no protection needed tonight on the current projection; frostwatch keeps watching"

    if method == "wind_machine":
        suit = windmachine.wind_machine_suitability(
            p.projected_inversion_c if p.projected_inversion_c is not None else (p.inversion_c or 0.0),
            p.wind_speed_m_s or 0.0,
            p.predicted_min_c,
            t10,
        )
        gain = suit.expected_gain_c
        details["wind_machine_useful"] = suit.useful
        reasons.extend(suit.reasons)
    if sprinkler and p.dew_point_c is not None:
        start_air = float(sprinklers.sprinkler_start_air_temp_c(p.dew_point_c, t10, margin_c=margin, pressure_hpa=pressure_hpa))
        stop_air = float(sprinklers.sprinkler_start_air_temp_c(p.dew_point_c, t10, margin_c=0.0, pressure_hpa=pressure_hpa))
        if not math.isfinite(start_air):
            start_air = None
        if not math.isfinite(stop_air):
            stop_air = None
        e_hpa = float(humidity.vapour_pressure_hpa_from_dew_point(p.dew_point_c))
        loss = -float(radiation.net_longwave_w_m2(p.predicted_min_c, e_hpa, cloud_frac=0.0))
        rate = float(
            sprinklers.required_application_rate_mm_h(max(0.0, loss), p.wind_speed_m_s or 0.0, p.predicted_min_c, t10)
        )
        if block.application_rate_mm_h is not None and rate > block.application_rate_mm_h:
            reasons.append(
                f"tonight needs about {rate:.1f} mm/h but the system delivers {block.application_rate_mm_h:.1f} mm/h: "
                "running it may do more harm than good (evaporative cooling); consult your adviser"
            )

    if risk == "morning":
        action = _stop_advice(p, block, trigger, now_c, T)
    elif risk in ("likely", "now", "possible"):
        what = {
            "wind_machine": "start the wind machines",
            "overtree_sprinkler": "start the over-tree sprinklers",
            "undertree_sprinkler": "start the under-tree sprinklers",
            "heaters": "light the heaters",
            "none": "protect the block if you can (this block has no protection configured)",
        }[method]
        fans_useless = method == "wind_machine" and not details.get("wind_machine_useful", True)
        if fans_useless:
            what = "protect the block by other means (wind machines will not help much tonight, see why)"
        if sprinkler and p.wet_bulb_c is not None and p.wet_bulb_c <= t10 and risk != "now":
            reasons.append(
                f"the wet bulb {T(p.wet_bulb_c)} is already at or below T10: sprinklers started now cool the buds "
                "towards it until ice forms; if they are not running yet, weigh this with your adviser"
            )
        if sprinkler and (p.wind_speed_m_s or 0.0) > sprinklers.MAX_WIND_FOR_SPRINKLING_M_S:
            reasons.append(
                f"wind {p.wind_speed_m_s:.1f} m/s is above about {sprinklers.MAX_WIND_FOR_SPRINKLING_M_S:g} m/s: "
                "over-tree sprinkling in wind needs far more water and can do more harm than good"
            )
        if risk == "now":
            action = f"{what} now: the block is at its critical temperature"
            if sprinkler:
                action = f"{what} now if they are not running, and keep them running without a break: the block is at its critical temperature"
        elif start_by is not None and now_utc >= start_by:
            action = f"{what} now: the {trigger} temperature is projected to reach {T(t10 + margin)} by {d.time(crossing)}"
        elif start_by is not None:
            action = f"be ready to {what} by {d.time(start_by)} ({_fmt_delta(block.mobilisation_min)} before the {trigger} temperature is projected to reach {T(t10 + margin)})"
        else:
            action = f"stand by: {what} if the projection worsens"
        if sprinkler and start_air is not None:
            action += f"; sprinklers must be running before the air cools to {T(start_air)}"
    return Advice(
        **base,
        risk=risk,
        action=action,
        reasons=tuple(reasons),
        start_by_utc=start_by,
        trigger=trigger,
        trigger_temp_c=now_c,
        start_air_temp_c=start_air,
        stop_air_temp_c=stop_air,
        required_rate_mm_h=rate,
        expected_gain_c=gain,
        details=details,
    )


def _stop_advice(p: Projection, block: Block, trigger: str, now_c: float | None, T) -> str:
    t10, margin = block.kill_10pct_c, block.margin_c
    if block.protection in SPRINKLER_METHODS:
        if now_c is not None and now_c > t10:
            return (f"after sunrise: sprinklers may stop once the wet bulb ({T(now_c)}) stays above T10 "
                    f"{T(t10)} and rising and the ice is melting")
        return f"keep sprinklers running: the wet bulb is not yet above T10 {T(t10)}"
    if p.air_temp_c is not None and p.air_temp_c > t10 + margin:
        return f"after sunrise: protection may stop once crop-height air ({T(p.air_temp_c)}) keeps rising above {T(t10 + margin)}"
    return f"keep protection running until crop-height air is above {T(t10 + margin)} and rising"
