"""`frostwatch stage`: record a block's bud stage as the buds develop, or suggest one.

`frostwatch stage --config C --block ID --stage STAGE` checks the stage against the block's crop
table, sets that block's `stage` in the TOML file with tomlkit (comments, layout and every other
line kept byte for byte), and records a `stage_change` event in the store so the night log
shows it. A running daemon rereads the changed file before its next evaluation and uses the new
stage's T10 and T90 from then on (`frostwatch.reload`); SIGHUP makes it reload and evaluate at once. `frostwatch stage --config C --suggest` prints, per block, the stage that growing-degree
hours since `biofix_date` suggest: a suggestion the grower confirms, never applied.

Raises UsageError (exit 2) for an unknown block or stage (listing the known ones) and for a config
whose stage line cannot be found; the file is then left untouched.
"""

from __future__ import annotations

import datetime as dt
import os
from pathlib import Path

from frostwatch.commands.common import _iso, _load, _out_json
from frostwatch.errors import UsageError


def rewrite_stage(text: str, block_id: str, new_stage: str) -> str:
    """The config text with block `block_id`'s stage set to `new_stage`; all else unchanged.

    tomlkit finds the block and writes the new value in the old one's quote style; the document
    comes back as it was read (comments, blank lines, spacing, line endings, table order). Where
    tomlkit would regroup the file (arrays of tables interleaved with others: it writes each
    array together), only the changed line is put into the original text, at the one place
    where it gives the same document with just this stage changed.

    Raises UsageError when the block or its `stage` key is not found in the file, or when the
    file cannot be edited that way: edit it by hand then.
    """
    import tomlkit
    from tomlkit.exceptions import TOMLKitError
    from tomlkit.items import String, StringType

    try:
        doc = tomlkit.parse(text)
    except TOMLKitError as exc:
        raise UsageError(f"the config cannot be read for editing ({exc}); edit the stage by hand") from None
    blocks = doc.get("blocks")
    found = [i for i, b in enumerate(blocks if isinstance(blocks, list) else [])
             if hasattr(b, "get") and b.get("id") == block_id]
    if len(found) != 1:
        raise UsageError(f"blocks.{block_id}: its [[blocks]] table was not found in the file; edit the stage by hand")
    block = blocks[found[0]]
    old = block.get("stage")
    if not isinstance(old, String):
        raise UsageError(f"blocks.{block_id}: no `stage = \"...\"` line found in its [[blocks]] table; edit it by hand")
    as_read = tomlkit.dumps(doc)
    block["stage"] = tomlkit.string(new_stage, literal=old.type in (StringType.SLL, StringType.MLL))
    edited = tomlkit.dumps(doc)
    if as_read == text:
        return edited
    return _put_changed_line(text, as_read, edited, found[0], new_stage, block_id)


def _put_changed_line(text: str, as_read: str, edited: str, index: int, new_stage: str, block_id: str) -> str:
    """The one line tomlkit changed, put into the original text where it sets this block's stage."""
    import tomllib

    before, after = as_read.splitlines(keepends=True), edited.splitlines(keepends=True)
    changed = [(a, b) for a, b in zip(before, after, strict=False) if a != b]
    expected = tomllib.loads(text)
    expected["blocks"][index]["stage"] = new_stage
    lines = text.splitlines(keepends=True)
    if len(before) == len(after) and len(changed) == 1:
        old_line, new_line = changed[0]
        for i, line in enumerate(lines):
            if line == old_line:
                candidate = "".join(lines[:i] + [new_line] + lines[i + 1:])
                if tomllib.loads(candidate) == expected:
                    return candidate
    raise UsageError(f"blocks.{block_id}: the stage line could not be changed alone in this file's layout; "
                     "edit it by hand")


def _write_atomic(path: Path, text: str) -> None:
    """Write beside the file, fsync, then rename over it: a crash leaves the old or the new file."""
    import tempfile

    mode = path.stat().st_mode & 0o777
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as f:
            f.write(text)
            f.flush()
            os.fsync(f.fileno())
        os.chmod(tmp, mode)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def cmd_stage(args) -> int:
    from frostwatch.config import config_from_dict
    from frostwatch.physics import crops
    from frostwatch.store.db import Store

    cfg = _load(args)
    if args.suggest:
        return _suggest(cfg, args)
    if not args.block or not args.stage:
        raise UsageError("give --block ID and --stage STAGE to record a stage, or --suggest for suggestions")
    try:
        block = cfg.block(args.block)
    except KeyError:
        raise UsageError(f"--block {args.block!r}: not a block of {cfg.path}; "
                         f"known blocks: {', '.join(b.id for b in cfg.blocks)}") from None
    try:
        ct = crops.critical_temps(block.crop, args.stage, hardiness_offset_c=block.hardiness_offset_c)
    except ValueError as exc:
        raise UsageError(f"--stage {args.stage!r}: {exc}") from None
    old, new = block.stage, ct.stage
    path = Path(cfg.path)
    changed = crops.normalise_name(old) != crops.normalise_name(new)
    if changed:
        import tomllib

        text = path.read_text(encoding="utf-8")
        new_text = rewrite_stage(text, block.id, new)
        config_from_dict(tomllib.loads(new_text), path)  # never write a config that would not load
        _write_atomic(path, new_text)
        now = dt.datetime.now(dt.UTC)
        with Store.open(cfg.storage.path) as store:
            store.add_event(now, "stage_change", block.id, f"{old} -> {new}")
    manual = block.critical_source.startswith("set in the config")
    doc = {"block": block.id, "crop": ct.crop, "old_stage": old, "new_stage": new, "changed": changed,
           "kill_10pct_c": round(block.kill_10pct_c if manual else ct.kill_10pct_c, 2),
           "kill_90pct_c": round(block.kill_90pct_c if manual else ct.kill_90pct_c, 2),
           "manual_override": manual, "source": block.critical_source if manual else ct.source,
           "config": str(path)}
    if args.json:
        _out_json(doc)
        return 0
    if not changed:
        print(f"{block.id}: already at {new!r}; nothing changed")
    else:
        print(f"{block.id}: stage {old!r} -> {new!r} written to {path} and recorded in the night log")
    from frostwatch.display import Display

    d = Display(cfg.site.display_unit, cfg.site.tz)
    print(f"  T10 {d.temp(doc['kill_10pct_c'])}, T90 {d.temp(doc['kill_90pct_c'])} ({doc['source']})")
    if manual:
        print("  note: this block sets kill_10pct_c/kill_90pct_c by hand; that override still applies")
    print("  a running daemon uses the new stage from its next evaluation (it rereads the changed file); "
          "`systemctl reload frostwatch` makes it evaluate at once")
    return 0


def _suggest(cfg, args) -> int:
    import numpy as np

    from frostwatch.physics import crops
    from frostwatch.store.db import Store

    now = dt.datetime.now(dt.UTC)
    out = []
    store = Store.open(cfg.storage.path) if cfg.storage.path.exists() else None
    try:
        for b in cfg.blocks:
            row = {"block": b.id, "crop": b.crop, "stage": b.stage, "biofix_date": b.biofix_date,
                   "gdh_since_biofix": None, "hours_with_readings": 0, "hours_since_biofix": 0,
                   "suggested_stage": None, "note": ""}
            out.append(row)
            if b.biofix_date is None:
                row["note"] = "no biofix_date set for this block (the date rest ended, YYYY-MM-DD)"
                continue
            start = dt.datetime.combine(dt.date.fromisoformat(b.biofix_date), dt.time(0), cfg.site.tz)
            row["hours_since_biofix"] = max(0, int((now - start).total_seconds() // 3600))
            crop_stations = [s.id for s in cfg.stations_of(b.id, "crop")]
            series = store.readings_window(start, now, crop_stations) if store else {}
            ts = [series[(s, "air_temperature")] for s in crop_stations if (s, "air_temperature") in series]
            if not ts:
                row["note"] = "no stored crop-height air temperatures since the biofix date"
                continue
            t = np.concatenate([x[0] for x in ts])
            v = np.concatenate([x[1] for x in ts])
            hour = np.floor(t / 3600.0).astype(np.int64)
            uniq, inv = np.unique(hour, return_inverse=True)
            hourly = np.bincount(inv, weights=v) / np.bincount(inv)  # mean of the block's sensors per hour
            gdh = crops.growing_degree_hours(hourly, 1.0)
            row["gdh_since_biofix"] = round(gdh, 0)
            row["hours_with_readings"] = int(len(uniq))
            row["suggested_stage"] = crops.suggest_stage(b.crop, gdh)
            if row["suggested_stage"] is None:
                row["note"] = ("no stage model for this crop (only apple has thresholds)" if crops.suggest_stage(b.crop, 1e9)
                               is None else "not yet at the first stage of the model")
            else:
                row["note"] = ("approximate thresholds from memory; hours without readings count zero, so the "
                               "suggestion lags when readings are missing")
    finally:
        if store:
            store.close()
    if args.json:
        _out_json({"suggestions": out, "generated_at": _iso(now),
                   "note": "suggestions only: look at the buds and confirm with `frostwatch stage --block ID --stage STAGE`"})
        return 0
    print("Stage suggestions from growing-degree hours since each block's biofix date (ASYMCUR, Anderson et al. 1986).")
    print("These are SUGGESTIONS: look at the buds, then confirm with `frostwatch stage --config C --block ID --stage STAGE`.")
    for r in out:
        line = f"  {r['block']:<10} {r['crop']}, now {r['stage']!r}"
        if r["gdh_since_biofix"] is not None:
            line += (f"; {r['gdh_since_biofix']:.0f} degree-hours since {r['biofix_date']} "
                     f"({r['hours_with_readings']} of {r['hours_since_biofix']} hours have readings)")
        if r["suggested_stage"]:
            same = crops.normalise_name(r["suggested_stage"]) == crops.normalise_name(r["stage"])
            line += f"; suggests {r['suggested_stage']!r}" + (" (the same)" if same else "")
        print(line)
        if r["note"]:
            print(f"             {r['note']}")
    return 0


def register(sub, common) -> None:
    s = sub.add_parser("stage", parents=[common],
                       help="record a block's bud stage as the buds develop (or --suggest one from degree-hours)")
    s.add_argument("--block", metavar="ID", help="the block whose stage changed")
    s.add_argument("--stage", metavar="STAGE", help='the new stage, as the crop tables spell it ("full bloom")')
    s.add_argument("--suggest", action="store_true",
                   help="print the stage degree-hours since biofix_date suggest for each block; changes nothing")
    s.set_defaults(func=cmd_stage)
