"""The `frostwatch` command line: parse arguments, call the library, print, map errors to exit codes.

Exit status: 0 success; 2 bad usage, bad config or bad input (one clear sentence on stderr);
1 any other failure (a traceback means a bug).
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import sys
from pathlib import Path

from frostwatch import __version__
from frostwatch.errors import FrostwatchError, UsageError


def _out_json(doc: object) -> None:
    sys.stdout.write(json.dumps(doc, indent=2, default=str) + "\n")


def _fahrenheit(args) -> bool:
    return bool(getattr(args, "fahrenheit", False))


def _temp_in(args, value: float) -> float:
    """A temperature given on the command line, in degC."""
    return (value - 32.0) * 5.0 / 9.0 if _fahrenheit(args) else value


def _temp_out(args, value_c: float | None) -> float | None:
    if value_c is None:
        return None
    return round(value_c * 9.0 / 5.0 + 32.0, 2) if _fahrenheit(args) else round(value_c, 2)


def _key(args, base: str) -> str:
    return f"{base}_f" if _fahrenheit(args) else f"{base}_c"


def _unit(args) -> str:
    return "°F" if _fahrenheit(args) else "°C"


def _parse_iso(text: str, what: str) -> dt.datetime:
    from frostwatch.ingest.parse import BadValue, parse_time_utc

    try:
        return parse_time_utc(text)
    except BadValue as exc:
        raise UsageError(f"{what}: {exc}") from None


def _load(args):
    from frostwatch.config import load_config

    if not args.config:
        raise UsageError("--config PATH is required (write an example with `frostwatch init PATH`)")
    return load_config(args.config)


# ---- calc ------------------------------------------------------------------------------------


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


# ---- config ----------------------------------------------------------------------------------


def cmd_init(args) -> int:
    from importlib import resources

    path = Path(args.path)
    if path.exists() and not args.force:
        raise UsageError(f"{path}: already exists; choose another path or pass --force to overwrite")
    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    print(f"wrote an example config for an invented farm to {path}; edit it, then run `frostwatch check-config --config {path}`")
    return 0


def cmd_check_config(args) -> int:
    from frostwatch.config import effective_settings

    cfg = _load(args)
    eff = effective_settings(cfg)
    if args.json:
        _out_json(eff)
        return 0
    print(f"{args.config}: ok ({len(cfg.blocks)} blocks, {len(cfg.stations)} stations)")
    for b in cfg.blocks:
        print(f"  block {b.id}: {b.crop}, {b.stage}: T10 {b.kill_10pct_c:.1f} °C, T90 {b.kill_90pct_c:.1f} °C "
              f"({b.critical_source}); protection {b.protection}, margin {b.margin_c:g} °C, mobilisation {b.mobilisation_min:g} min")
    print("effective settings (secrets masked):")
    print(json.dumps(eff, indent=2, default=str))
    return 0


# ---- logs: replay, backtest, export -----------------------------------------------------------


def _read_logs(args, cfg, store=None):
    """Read every log given; report bad rows on stderr; store readings and rejections if a store is given."""
    from frostwatch.errors import IngestError
    from frostwatch.ingest.csvlog import read_sensor_log

    known = {s.id for s in cfg.stations}
    readings, rejections = [], []
    for log in args.logs:
        r, rej = read_sensor_log(log, known)
        readings += r
        rejections += rej
    for rej in rejections:
        print(f"{rej.where()}: {rej.reason}", file=sys.stderr)
    if not readings:
        raise IngestError(f"{', '.join(args.logs)}: no usable row ({len(rejections)} rejected)")
    if args.strict and rejections:
        raise IngestError(f"{len(rejections)} bad row(s) and --strict was given; nothing was stored")
    stored = dup = 0
    if store is not None:
        now = dt.datetime.now(dt.UTC)
        stored, dup, conflicts = store.add_readings(readings, source=",".join(Path(x).name for x in args.logs))
        for c in conflicts:
            print(f"{c.where()}: {c.reason}", file=sys.stderr)
        store.add_rejections(rejections + conflicts, now)
        rejections += conflicts
    return readings, rejections, stored, dup


def _series_from_readings(readings):
    import numpy as np

    groups: dict = {}
    for r in readings:
        groups.setdefault((r.station, r.quantity), {})[r.time_utc.timestamp()] = r.value  # first-kept dedupe below
    out = {}
    for key, pts in groups.items():
        t = np.array(sorted(pts), dtype=float)
        out[key] = (t, np.array([pts[x] for x in t], dtype=float))
    return out


def _progress(label: str):
    if not sys.stderr.isatty():
        return None

    def show(k: int, n: int) -> None:
        sys.stderr.write(f"\r{label}: night {k}/{n}")
        if k == n:
            sys.stderr.write("\n")
        sys.stderr.flush()

    return show


def replay_into_store(cfg, store, readings, progress=None):
    """Run the pipeline over the stored readings of the logs' span; store projections and alerts."""
    from frostwatch import pipeline

    first = min(r.time_utc for r in readings)
    last = max(r.time_utc for r in readings)
    series = store.readings_window(first, last)
    evals = pipeline.run_replay(cfg, series, progress=progress)
    store.add_projections(p for ev in evals for p in ev.projections)
    for ev in evals:
        for a in ev.alerts:
            store.add_alert(a)
    return evals, series


def _iso(t):
    return None if t is None else t.isoformat().replace("+00:00", "Z")


def cmd_replay(args) -> int:
    from frostwatch import pipeline
    from frostwatch.display import Display
    from frostwatch.night import night_of_date
    from frostwatch.reports.summary import block_night
    from frostwatch.store import Store

    cfg = _load(args)
    store = Store.open(cfg.storage.path)
    try:
        readings, rejections, stored, dup = _read_logs(args, cfg, store)
        evals, series = replay_into_store(cfg, store, readings, _progress("replay"))
        d = Display("degF" if _fahrenheit(args) else cfg.site.display_unit, cfg.site.tz)
        alerts = [a for ev in evals for a in ev.alerts]
        nights = sorted({ev.night.date for ev in evals})
        summaries = []
        for nd in nights:
            night = night_of_date(cfg.site.latitude, cfg.site.longitude, cfg.site.tz, nd)
            for b in cfg.blocks:
                bn = block_night(b, cfg, series, night)
                summaries.append({"night": nd.isoformat(), "block": b.id, "station": bn.station,
                                  "min_c": None if bn.min_c is None else round(bn.min_c, 2), "min_at": _iso(bn.min_at_utc),
                                  "minutes_below_t10": bn.minutes_below_t10, "minutes_below_t90": bn.minutes_below_t90,
                                  "kill_10pct_c": b.kill_10pct_c})
        reports = []
        if not args.no_report:
            from frostwatch.reports.night import write_night_report

            out_dir = Path(args.report_dir) if args.report_dir else cfg.storage.path.parent / "reports"
            for nd in nights:
                reports.append(str(write_night_report(cfg, store, nd, out_dir)))
        if args.json:
            _out_json({
                "alerts": [{"time": _iso(a.time_utc), "block": a.block, "level": a.level, "rank": a.rank,
                            "advice": a.advice, "message": a.message, "key": a.key, "resolves": a.resolves} for a in alerts],
                "projections": [pipeline.with_time(p) for ev in evals for p in ev.projections
                                if ev.night.contains(ev.time_utc, 0.0, 0.0)],
                "nights": summaries,
                "readings": {"read": len(readings), "stored": stored, "duplicates": dup, "rejected": len(rejections)},
                "reports": reports,
            })
            return 0
        print(f"{cfg.site.name}: {len(readings)} readings read, {stored} stored, {dup} duplicates, {len(rejections)} rejected "
              f"(store {cfg.storage.path})")
        _print_alerts(alerts, d)
        _print_summaries(summaries, d)
        for r in reports:
            print(f"night report: {r}")
        return 0
    finally:
        store.close()


def _print_alerts(alerts, d) -> None:
    print("\nAlerts:")
    if not alerts:
        print("  none")
    for a in alerts:
        head, *rest = a.message.splitlines()
        print(f"  {d.datetime(a.time_utc)}  [{a.level} rank {a.rank}]  {head}")
        for line in rest:
            if line.startswith("Cautions:"):
                continue
            print(f"      {line}")
    if alerts:
        print("  Cautions: " + alerts[-1].message.splitlines()[-1].removeprefix("Cautions: "))


def _print_summaries(summaries, d) -> None:
    print("\nNight summary per block:")
    for s in summaries:
        at = d.datetime(dt.datetime.fromisoformat(s["min_at"].replace("Z", "+00:00"))) if s["min_at"] else "n/a"
        print(f"  {s['night']}  {s['block']:<10} minimum {d.temp(s['min_c'])} at {at} ({s['station']}); "
              f"{s['minutes_below_t10']:.0f} min at or below T10 {d.temp(s['kill_10pct_c'])}")


def cmd_backtest(args) -> int:
    from frostwatch import pipeline

    cfg = _load(args)
    readings, rejections, _, _ = _read_logs(args, cfg, None)
    series = _series_from_readings(readings)
    rows = pipeline.backtest(cfg, series, progress=_progress("backtest"))
    summary = pipeline.backtest_summary(rows)
    if args.json:
        _out_json({"nights": rows, "summary": summary})
        return 0
    print(f"{'night':<11} {'block':<10} {'station':<12} {'predicted':>9} {'observed':>9} {'error':>6}  regime")
    for r in rows:
        err = r["predicted_min_c"] - r["observed_min_c"]
        print(f"{r['night']:<11} {r['block']:<10} {r['station']:<12} {r['predicted_min_c']:>9.1f} {r['observed_min_c']:>9.1f} "
              f"{err:>+6.1f}  {r['regime']}")
    print(f"\n{summary['nights']} nights, {summary.get('forecasts', 0)} forecasts: MAE {summary['mae_c']} °C, "
          f"bias {summary['bias_c']} °C, RMSE {summary['rmse_c']} °C (dusk forecast at sunset + 2 h, walk-forward)")
    return 0


def cmd_export(args) -> int:
    import csv

    from frostwatch.store import Store, from_ms
    from frostwatch.units import CANONICAL_UNIT

    cfg = _load(args)
    start = _parse_iso(args.start, "--start") if args.start else None
    end = _parse_iso(args.end, "--end") if args.end else None
    store = Store.open(cfg.storage.path)
    try:
        w = csv.writer(sys.stdout, lineterminator="\n")
        w.writerow(["time", "station", "quantity", "value", "unit"])
        for ms, station, quantity, value in store.iter_readings(start, end):
            w.writerow([_iso(from_ms(ms)), station, quantity, f"{value:.6g}", CANONICAL_UNIT.get(quantity, "")])
    finally:
        store.close()
    return 0


def cmd_report(args) -> int:
    from frostwatch.reports.night import write_night_report
    from frostwatch.store import Store

    cfg = _load(args)
    try:
        night = dt.date.fromisoformat(args.night)
    except ValueError:
        raise UsageError(f"--night {args.night!r}: expected a date YYYY-MM-DD (the local date of the evening)") from None
    store = Store.open(cfg.storage.path)
    try:
        page = write_night_report(cfg, store, night, Path(args.out))
    finally:
        store.close()
    print(f"night report: {page}")
    return 0


def cmd_demo(args) -> int:
    import shutil
    import tempfile
    from importlib import resources

    from frostwatch.config import load_config

    src = resources.files("frostwatch.sample_logs")
    work = Path(args.out) if args.out else Path(tempfile.mkdtemp(prefix="frostwatch-demo-"))
    work.mkdir(parents=True, exist_ok=True)
    cfg_path = work / "demo-farm.toml"
    text = src.joinpath("demo-farm.toml").read_text(encoding="utf-8")
    if _fahrenheit(args):
        text = text.replace('display_unit = "degC"', 'display_unit = "degF"')
    cfg_path.write_text(text, encoding="utf-8")
    db = work / "frostwatch.db"
    if db.exists():
        db.unlink()
    logs = []
    for name in ("2027-04-14-radiation-frost.csv", "2027-04-15-windy-advective.csv", "2027-04-16-cloudy-safe.csv"):
        dst = work / name
        with src.joinpath(name).open("rb") as f, dst.open("wb") as g:
            shutil.copyfileobj(f, g)
        logs.append(str(dst))
    cfg = load_config(cfg_path)
    print(f"frostwatch demo: {cfg.site.name} (an invented farm), three invented nights in April 2027")
    print(f"working folder: {work}\n")
    ns = argparse.Namespace(config=str(cfg_path), logs=logs, strict=False, json=False, fahrenheit=False,
                            no_report=False, report_dir=str(work / "reports"))
    rc = cmd_replay(ns)
    print(f"\nTry next: frostwatch backtest {' '.join(logs)} --config {cfg_path}")
    return rc


def cmd_run(args) -> int:
    from frostwatch import daemon

    cfg = _load(args)
    return daemon.run(cfg)


# ---- the parser --------------------------------------------------------------------------------


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="frostwatch",
        description="Frost-protection advice for orchards and vineyards. It advises; the grower decides.",
    )
    p.add_argument("--version", action="version", version=f"frostwatch {__version__}")
    common = argparse.ArgumentParser(add_help=False)
    common.add_argument("--config", metavar="PATH", help="the site's config file (TOML)")
    common.add_argument("--json", action="store_true", help="print one JSON document on stdout and nothing else there")
    common.add_argument("--fahrenheit", action="store_true", help="temperatures in and out in °F (JSON keys then end in _f)")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")

    s = sub.add_parser("demo", parents=[common], help="replay the bundled invented farm's nights (no config, broker or network)")
    s.add_argument("--out", metavar="DIR", help="working folder (default: a new temporary folder)")
    s.set_defaults(func=cmd_demo)

    s = sub.add_parser("init", help="write a commented example config for an invented farm")
    s.add_argument("path", metavar="PATH")
    s.add_argument("--force", action="store_true", help="overwrite an existing file")
    s.set_defaults(func=cmd_init)

    s = sub.add_parser("check-config", parents=[common], help="check a config and show the effective settings (secrets masked)")
    s.set_defaults(func=cmd_check_config)

    for name, helptext, func in (
        ("replay", "run the whole advisory pipeline over sensor logs as if live, storing the readings", cmd_replay),
        ("backtest", "walk-forward test of the dusk forecast over sensor logs", cmd_backtest),
    ):
        s = sub.add_parser(name, parents=[common], help=helptext)
        s.add_argument("logs", nargs="+", metavar="LOG.csv", help="sensor logs (DESIGN.md 1.1 format)")
        s.add_argument("--strict", action="store_true", help="exit 2 if any row is bad (store nothing)")
        if name == "replay":
            s.add_argument("--report-dir", metavar="DIR", help="where night reports go (default: reports/ beside the store)")
            s.add_argument("--no-report", action="store_true", help="do not write night reports")
        s.set_defaults(func=func)

    s = sub.add_parser("export", parents=[common], help="print stored readings as a sensor log")
    s.add_argument("--start", metavar="ISO", help="first instant (with a UTC offset)")
    s.add_argument("--end", metavar="ISO", help="last instant (with a UTC offset)")
    s.set_defaults(func=cmd_export)

    s = sub.add_parser("report", parents=[common], help="write a night's log for the farm manager (HTML, PNG, CSV)")
    s.add_argument("--night", required=True, metavar="YYYY-MM-DD", help="the local date of the evening")
    s.add_argument("--out", required=True, metavar="DIR")
    s.set_defaults(func=cmd_report)

    s = sub.add_parser("run", parents=[common], help="the daemon: MQTT ingest, scheduled evaluations, alerts")
    s.set_defaults(func=cmd_run)

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
    return p


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.func(args) or 0)
    except UsageError as exc:
        print(f"frostwatch: {exc}", file=sys.stderr)
        return 2
    except FrostwatchError as exc:
        print(f"frostwatch: {exc}", file=sys.stderr)
        return 1
    except BrokenPipeError:
        return 0
    except KeyboardInterrupt:
        return 130


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
