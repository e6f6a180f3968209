"""`frostwatch calc`: the field calculator (wet bulb, dew point, sprinkler start, critical, ...)."""

from __future__ import annotations

from frostwatch.commands.common import (
    _fahrenheit,
    _key,
    _out_json,
    _self_command,
    _temp_in,
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


def cmd_calc(args) -> int:
    import math

    from frostwatch.advice.render import GENERAL_CAUTIONS as CAUTIONS
    from frostwatch.physics import crops, humidity, sprinklers, windmachine

    def finite(v: float, what: str) -> float:
        if not math.isfinite(v):
            raise UsageError(what)
        return v

    if args.calc is None:
        return _list_calculators(args)
    p_hpa = getattr(args, "pressure", None) or 1013.25
    if args.calc == "wet-bulb":
        t, td = _temp_in(args, args.air_temp), _temp_in(args, args.dew_point)
        if td > t + 0.05:
            raise UsageError(f"--dew-point {args.dew_point} is above --air-temp {args.air_temp}; a dew point cannot exceed the air temperature")
        wb = finite(float(humidity.wet_bulb_c_from_dew_point(t, td, p_hpa)), "no wet-bulb temperature for these inputs")
        doc = {_key(args, "wet_bulb"): _temp_out(args, wb), "pressure_hpa": p_hpa,
               "method": "ASHRAE psychrometric wet bulb (ice bulb below 0 °C)"}
        text = f"wet-bulb temperature {_temp_out(args, wb)} {_unit(args)} (air {args.air_temp}, dew point {args.dew_point}, {p_hpa:g} hPa; ice bulb below 0 °C)"
    elif args.calc == "dew-point":
        if not 0 < args.humidity <= 100:
            raise UsageError(f"--humidity {args.humidity}: expected relative humidity in percent, 0-100")
        t = _temp_in(args, args.air_temp)
        td = float(humidity.dew_point_c_from_rel_humidity(t, args.humidity))
        tf = float(humidity.frost_point_c_from_dew_point(td))
        doc = {_key(args, "dew_point"): _temp_out(args, td), _key(args, "frost_point"): _temp_out(args, tf),
               "convention": "relative humidity over liquid water (WMO), as most hygrometers report"}
        text = f"dew point {_temp_out(args, td)} {_unit(args)}, frost point {_temp_out(args, tf)} {_unit(args)} (air {args.air_temp}, RH {args.humidity:g} %)"
    elif args.calc == "sprinkler-start":
        td, tc = _temp_in(args, args.dew_point), _temp_in(args, args.critical)
        margin = (args.margin * 5.0 / 9.0 if _fahrenheit(args) else args.margin) if args.margin else 0.0
        start = float(sprinklers.sprinkler_start_air_temp_c(td, tc, margin_c=margin, pressure_hpa=p_hpa))
        if not math.isfinite(start):
            raise UsageError(
                f"--dew-point {args.dew_point} is above the target wet bulb {args.critical}: the wet bulb never falls "
                "below the dew point, so the air temperature itself governs: start before the air reaches the critical temperature"
            )
        doc = {_key(args, "start_air_temp"): _temp_out(args, start), "pressure_hpa": p_hpa,
               _key(args, "target_wet_bulb"): _temp_out(args, tc + margin),
               "note": "sprinklers must be running before the air cools to this; stop only after sunrise once it is passed again and the ice is melting"}
        text = (f"start sprinklers before the air cools to {_temp_out(args, start)} {_unit(args)} "
                f"(wet bulb = {_temp_out(args, tc + margin)} {_unit(args)}, the critical temperature plus margin, at dew point "
                f"{args.dew_point:g} {_unit(args)}, {p_hpa:g} hPa); stop only after sunrise, once the air is above it "
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
        t = _temp_in(args, args.min_temp)
        if args.wind < 0:
            raise UsageError(f"--wind {args.wind}: expected a wind speed in m/s, 0 or more")
        if not 0 <= args.cloud <= 1:
            raise UsageError(f"--cloud {args.cloud}: expected a cloud fraction 0-1")
        assumed_td = args.dew_point is None
        td = t - 5.0 if assumed_td else min(_temp_in(args, args.dew_point), t)
        r = sprinklers.rate_tonight_mm_h(t, td, args.wind, cloud_frac=args.cloud, pressure_hpa=p_hpa)
        if not math.isfinite(r.required_mm_h):
            raise UsageError(f"--min-temp {args.min_temp}: outside the range the heat budget covers")
        windy = args.wind > sprinklers.MAX_WIND_FOR_SPRINKLING_M_S
        doc = {"required_rate_mm_h": round(r.required_mm_h, 2), "governed_by": r.governed_by,
               "heat_budget_rate_mm_h": round(r.heat_budget_mm_h, 2),
               "net_longwave_loss_w_m2": round(r.net_loss_w_m2, 1), "sensible_loss_w_m2": round(r.sensible_w_m2, 1),
               "sublimation_loss_w_m2": round(r.latent_w_m2, 1), "wind_m_s": args.wind,
               "over_wind_limit": windy, "dew_point_assumed": assumed_td, "pressure_hpa": p_hpa,
               "practice": sprinklers.PRACTICE_SOURCE,
               "note": "the heat budget of the iced plant is a lower bound: a system below it cannot hold the buds "
                       "at 0 °C; one above it may still fall short in wind"}
        lines = [f"tonight needs at least {r.required_mm_h:.1f} mm/h (heat budget of the iced plant, a lower bound)",
                 f"  losses at 0 °C: net longwave {r.net_loss_w_m2:.0f} W/m2, convection {r.sensible_w_m2:.0f} W/m2, "
                 f"sublimation {r.latent_w_m2:.0f} W/m2 (wind {r.wind_used_m_s:g} m/s)",
                 f"  published practice: {sprinklers.PRACTICE_SOURCE}"]
        if assumed_td:
            lines.append("  no --dew-point given: assumed 5 °C (9 °F) below the minimum")
        if windy:
            lines.append(f"  wind above about {sprinklers.MAX_WIND_FOR_SPRINKLING_M_S:g} m/s: over-tree sprinkling is not advised")
        if args.capacity is not None:
            ok = sprinklers.capacity_adequate(r.required_mm_h, args.capacity) and not windy
            doc["capacity_mm_h"] = args.capacity
            doc["capacity_adequate"] = bool(ok)
            lines.append(f"  your system's {args.capacity:g} mm/h " + (
                "covers this lower bound" if ok else "is NOT enough: running it may do more harm than good; consult your adviser"))
            if args.area is not None:
                peak = sprinklers.peak_flow_l_s(args.capacity, args.area)
                doc["area_ha"], doc["peak_flow_l_s"] = args.area, round(peak, 1)
                lines.append(f"  peak flow {peak:.1f} L/s for {args.area:g} ha")
                if args.hours is not None:
                    vol = sprinklers.water_volume_m3(args.capacity, args.area, args.hours)
                    doc["hours"], doc["water_m3"] = args.hours, round(vol, 0)
                    lines.append(f"  water about {vol:,.0f} m3 over {args.hours:g} h")
        text = "\n".join(lines)
    elif args.calc == "wind-machine":
        from frostwatch.advice import explain, render
        from frostwatch.advice.fans import fan_verdict
        from frostwatch.config import Block
        from frostwatch.display import Display
        from frostwatch.models import Projection

        if args.wind < 0:
            raise UsageError(f"--wind {args.wind}: expected a wind speed in m/s, 0 or more")
        if not 0 <= args.gain_fraction <= 1:
            raise UsageError(f"--gain-fraction {args.gain_fraction}: expected a fraction 0-1 (default 0.4)")
        inv = args.inversion * 5.0 / 9.0 if _fahrenheit(args) else args.inversion
        tmin, tc = _temp_in(args, args.min_temp), _temp_in(args, args.critical)
        d = Display("degF" if _fahrenheit(args) else "degC")
        proj = Projection(time_utc=None, block="calc", station=None, air_temp_c=tmin + 2.0, dew_point_c=None,
                          wet_bulb_c=None, predicted_min_c=tmin, predicted_min_at_utc=None, band_c=0.0, crossings_utc={},
                          inversion_c=inv, projected_inversion_c=inv, inversion_class=None, wind_speed_m_s=args.wind,
                          regime="radiation", method="calc")
        margin = args.margin * 5.0 / 9.0 if _fahrenheit(args) else args.margin
        blk = Block(id="calc", crop="", stage="", kill_10pct_c=tc, kill_90pct_c=tc, critical_source="--critical",
                    protection="wind_machine", wind_machine_gain_frac=args.gain_fraction, margin_c=margin)
        v = fan_verdict(proj, blk, args.fog)
        f = v.fans
        k = 9.0 / 5.0 if _fahrenheit(args) else 1.0
        reasons = explain.fan_facts(v, d) if v.advised else [explain.why_not(v, d)]
        alternatives = render.alternatives(v)
        doc = {"useful": v.advised, "sufficient": f.sufficient,
               _key(args, "expected_gain"): round(f.gain_c * k, 2),
               _key(args, "expected_gain_low"): round(f.gain_low_c * k, 2),
               _key(args, "expected_gain_high"): round(f.gain_high_c * k, 2),
               "inversion_class": windmachine.classify_inversion(inv), "reasons": reasons,
               "why_not": None if v.why_not is None else v.why_not.value, "alternatives": alternatives,
               "gain_note": "30-50 % of the inversion: an engineering band within the one measured case (McMeeking "
                            "et al. 2002: 1-2 °C from a 3.5 °C inversion), not a published rule; sufficiency uses 30 % "
                            "and is judged against the critical temperature plus --margin"}
        head = ("wind machines should help" + ("" if f.sufficient else ", but not enough on their own")
                if v.advised else "wind machines will not help much")
        text = head + "\n  " + "\n  ".join(reasons + alternatives)
    else:  # pragma: no cover - argparse restricts choices
        raise UsageError(f"unknown calc {args.calc}")
    doc["cautions"] = list(CAUTIONS)
    if args.json:
        _out_json(doc)
    else:
        print(text)
        print("Cautions: " + " ".join(CAUTIONS))
    return 0




def register(sub, common) -> None:
    calc = sub.add_parser("calc", help="field calculator: wet bulb, dew point, sprinkler start, critical temperatures, ...")
    csub = calc.add_subparsers(dest="calc", metavar="WHAT")
    listing: list[tuple[str, str]] = []

    def add(name: str, **kw):  # every calculator, also listed by `frostwatch calc` alone
        listing.append((name, kw["help"].replace("%%", "%")))  # argparse help is a %-format
        return csub.add_parser(name, **kw)

    c = add("wet-bulb", parents=[common], help="wet-bulb (ice-bulb below 0 °C) temperature")
    c.add_argument("--air-temp", type=float, required=True, metavar="T")
    c.add_argument("--dew-point", type=float, required=True, metavar="TD")
    c.add_argument("--pressure", type=float, metavar="HPA", help="air pressure (default 1013.25 hPa)")
    c = add("dew-point", parents=[common], help="dew point and frost point from air temperature and RH")
    c.add_argument("--air-temp", type=float, required=True, metavar="T")
    c.add_argument("--humidity", type=float, required=True, metavar="RH", help="relative humidity, percent")
    c = add("sprinkler-start", parents=[common], help="air temperature at which sprinklers must already run")
    c.add_argument("--dew-point", type=float, required=True, metavar="TD")
    c.add_argument("--critical", type=float, required=True, metavar="TC", help="critical temperature (usually T10)")
    c.add_argument("--margin", type=float, default=0.0, metavar="DT", help="safety margin added to TC")
    c.add_argument("--pressure", type=float, metavar="HPA")
    c = add("critical", parents=[common], help="10 %% and 90 %% kill temperatures of a crop at a bud stage")
    c.add_argument("--crop", required=True)
    c.add_argument("--stage", required=True)
    c = add("sprinkler-rate", parents=[common],
                        help="over-tree application rate tonight needs: the heat budget of the iced plant")
    c.add_argument("--min-temp", type=float, required=True, metavar="T", help="expected minimum air temperature")
    c.add_argument("--wind", type=float, required=True, metavar="M_S", help="wind speed, m/s (measure it: unknown is not calm)")
    c.add_argument("--dew-point", type=float, metavar="TD", help="dew point (default: 5 degrees below --min-temp)")
    c.add_argument("--cloud", type=float, default=0.0, metavar="FRAC", help="cloud fraction 0-1 (default 0, clear)")
    c.add_argument("--capacity", type=float, metavar="MM_H", help="your system's application rate, mm/h")
    c.add_argument("--area", type=float, metavar="HA", help="sprinkled area, ha (with --capacity: peak flow)")
    c.add_argument("--hours", type=float, metavar="H", help="running hours (with --capacity and --area: water volume)")
    c = add("wind-machine", parents=[common], help="will wind machines help tonight?")
    c.add_argument("--inversion", type=float, required=True, metavar="DT", help="tower (~10 m) minus crop-height temperature")
    c.add_argument("--wind", type=float, required=True, metavar="M_S", help="wind speed, m/s")
    c.add_argument("--min-temp", type=float, required=True, metavar="T", help="projected minimum at crop height")
    c.add_argument("--critical", type=float, required=True, metavar="TC", help="critical temperature (usually T10)")
    c.add_argument("--fog", action="store_true", help="supercooled fog is present")
    c.add_argument("--margin", type=float, default=2.0, metavar="DT",
                   help="safety margin above the critical temperature that fans must hold (default 2, common practice)")
    c.add_argument("--gain-fraction", type=float, default=0.4, metavar="FRAC",
                   help="fraction of the inversion recovered at crop height (engineering assumption, default 0.4)")
    calc.set_defaults(func=cmd_calc, calculators=tuple(listing))
