"""The per-block alert state machine (pure): advice in, level changes and alerts out.

Levels, in rising order of urgency; `rank` is what scripts compare (DESIGN.md 1.4):

    all-clear      0  nothing to do (also the one "resolved" message when a condition clears)
    safe-to-stop   1  morning: protection may stop (per-method stop rule met)
    frost-possible 2  the dusk outlook: frost possible tonight, with predicted minimum and time
    standby        3  the projection reaches T10 + margin within the next hours
    act            4  start protection now, given the crew's mobilisation time
    critical       5  at or below T10 now (or protection is not holding the block)

Separate on and off thresholds, persistence over consecutive evaluations, and a one-way night
(nothing is re-announced below the level already reached) keep it from flapping
(grower-needs E3). Time is injected; nothing here reads a clock.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
from dataclasses import dataclass

from frostwatch.config import Block
from frostwatch.display import Display
from frostwatch.models import Advice, Alert, Projection
from frostwatch.physics import humidity

LEVELS: dict[str, int] = {
    "all-clear": 0,
    "safe-to-stop": 1,
    "frost-possible": 2,
    "standby": 3,
    "act": 4,
    "critical": 5,
}
PERSISTENCE = {"standby": 2, "act": 2, "critical": 1}  # consecutive evaluations before raising
CLEAR_PERSISTENCE = 3  # consecutive evaluations beyond the off threshold before clearing
OFF_HYSTERESIS_C = 0.5  # the off threshold sits this far above the on threshold
STANDBY_HORIZON_H = 4.0


@dataclass(frozen=True)
class BlockAlertState:
    """What the rules remember about a block between evaluations."""

    night: str = ""
    level: str = "all-clear"
    candidate: str = "all-clear"
    candidate_count: int = 0
    clear_count: int = 0
    outlook_sent: bool = False
    last_key: str | None = None
    sequence: int = 0
    peak_level: str = "all-clear"


def _wanted_level(adv: Advice, proj: Projection, now: dt.datetime) -> str:
    if adv.risk == "now":
        return "critical"
    if adv.risk == "likely":
        if adv.start_by_utc is not None and now >= adv.start_by_utc:
            return "act"
        crossing = adv.details.get("crossing_utc")
        if crossing is not None and (crossing - now).total_seconds() <= STANDBY_HORIZON_H * 3600:
            return "standby"
        return "standby"
    if adv.risk == "possible":
        crossing = adv.details.get("crossing_utc")
        if crossing is not None and (crossing - now).total_seconds() <= STANDBY_HORIZON_H * 3600:
            return "standby"
    return "all-clear"


def _clear_enough(adv: Advice, proj: Projection, block: Block) -> bool:
    """The off threshold: the projected minimum is safely above the on threshold again."""
    if proj.predicted_min_c is None:
        return False
    band = proj.band_c or 0.0
    return proj.predicted_min_c - band > block.kill_10pct_c + block.margin_c + OFF_HYSTERESIS_C and adv.risk in ("low",)


def step(
    state: BlockAlertState,
    adv: Advice,
    proj: Projection,
    block: Block,
    now: dt.datetime,
    night: str,
    dusk_utc: dt.datetime,
    display: Display,
) -> tuple[BlockAlertState, list[Alert]]:
    """One evaluation of one block: the new state and the alerts to send (maybe none)."""
    if state.night != night:
        state = BlockAlertState(night=night)
    alerts: list[Alert] = []
    d = display

    def make(level: str, headline: str, resolves: str | None = None) -> Alert:
        nonlocal state
        seq = state.sequence + 1
        key = f"{block.id}/{night}/{seq:03d}-{level}"
        state = dataclasses.replace(state, sequence=seq, last_key=key)
        return Alert(
            time_utc=now, block=block.id, level=level, rank=LEVELS[level], advice=adv.action,
            message=compose_message(level, headline, adv, proj, block, d), key=key, resolves=resolves,
        )

    # the dusk outlook, once a night
    if not state.outlook_sent and now >= dusk_utc and adv.risk != "morning":
        state = dataclasses.replace(state, outlook_sent=True)
        if LEVELS[state.level] < LEVELS["frost-possible"]:
            if adv.risk in ("possible", "likely", "now"):
                alerts.append(make(
                    "frost-possible",
                    f"{block.id}: frost possible tonight: minimum {d.temp(proj.predicted_min_c)} "
                    f"around {d.time(proj.predicted_min_at_utc)} (T10 {d.temp(block.kill_10pct_c)})",
                ))
            else:
                alerts.append(make(
                    "all-clear",
                    f"{block.id}: tonight's outlook is clear: minimum {d.temp(proj.predicted_min_c)} "
                    f"around {d.time(proj.predicted_min_at_utc)}",
                ))

    # morning: one safe-to-stop message where protection was called for
    if adv.risk == "morning":
        if LEVELS[state.level] >= LEVELS["standby"] and _morning_stop_ok(adv, proj, block):
            if block.protection == "none":
                alerts.append(make("all-clear", f"{block.id}: resolved: the night is over and the block is warming", resolves=state.last_key))
                state = dataclasses.replace(state, level="all-clear", candidate="all-clear", candidate_count=0)
            else:
                alerts.append(make("safe-to-stop", f"{block.id}: SAFE TO STOP protection", resolves=state.last_key))
                state = dataclasses.replace(state, level="safe-to-stop", candidate="safe-to-stop", candidate_count=0)
        return state, alerts

    wanted = _wanted_level(adv, proj, now)
    if LEVELS[wanted] > LEVELS[state.level] and wanted != "all-clear":
        count = state.candidate_count + 1 if LEVELS[state.candidate] >= LEVELS[wanted] else 1
        cand = wanted if LEVELS[wanted] >= LEVELS[state.candidate] or count == 1 else state.candidate
        state = dataclasses.replace(state, candidate=cand, candidate_count=count, clear_count=0)
        if count >= PERSISTENCE[wanted]:
            headline = {
                "standby": f"{block.id}: STANDBY: {adv.trigger} projected to reach {d.temp(block.kill_10pct_c + block.margin_c)} "
                           f"(T10 + margin) at {d.time(adv.details.get('crossing_utc'))}",
                "act": f"{block.id}: ACT NOW: start protection; {adv.trigger} projected to reach "
                       f"{d.temp(block.kill_10pct_c + block.margin_c)} at {d.time(adv.details.get('crossing_utc'))}",
                "critical": f"{block.id}: CRITICAL: crop-height air {d.temp(proj.air_temp_c)} is at or below T10 {d.temp(block.kill_10pct_c)}",
            }[wanted]
            alerts.append(make(wanted, headline))
            peak = wanted if LEVELS[wanted] > LEVELS[state.peak_level] else state.peak_level
            state = dataclasses.replace(state, level=wanted, candidate=wanted, candidate_count=0, peak_level=peak)
    elif LEVELS[state.level] >= LEVELS["standby"] and _clear_enough(adv, proj, block):
        n = state.clear_count + 1
        state = dataclasses.replace(state, clear_count=n, candidate="all-clear", candidate_count=0)
        if n >= CLEAR_PERSISTENCE:
            alerts.append(make(
                "all-clear",
                f"{block.id}: resolved: the projection is back above T10 + margin (minimum {d.temp(proj.predicted_min_c)})",
                resolves=state.last_key,
            ))
            state = dataclasses.replace(state, level="all-clear", clear_count=0)
    else:
        state = dataclasses.replace(state, clear_count=0, candidate=state.level if wanted == "all-clear" else state.candidate,
                                    candidate_count=state.candidate_count if LEVELS[wanted] > LEVELS[state.level] else 0)
    return state, alerts


def _morning_stop_ok(adv: Advice, proj: Projection, block: Block) -> bool:
    """Per-method stop rule: the trigger temperature is above T10 (sprinklers) or T10 + margin."""
    stop_ok = adv.details.get("stop_ok")
    if stop_ok is not None:
        return bool(stop_ok)  # the advice's own per-method stop rule (trend, after sunrise)
    if adv.trigger_temp_c is None:
        return False
    if adv.trigger == "wet-bulb":
        return adv.trigger_temp_c > block.kill_10pct_c
    return adv.trigger_temp_c > block.kill_10pct_c + block.margin_c


def compose_message(level: str, headline: str, adv: Advice, proj: Projection, block: Block, d: Display) -> str:
    """The alert text: headline, what triggered it, margin, crossing, action, reasons, cautions."""
    lines = [headline]
    if proj.air_temp_c is not None:
        now_bits = [f"air {d.temp(proj.air_temp_c)}"]
        wet = proj.wet_bulb_c
        if wet is None and proj.dew_point_c is not None:
            wet = float(humidity.wet_bulb_c_from_dew_point(proj.air_temp_c, proj.dew_point_c))
        if wet is not None and wet == wet:
            now_bits.append(f"wet bulb {d.temp(wet)}")
        if proj.dew_point_c is not None:
            now_bits.append(f"dew point {d.temp(proj.dew_point_c)}")
        if proj.inversion_c is not None:
            now_bits.append(f"inversion {d.delta(proj.inversion_c)}")
        if proj.wind_speed_m_s is not None:
            now_bits.append(f"wind {proj.wind_speed_m_s:.1f} m/s")
        lines.append(f"Now at {proj.station}: " + ", ".join(now_bits) + ".")
    if proj.predicted_min_c is not None and level not in ("safe-to-stop",):
        lines.append(
            f"Projected minimum {d.temp(proj.predicted_min_c)} +/- {d.delta(proj.band_c)} around "
            f"{d.time(proj.predicted_min_at_utc)}; T10 {d.temp(block.kill_10pct_c)}, T90 {d.temp(block.kill_90pct_c)}, "
            f"margin {d.delta(block.margin_c)}; triggered by the {adv.trigger} temperature."
        )
        t10x = proj.crossings_utc.get("wet_bulb_t10" if adv.trigger == "wet-bulb" else "t10")
        if t10x:
            lines.append(f"Projected to cross T10 at {d.time(t10x)}.")
    lines.append(f"Advice: {adv.action}.")
    if adv.reasons:
        lines.append("Why: " + "; ".join(adv.reasons) + ".")
    lines.append("Cautions: " + " ".join(adv.cautions))
    return "\n".join(lines)
