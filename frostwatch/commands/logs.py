"""Commands over sensor logs: `replay`, `backtest`, `export` (and the log reading `demo` shares).

The replay itself is frostwatch.replay (a library, like the pipeline it drives); `demo` is
frostwatch.commands.demo.
"""

from __future__ import annotations

import datetime as dt
import sys
from pathlib import Path

from frostwatch.commands.common import (
    _fahrenheit,
    _iso,
    _load,
    _out_json,
    _parse_iso,
    _progress,
)


def _read_log_columns(args, cfg, store=None, progress=None):
    """Read every log given (vectorised, frostwatch.ingest.bulk; every bad row still named
    FILE:LINE on stderr); store the readings in large transactions and the rejections if a store
    is given. Returns (columns, rejections, stored, duplicates, what was stored)."""
    from frostwatch.errors import IngestError
    from frostwatch.ingest.bulk import concat, read_log_columns

    known = {s.id for s in cfg.stations}
    parts, rejections = [], []
    for log in args.logs:
        c, rej = read_log_columns(log, known)
        parts.append(c)
        rejections += rej
    cols = concat(parts)
    for rej in rejections:
        print(f"{rej.where()}: {rej.reason}", file=sys.stderr)
    if not len(cols):
        raise IngestError(f"{', '.join(args.logs)}: no usable row ({len(rejections)} rejected)")
    if args.strict and rejections:
        raise IngestError(f"{len(rejections)} bad row(s) and --strict was given; nothing was stored")
    stored = dup = 0
    done = None
    if store is not None:
        from frostwatch.store.bulk import add_reading_columns

        now = dt.datetime.now(dt.UTC)
        done = add_reading_columns(store, cols, ",".join(Path(x).name for x in args.logs), progress)
        stored, dup, conflicts = done.stored, done.duplicates, done.conflicts
        for c in conflicts:
            print(f"{c.where()}: {c.reason}", file=sys.stderr)
        store.add_rejections(rejections + conflicts, now)
        rejections += conflicts
    return cols, rejections, stored, dup, done


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


def _first_rows(cols):
    """The first row of each (time, station, quantity) in file order: the one the store keeps."""
    import numpy as np

    n_st, n_q = max(1, len(cols.stations)), max(1, len(cols.quantities))
    keys = (cols.time_ms.astype(np.int64) * n_st + cols.station) * n_q + cols.quantity
    _, first = np.unique(keys, return_index=True)
    mask = np.zeros(len(cols), dtype=bool)
    mask[first] = True
    return mask


def cmd_replay(args) -> int:
    from frostwatch.display import Display
    from frostwatch.night import night_of_date
    from frostwatch.replay import replay_series
    from frostwatch.reports.summary import block_night, left_out_of, no_minimum_words
    from frostwatch.store import Store, from_ms
    from frostwatch.store import decisions as stored_decisions
    from frostwatch.store.bulk import series_of_columns

    cfg = _load(args)
    store = Store.open(cfg.storage.path)
    try:
        cols, rejections, stored, dup, done = _read_log_columns(args, cfg, store, _progress("store", "readings"))
        if done.store_had_readings:  # other readings in the span: the pipeline sees what the store holds
            series = store.readings_window(from_ms(int(cols.time_ms.min())), from_ms(int(cols.time_ms.max())))
        else:
            series = series_of_columns(cols, done.kept)
        n_read = len(cols)
        del cols, done
        d = Display("degF" if _fahrenheit(args) else cfg.site.display_unit, cfg.site.tz)
        res = replay_series(cfg, store, series, _progress("replay"), keep_projections=args.json, display=d,
                            jobs=getattr(args, "jobs", None))
        alerts = res.alerts
        nights = res.nights
        summaries = []
        for nd in nights:
            night = night_of_date(cfg.site.latitude, cfg.site.longitude, cfg.site.tz, nd)
            for b in cfg.blocks:
                # a station the night's decisions did not trust gives no minimum (forecast.crosscheck)
                left = left_out_of(stored_decisions.changes_between(
                    store, night.sunset_utc - dt.timedelta(hours=1), night.sunrise_utc + dt.timedelta(hours=6), b.id))
                bn = block_night(b, cfg, series, night, left_out=left)
                summaries.append({"night": nd.isoformat(), "block": b.id, "station": bn.station,
                                  "left_out": list(bn.left_out), "why_no_minimum": None if bn.min_c is not None
                                  else no_minimum_words(bn),
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
                            "advice": a.advice, "message": a.message, "short": res.shorts.get(a.key, ""), "key": a.key,
                            "resolves": a.resolves} for a in alerts],
                "projections": res.projections,
                "decisions": res.decisions,
                "nights": summaries,
                "readings": {"read": n_read, "stored": stored, "duplicates": dup, "rejected": len(rejections)},
                "reports": reports,
            })
            return 0
        print(f"{cfg.site.name}: {n_read} readings read, {stored} stored, {dup} duplicates, {len(rejections)} rejected "
              f"(store {cfg.storage.path})")
        _print_alerts(alerts, d, res.shorts)
        _print_summaries(summaries, d)
        for r in reports:
            print(f"night report: {r}")
        return 0
    finally:
        store.close()


def _print_alerts(alerts, d, shorts=None) -> None:
    print("\nAlerts:")
    if not alerts:
        print("  none")
    for a in alerts:
        head, *rest = a.message.splitlines()
        print(f"  {d.datetime(a.time_utc)}  {head}")
        if shorts and shorts.get(a.key):
            print(f"      Text message: {shorts[a.key]}")
        for line in rest:
            if line.startswith("Cautions:"):
                continue
            print(f"      {line}")
    if alerts:
        print("  Cautions: " + alerts[-1].message.splitlines()[-1].removeprefix("Cautions: "))


def _print_summaries(summaries, d) -> None:
    print("\nNight summary per block:")
    for s in summaries:
        if s["min_c"] is None:  # never "minimum n/a at n/a": say what is missing
            print(f"  {s['night']}  {s['block']:<10} {s['why_no_minimum']}")
            continue
        at = f" at {d.datetime(dt.datetime.fromisoformat(s['min_at'].replace('Z', '+00:00')))}" if s["min_at"] else ""
        print(f"  {s['night']}  {s['block']:<10} minimum {d.temp(s['min_c'])}{at} ({s['station']}); "
              f"{s['minutes_below_t10']:.0f} min at or below T10 {d.temp(s['kill_10pct_c'])}")


def cmd_backtest(args) -> int:
    from frostwatch import backtest
    from frostwatch.ingest.bulk import series_of_columns

    cfg = _load(args)
    cols, _, _, _, _ = _read_log_columns(args, cfg, None)
    series = series_of_columns(cols, _first_rows(cols), key_order="file")
    del cols
    rows = backtest.backtest(cfg, series, progress=_progress("backtest"))
    summary = backtest.backtest_summary(rows)
    if args.json:
        _out_json({"nights": rows, "summary": summary})
        return 0
    # "at dusk" is what the forecast saw at its issue time; "clear calm" is what the night then did
    # (the summary's radiation nights), so a windy dusk can still end a clear calm night
    print(f"{'night':<11} {'block':<10} {'station':<12} {'predicted':>9} {'observed':>9} {'error':>6}  "
          f"{'at dusk':<9} clear calm")
    for r in rows:
        err = r["predicted_min_c"] - r["observed_min_c"]
        ran = "protection ran: not scored" if r.get("protected") else ""
        print(f"{r['night']:<11} {r['block']:<10} {r['station']:<12} {r['predicted_min_c']:>9.1f} {r['observed_min_c']:>9.1f} "
              f"{err:>+6.1f}  {r['regime']:<9} {'yes' if r.get('radiation_night') else '':<10} {ran}".rstrip())
    if not rows:
        print("no night in the log is covered from sunset + 2 h to an hour after sunrise; nothing to score")
        return 0
    left = summary.get("protected_forecasts", 0)
    if left:
        print(f"\n{left} forecast(s) left out: sprinklers or wind machines ran, so the block's sensors read "
              f"the protected air, not the night that was forecast.")
    if not summary.get("forecasts"):
        print("no forecast of an unprotected block to score")
        return 0
    print(f"\n{summary['nights']} nights, {summary['forecasts']} forecasts scored: MAE {summary['mae_c']} °C, "
          f"bias {summary['bias_c']} °C, RMSE {summary['rmse_c']} °C (dusk forecast at sunset + 2 h, walk-forward)")
    rad = summary.get("radiation_nights") or {}
    if rad.get("forecasts"):
        print(f"clear calm nights (mean wind < 2 m/s, cloud <= 0.3 over the night; 'yes' above): {rad['forecasts']} forecasts, "
              f"MAE {rad['mae_c']} °C, bias {rad['bias_c']} °C, RMSE {rad['rmse_c']} °C")
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


def _jobs(text: str) -> int:
    import argparse

    try:
        n = int(text)
    except ValueError:
        n = 0
    if n < 1:
        raise argparse.ArgumentTypeError(f"--jobs wants a whole number of processes, 1 or more (got {text!r})")
    return n


def register(sub, common) -> None:
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
            s.add_argument("--jobs", type=_jobs, metavar="N",
                           help="processes that share a season's nights (default: the machine's cores, up to 4; "
                                "1 to leave the other cores alone); the result is the same")
        s.set_defaults(func=func)

    s = sub.add_parser("export", parents=[common], help="print stored readings as a sensor log")
    s.add_argument("--start", metavar="ISO", help="first instant (with a UTC offset)")
    s.add_argument("--end", metavar="ISO", help="last instant (with a UTC offset)")
    s.set_defaults(func=cmd_export)

