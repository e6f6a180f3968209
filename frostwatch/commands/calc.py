"""`frostwatch calc`: the field calculator (wet bulb, dew point, sprinkler start, critical, ...)."""

from __future__ import annotations

from frostwatch.commands.common import (  # noqa: F401
    _fahrenheit,
    _iso,
    _key,
    _load,
    _out_json,
    _parse_iso,
    _progress,
    _temp_in,
    _temp_out,
    _unit,
)
from frostwatch.errors import UsageError  # noqa: F401


def cmd_calc(args) -> int:
    import math

    from frostwatch.physics import crops, humidity, radiation, sprinklers, windmachine

    def finite(v: float, what: str) -> float:
        if not math.isfinite(v):
            raise UsageError(what)
        return v

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
               "note": "sprinklers must be running before the air cools to this; stop only after sunrise once it is passed again and the ice is melting"}
        text = (f"start sprinklers before the air cools to {_temp_out(args, start)} {_unit(args)} "
                f"(wet bulb = {args.critical} at dew point {args.dew_point}); stop only after sunrise, once the air is above it "
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
        td = _temp_in(args, args.dew_point) if args.dew_point is not None else t - 5.0
        e = float(humidity.vapour_pressure_hpa_from_dew_point(min(td, t)))
        loss = -float(radiation.net_longwave_w_m2(t, e, cloud_frac=args.cloud))
        rate = float(sprinklers.required_application_rate_mm_h(max(0.0, loss), args.wind, t, 0.0))
        doc = {"required_rate_mm_h": round(rate, 2), "net_longwave_loss_w_m2": round(loss, 1),
               "note": "a lower bound from the heat budget; if more than about 12 % of the water evaporates, sprinkling cools"}
        text = (f"required application rate about {rate:.1f} mm/h (net longwave loss {loss:.0f} W/m2, wind {args.wind:g} m/s); "
                "a lower bound: too little water in dry or windy air does more harm than good")
        if args.capacity is not None:
            ok = sprinklers.capacity_adequate(rate, args.capacity)
            doc["capacity_mm_h"] = args.capacity
            doc["capacity_adequate"] = bool(ok)
            text += f"; your system's {args.capacity:g} mm/h is {'enough' if ok else 'NOT enough: consult your adviser before running it'}"
    elif args.calc == "wind-machine":
        inv = args.inversion * 5.0 / 9.0 if _fahrenheit(args) else args.inversion
        s = windmachine.wind_machine_suitability(inv, args.wind, _temp_in(args, args.min_temp), _temp_in(args, args.critical))
        k = 9.0 / 5.0 if _fahrenheit(args) else 1.0
        doc = {"useful": s.useful, "sufficient": s.sufficient, _key(args, "expected_gain"): round(s.expected_gain_c * k, 2),
               _key(args, "expected_gain_low"): round(s.expected_gain_low_c * k, 2),
               _key(args, "expected_gain_high"): round(s.expected_gain_high_c * k, 2), "reasons": list(s.reasons),
               "inversion_class": windmachine.classify_inversion(inv)}
        text = (f"wind machines {'useful' if s.useful else 'not useful'}: expected gain "
                f"{s.expected_gain_low_c * k:.1f}-{s.expected_gain_high_c * k:.1f} {_unit(args)} (engineering assumption: "
                "0.3-0.5 of the inversion)\n  " + "\n  ".join(s.reasons))
    else:  # pragma: no cover - argparse restricts choices
        raise UsageError(f"unknown calc {args.calc}")
    if args.json:
        _out_json(doc)
    else:
        print(text)
        print("Cautions: frostwatch advises, the grower decides; check with calibrated thermometers at bud height; "
              "local agronomic advice, codes and water rights prevail.")
    return 0




def register(sub, common) -> None:
    calc = sub.add_parser("calc", help="field calculator: wet bulb, dew point, sprinkler start, critical temperatures, ...")
    csub = calc.add_subparsers(dest="calc", required=True, metavar="WHAT")
    c = csub.add_parser("wet-bulb", parents=[common], help="wet-bulb (ice-bulb below 0 °C) temperature")
    c.add_argument("--air-temp", type=float, required=True, metavar="T")
    c.add_argument("--dew-point", type=float, required=True, metavar="TD")
    c.add_argument("--pressure", type=float, metavar="HPA", help="air pressure (default 1013.25 hPa)")
    c = csub.add_parser("dew-point", parents=[common], help="dew point and frost point from air temperature and RH")
    c.add_argument("--air-temp", type=float, required=True, metavar="T")
    c.add_argument("--humidity", type=float, required=True, metavar="RH", help="relative humidity, percent")
    c = csub.add_parser("sprinkler-start", parents=[common], help="air temperature at which sprinklers must already run")
    c.add_argument("--dew-point", type=float, required=True, metavar="TD")
    c.add_argument("--critical", type=float, required=True, metavar="TC", help="critical temperature (usually T10)")
    c.add_argument("--margin", type=float, default=0.0, metavar="DT", help="safety margin added to TC")
    c.add_argument("--pressure", type=float, metavar="HPA")
    c = csub.add_parser("critical", parents=[common], help="10 % and 90 % kill temperatures of a crop at a bud stage")
    c.add_argument("--crop", required=True)
    c.add_argument("--stage", required=True)
    c = csub.add_parser("sprinkler-rate", parents=[common], help="application rate tonight needs, from the heat budget")
    c.add_argument("--min-temp", type=float, required=True, metavar="T", help="expected minimum air temperature")
    c.add_argument("--wind", type=float, default=0.0, metavar="M_S", help="wind speed, m/s")
    c.add_argument("--dew-point", type=float, metavar="TD")
    c.add_argument("--cloud", type=float, default=0.0, metavar="FRAC", help="cloud fraction 0-1")
    c.add_argument("--capacity", type=float, metavar="MM_H", help="your system's application rate, mm/h")
    c = csub.add_parser("wind-machine", parents=[common], help="will wind machines help tonight?")
    c.add_argument("--inversion", type=float, required=True, metavar="DT", help="tower minus crop-height temperature")
    c.add_argument("--wind", type=float, required=True, metavar="M_S")
    c.add_argument("--min-temp", type=float, required=True, metavar="T", help="projected minimum")
    c.add_argument("--critical", type=float, required=True, metavar="TC")
    calc.set_defaults(func=cmd_calc)
