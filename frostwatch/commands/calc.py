"""`frostwatch calc`: the field calculator (wet bulb, dew point, sprinkler start, critical, ...)."""

from __future__ import annotations

import argparse

from frostwatch.commands.common import (
    _fahrenheit,
    _key,
    _out_json,
    _self_command,
    _temp_out,
    _unit,
)
from frostwatch.errors import UsageError


def _list_calculators(args) -> int:
    """`frostwatch calc` alone: what it can work out, and how to ask for each one's options."""
    width = max(len(name) for name, _ in args.calculators)
    print("frostwatch calc WHAT: the field calculators")
    for name, helptext in args.calculators:
        print(f"  {name:<{width}}  {helptext}")
    print(f"Each one's options: {_self_command()} calc WHAT --help")
    return 0


def _dew_point_given(args, ca, humidity, air_c: float | None) -> tuple[float, float | None]:
    """(dew point [°C], the relative humidity it came from or None): `--dew-point`, or worked out
    from `--humidity` at the air temperature `air_c` (what a handheld hygrometer shows)."""
    if args.humidity is None:
        return ca.temp_c(args, "--dew-point", args.dew_point), None
    rh = ca.humidity_pct(args, "--humidity", args.humidity)
    return float(humidity.dew_point_c_from_rel_humidity(air_c, rh)), rh


def _from_rh(args, td: float, rh: float | None) -> tuple[dict, str]:
    """The JSON keys and the words (' from RH 50 %') that say a dew point came from `--humidity`."""
    if rh is None:
        return {}, ""
    return {_key(args, "dew_point"): _temp_out(args, td), "relative_humidity_pct": rh}, f" from RH {rh:g} %"


def cmd_calc(args) -> int:
    import math

    from frostwatch.advice.render import GENERAL_CAUTIONS as CAUTIONS
    from frostwatch.commands import calc_args as ca
    from frostwatch.display import Display
    from frostwatch.physics import crops, humidity, sprinklers, windmachine

    def finite(v: float, what: str) -> float:
        if not math.isfinite(v):
            raise UsageError(what)
        return v

    if args.calc is None:
        return _list_calculators(args)
    if ca.us(args):
        args.fahrenheit = True  # --units us: every temperature in °F too (JSON keys end in _f)
    dq = Display("degF" if ca.fahrenheit(args) else "degC")  # a Fahrenheit reader reads US units
    p_hpa = 1013.25
    if args.calc in ("wet-bulb", "sprinkler-start", "sprinkler-rate"):
        p_hpa = ca.pressure_hpa(args, getattr(args, "pressure", None), getattr(args, "pressure_inhg", None))
    p_text = f"{p_hpa / ca.INHG_HPA:.2f} inHg" if ca.us(args) else f"{p_hpa:g} hPa"
    temp = lambda option, text: ca.temp_c(args, option, text)  # noqa: E731
    if args.calc == "wet-bulb":
        t = temp("--air-temp", args.air_temp)
        td, rh = _dew_point_given(args, ca, humidity, t)
        if td > t + 0.05:
            raise UsageError(f"--dew-point {args.dew_point} is above --air-temp {args.air_temp}; a dew point cannot exceed the air temperature")
        wb = finite(float(humidity.wet_bulb_c_from_dew_point(t, td, p_hpa)), "no wet-bulb temperature for these inputs")
        doc = {_key(args, "wet_bulb"): _temp_out(args, wb), "pressure_hpa": round(p_hpa, 2),
               "method": "ASHRAE psychrometric wet bulb (ice bulb below 0 °C)"}
        rh_keys, from_rh = _from_rh(args, td, rh)
        doc.update(rh_keys)
        text = (f"wet-bulb temperature {_temp_out(args, wb)} {_unit(args)} (air {_temp_out(args, t)} {_unit(args)}, "
                f"dew point {_temp_out(args, td)} {_unit(args)}{from_rh}, {p_text}; ice bulb below freezing)")
    elif args.calc == "dew-point":
        rh = ca.humidity_pct(args, "--humidity", args.humidity)
        t = temp("--air-temp", args.air_temp)
        td = float(humidity.dew_point_c_from_rel_humidity(t, rh))
        tf = float(humidity.frost_point_c_from_dew_point(td))
        doc = {_key(args, "dew_point"): _temp_out(args, td), _key(args, "frost_point"): _temp_out(args, tf),
               "relative_humidity_pct": rh,
               "convention": "relative humidity over liquid water (WMO), as most hygrometers report"}
        text = (f"dew point {_temp_out(args, td)} {_unit(args)}, frost point {_temp_out(args, tf)} {_unit(args)} "
                f"(air {_temp_out(args, t)} {_unit(args)}, RH {rh:g} %)")
    elif args.calc == "sprinkler-start":
        if args.humidity is not None and args.air_temp is None:
            raise UsageError("--humidity needs --air-temp (the air temperature the humidity was read at)")
        if args.air_temp is not None and args.humidity is None:
            raise UsageError("--air-temp is used only with --humidity; give --dew-point, or --air-temp and --humidity")
        tc = temp("--critical", args.critical)
        td, rh = _dew_point_given(args, ca, humidity, None if args.air_temp is None else temp("--air-temp", args.air_temp))
        margin = ca.delta_c(args, "--margin", args.margin) if args.margin else 0.0
        start = float(sprinklers.sprinkler_start_air_temp_c(td, tc, margin_c=margin, pressure_hpa=p_hpa))
        if not math.isfinite(start):
            raise UsageError(
                (f"--dew-point {args.dew_point}" if rh is None else
                 f"the dew point {_temp_out(args, td)} {_unit(args)} (from --humidity {args.humidity} at --air-temp {args.air_temp})")
                + f" is above the target wet bulb {args.critical}: the wet bulb never falls "
                "below the dew point, so the air temperature itself governs: start before the air reaches the critical temperature"
            )
        doc = {_key(args, "start_air_temp"): _temp_out(args, start), "pressure_hpa": round(p_hpa, 2),
               _key(args, "target_wet_bulb"): _temp_out(args, tc + margin),
               "note": "sprinklers must be running before the air cools to this; stop only after sunrise once it is passed again and the ice is melting"}
        rh_keys, from_rh = _from_rh(args, td, rh)
        doc.update(rh_keys)
        text = (f"start sprinklers before the air cools to {_temp_out(args, start)} {_unit(args)} "
                f"(wet bulb = {_temp_out(args, tc + margin)} {_unit(args)}, the critical temperature plus margin, at dew point "
                f"{_temp_out(args, td)} {_unit(args)}{from_rh}, {p_text}); stop only after sunrise, once the air is above it "
                "again, the wet bulb is rising and the ice is melting")
    elif args.calc == "critical":
        try:
            ct = crops.critical_temps(args.crop, args.stage)
        except ValueError as exc:
            raise UsageError(str(exc)) from None
        doc = {_key(args, "kill_10pct"): _temp_out(args, ct.kill_10pct_c),
               _key(args, "kill_90pct"): _temp_out(args, None if math.isnan(ct.kill_90pct_c) else ct.kill_90pct_c),
               "crop": ct.crop, "stage": ct.stage, "source": ct.source}
        text = (f"{ct.crop}, {ct.stage}: 10 % kill {_temp_out(args, ct.kill_10pct_c)} {_unit(args)}, "
                f"90 % kill {_temp_out(args, ct.kill_90pct_c)} {_unit(args)} (about 30 min exposure; {ct.source})")
    elif args.calc == "sprinkler-rate":
        doc, text = _sprinkler_rate(args, ca, dq, p_hpa, temp)
    elif args.calc == "wind-machine":
        doc, text = _wind_machine(args, ca, windmachine, temp)
    else:  # pragma: no cover - argparse restricts choices
        raise UsageError(f"unknown calc {args.calc}")
    doc["cautions"] = list(CAUTIONS)
    if args.json:
        _out_json(doc)
    else:
        print(text)
        print("Cautions: " + " ".join(CAUTIONS))
    return 0


def _sprinkler_rate(args, ca, dq, p_hpa: float, temp) -> tuple[dict, str]:
    import math

    from frostwatch.physics import sprinklers

    t = temp("--min-temp", args.min_temp)
    wind = ca.speed_m_s(args, "--wind", args.wind)
    if wind < 0:
        raise UsageError(f"--wind {args.wind}: expected a wind speed, 0 or more")
    if not 0 <= args.cloud <= 1:
        raise UsageError(f"--cloud {args.cloud}: expected a cloud fraction 0-1")
    assumed_td = args.dew_point is None
    td = t - 5.0 if assumed_td else min(temp("--dew-point", args.dew_point), t)
    r = sprinklers.rate_tonight_mm_h(t, td, wind, cloud_frac=args.cloud, pressure_hpa=p_hpa)
    if not math.isfinite(r.required_mm_h):
        raise UsageError(f"--min-temp {args.min_temp}: outside the range the heat budget covers")
    windy = wind > sprinklers.MAX_WIND_FOR_SPRINKLING_M_S
    doc = {"required_rate_mm_h": round(r.required_mm_h, 2), "governed_by": r.governed_by,
           "heat_budget_rate_mm_h": round(r.heat_budget_mm_h, 2),
           "net_longwave_loss_w_m2": round(r.net_loss_w_m2, 1), "sensible_loss_w_m2": round(r.sensible_w_m2, 1),
           "sublimation_loss_w_m2": round(r.latent_w_m2, 1), "wind_m_s": round(wind, 3),
           "over_wind_limit": windy, "dew_point_assumed": assumed_td, "pressure_hpa": round(p_hpa, 2),
           "practice": sprinklers.PRACTICE_SOURCE,
           "note": "the heat budget of the iced plant is a lower bound: a system below it cannot hold the buds "
                   "at 0 °C; one above it may still fall short in wind"}
    if ca.us(args):
        doc["required_rate_in_h"] = round(r.required_mm_h / ca.MM_PER_IN, 3)
    lines = [f"tonight needs at least {dq.rate(r.required_mm_h)} (heat budget of the iced plant, a lower bound)",
             f"  losses at freezing: net longwave {dq.flux(r.net_loss_w_m2)}, convection {dq.flux(r.sensible_w_m2)}, "
             f"sublimation {dq.flux(r.latent_w_m2)} (wind {dq.wind(r.wind_used_m_s)})",
             f"  published practice: {_practice(dq)}"]
    if assumed_td:
        lines.append(f"  no --dew-point given: assumed {dq.delta(5.0, 0)} below the minimum")
    if windy:
        lines.append(f"  wind above about {dq.wind_limit(sprinklers.MAX_WIND_FOR_SPRINKLING_M_S)}: over-tree "
                     "sprinkling is not advised")
    if args.capacity is not None:
        cap = ca.rate_mm_h(args, "--capacity", args.capacity)
        ok = sprinklers.capacity_adequate(r.required_mm_h, cap) and not windy
        doc["capacity_mm_h"] = round(cap, 3)
        doc["capacity_adequate"] = bool(ok)
        lines.append(f"  your system's {dq.rate(cap)} " + (
            "covers this lower bound" if ok else "is NOT enough: running it may do more harm than good; consult your adviser"))
        if args.area is not None:
            area = ca.area_ha(args, "--area", args.area)
            peak = sprinklers.peak_flow_l_s(cap, area)
            doc["area_ha"], doc["peak_flow_l_s"] = round(area, 3), round(peak, 1)
            if ca.us(args):
                from frostwatch.display import GPM_PER_L_S

                doc["peak_flow_gpm"] = round(peak * GPM_PER_L_S, 0)
            lines.append(f"  peak flow {dq.flow(peak)} for {dq.area(area)}")
            if args.hours is not None:
                hours = ca.hours_h(args, "--hours", args.hours)
                vol = sprinklers.water_volume_m3(cap, area, hours)
                doc["hours"], doc["water_m3"] = hours, round(vol, 0)
                if ca.us(args):
                    from frostwatch.display import M3_PER_ACRE_FT

                    doc["water_acre_ft"] = round(vol / M3_PER_ACRE_FT, 3)
                lines.append(f"  water about {dq.water(vol)} over {hours:g} h")
    return doc, "\n".join(lines)


def _practice(d) -> str:
    """The published practice figure in the reader's units."""
    from frostwatch.physics import sprinklers as sp

    lo, hi = sp.PRACTICE_RATE_MM_H
    w0, w1 = sp.PRACTICE_LIGHT_WIND_PROTECTS_TO_C
    return (f"{d.rate(lo)} to {d.rate(hi)} protects to about {d.temp(sp.PRACTICE_CALM_PROTECTS_TO_C, 0)} in calm air "
            f"and to {d.temp(w0, 0)} to {d.temp(w1, 0)} in light wind (Longstroth 2012, MSU Extension)")


def _wind_machine(args, ca, windmachine, temp) -> tuple[dict, str]:
    from frostwatch.advice import explain, render
    from frostwatch.advice.fans import fan_verdict
    from frostwatch.config import Block
    from frostwatch.display import Display
    from frostwatch.models import Projection

    wind = ca.speed_m_s(args, "--wind", args.wind)
    if wind < 0:
        raise UsageError(f"--wind {args.wind}: expected a wind speed, 0 or more")
    if not 0 <= args.gain_fraction <= 1:
        raise UsageError(f"--gain-fraction {args.gain_fraction}: expected a fraction 0-1 (default 0.4)")
    inv = ca.delta_c(args, "--inversion", args.inversion)
    tmin, tc = temp("--min-temp", args.min_temp), temp("--critical", args.critical)
    d = Display("degF" if _fahrenheit(args) else "degC")
    proj = Projection(time_utc=None, block="calc", station=None, air_temp_c=tmin + 2.0, dew_point_c=None,
                      wet_bulb_c=None, predicted_min_c=tmin, predicted_min_at_utc=None, band_c=0.0, crossings_utc={},
                      inversion_c=inv, projected_inversion_c=inv, inversion_class=None, wind_speed_m_s=wind,
                      regime="radiation", method="calc")
    margin = ca.delta_c(args, "--margin", args.margin)
    blk = Block(id="calc", crop="", stage="", kill_10pct_c=tc, kill_90pct_c=tc, critical_source="--critical",
                protection="wind_machine", wind_machine_gain_frac=args.gain_fraction, margin_c=margin)
    v = fan_verdict(proj, blk, args.fog)
    f = v.fans
    from frostwatch.units import delta_c_to_f

    k = delta_c_to_f(1.0) if _fahrenheit(args) else 1.0
    reasons = explain.fan_facts(v, d) if v.advised else [explain.why_not(v, d)]
    alternatives = render.alternatives(v, d)
    doc = {"useful": v.advised, "sufficient": f.sufficient,
           _key(args, "expected_gain"): round(f.gain_c * k, 2),
           _key(args, "expected_gain_low"): round(f.gain_low_c * k, 2),
           _key(args, "expected_gain_high"): round(f.gain_high_c * k, 2),
           "inversion_class": windmachine.classify_inversion(inv), "reasons": reasons,
           "why_not": None if v.why_not is None else v.why_not.value, "alternatives": alternatives,
           "gain_note": "30-50 % of the inversion: a band set around the one measured case (McMeeking "
                        "et al. 2002: 1-2 °C from a 3.5 °C inversion), not a published rule; sufficiency uses 30 % "
                        "and is judged against the critical temperature plus --margin"}
    head = ("wind machines should help" + ("" if f.sufficient else ", but not enough on their own")
            if v.advised else "wind machines will not help much")
    return doc, head + "\n  " + "\n  ".join(reasons + alternatives)


def register(sub, common) -> None:
    from frostwatch.commands.calc_args import NEGATIVE_WITH_UNIT

    calc = sub.add_parser("calc", help="field calculator: wet bulb, dew point, sprinkler start, critical temperatures, ...")
    units = argparse.ArgumentParser(add_help=False)
    units.add_argument("--units", choices=("si", "us"), default="si",
                       help="the unit of a bare number and of the text: si (°C, m/s, mm/h, ha, hPa; the default) or "
                            "us (°F, mph, in/h, acres, inHg); JSON keys keep their unit suffixes")
    csub = calc.add_subparsers(dest="calc", metavar="WHAT")
    listing: list[tuple[str, str]] = []

    def add(name: str, **kw):  # every calculator, also listed by `frostwatch calc` alone
        listing.append((name, kw["help"].replace("%%", "%")))  # argparse help is a %-format
        return csub.add_parser(name, **kw)

    T = "temperature: °C, or °F with --fahrenheit or --units us; or with a unit: 34F, 1.2C"
    def low_ok(c) -> None:  # beside every --humidity
        c.add_argument("--humidity-low-ok", action="store_true", help="a relative humidity below 1.5 %% is really meant")

    RH = ("relative humidity in percent, 0-100 (below 1.5 is refused as a likely fraction unless "
          "--humidity-low-ok is given or it is written with %%, e.g. 0.8%%)")
    P = ("air pressure in hPa (default 1013.25), inHg with --units us; or with a unit: 29.92inHg, 101.3kPa; "
         "outside 500-1100 hPa it is refused")
    c = add("wet-bulb", parents=[common, units], help="wet-bulb (ice-bulb below 0 °C) temperature")
    c.add_argument("--air-temp", required=True, metavar="T", help=T)
    given = c.add_mutually_exclusive_group(required=True)
    given.add_argument("--dew-point", metavar="TD", help=T)
    given.add_argument("--humidity", metavar="RH", help=RH)
    low_ok(c)
    c.add_argument("--pressure", metavar="HPA", help=P)
    c.add_argument("--pressure-inhg", metavar="INHG", help="air pressure in inches of mercury (e.g. 29.92)")
    c = add("dew-point", parents=[common, units], help="dew point and frost point from air temperature and RH")
    c.add_argument("--air-temp", required=True, metavar="T", help=T)
    c.add_argument("--humidity", required=True, metavar="RH", help=RH)
    low_ok(c)
    c = add("sprinkler-start", parents=[common, units], help="air temperature at which sprinklers must already run")
    given = c.add_mutually_exclusive_group(required=True)
    given.add_argument("--dew-point", metavar="TD", help="the evening's dew point; " + T)
    given.add_argument("--humidity", metavar="RH", help=RH + "; with --air-temp, instead of --dew-point")
    c.add_argument("--air-temp", metavar="T", help="the air temperature the humidity was read at; " + T)
    low_ok(c)
    c.add_argument("--critical", required=True, metavar="TC", help="critical temperature (usually T10); " + T)
    c.add_argument("--margin", default="0", metavar="DT",
                   help="safety margin added to TC, in °C degrees (°F with --fahrenheit or --units us; or 2F, 1C)")
    c.add_argument("--pressure", metavar="HPA", help=P)
    c.add_argument("--pressure-inhg", metavar="INHG", help="air pressure in inches of mercury (e.g. 29.92)")
    c = add("critical", parents=[common, units], help="10 %% and 90 %% kill temperatures of a crop at a bud stage")
    c.add_argument("--crop", required=True)
    c.add_argument("--stage", required=True)
    c = add("sprinkler-rate", parents=[common, units],
            help="over-tree application rate tonight needs: the heat budget of the iced plant")
    c.add_argument("--min-temp", required=True, metavar="T", help="expected minimum air temperature; " + T)
    c.add_argument("--wind", required=True, metavar="SPEED",
                   help="wind speed in m/s, mph with --units us; or 5mph, 2.2m/s (measure it: unknown is not calm)")
    c.add_argument("--dew-point", metavar="TD", help="dew point (default: 5 °C below --min-temp); " + T)
    c.add_argument("--cloud", type=float, default=0.0, metavar="FRAC", help="cloud fraction 0-1 (default 0, clear)")
    c.add_argument("--capacity", metavar="RATE",
                   help="your system's application rate in mm/h, in/h with --units us; or 0.14in/h, 3.5mm/h")
    c.add_argument("--area", metavar="AREA",
                   help="sprinkled area in ha, acres with --units us; or 10acres, 4ha (with --capacity: peak flow)")
    c.add_argument("--hours", metavar="H", help="running hours (with --capacity and --area: water volume)")
    c.add_argument("--pressure", metavar="HPA", help=P)
    c.add_argument("--pressure-inhg", metavar="INHG", help="air pressure in inches of mercury (e.g. 29.92)")
    c = add("wind-machine", parents=[common, units], help="will wind machines help tonight?")
    c.add_argument("--inversion", required=True, metavar="DT",
                   help="tower (~10 m) minus crop-height temperature, in °C degrees (°F with --fahrenheit or "
                        "--units us; or 7F)")
    c.add_argument("--wind", required=True, metavar="SPEED", help="wind speed in m/s, mph with --units us; or 3mph")
    c.add_argument("--min-temp", required=True, metavar="T", help="projected minimum at crop height; " + T)
    c.add_argument("--critical", required=True, metavar="TC", help="critical temperature (usually T10); " + T)
    c.add_argument("--fog", action="store_true", help="supercooled fog is present")
    c.add_argument("--margin", default="2", metavar="DT",
                   help="safety margin above the critical temperature that fans must hold, in °C degrees (°F with "
                        "--fahrenheit or --units us; default 2 °C, common practice)")
    c.add_argument("--gain-fraction", type=float, default=0.4, metavar="FRAC",
                   help="fraction of the inversion recovered at crop height (default 0.4, see the README)")
    for p in csub.choices.values():  # "-2C" is a value, not an option
        p._negative_number_matcher = NEGATIVE_WITH_UNIT
    calc.set_defaults(func=cmd_calc, calculators=tuple(listing))
