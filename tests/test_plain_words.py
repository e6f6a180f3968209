"""Words for 3 a.m.: every message, page and report of the demo and of the scenario nights is
scanned for internal words (no "nowcast", "regime", "walk-forward", "rank 4", method names of
papers, "band" as a bare word ...), for formatting a half-awake reader must not puzzle over ("-0.0",
"n/a", "x is above x", a steady trend called rising), and on a farm with `display_unit = "degF"`
(the demo's config, replayed) for any SI unit.

Texts scanned: each alert's message, advice and short form and each decision's advice from
`frostwatch replay --json`; the night reports (HTML text, the notes and sources section apart
from the source-name check); the status page rendered from the replayed store at every decision
change; the fleet page built from the same status documents through the fleet view's own model.
"""

from __future__ import annotations

import datetime as dt
import html.parser
import json
import re
from importlib import resources
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
SAMPLE = REPO / "sample_sensor_logs"
SCENARIOS = SAMPLE / "scenarios"
DEMO_NIGHTS = ["2027-04-14-radiation-frost.csv", "2027-04-15-windy-advective.csv", "2027-04-16-cloudy-safe.csv"]
SCENARIO_RUNS = [
    ("2027-04-20-sprinklers-sunrise.csv", "alder-flat-sprinklers.toml"),
    ("2027-04-20-sprinklers-sunrise.csv", "alder-flat-sprinklers-no-reference.toml"),
    ("2027-04-21-site-tower.csv", "alder-flat-towers.toml"),
    ("2027-04-22-drying-night.csv", "alder-flat-drying.toml"),
    ("2027-04-23-inversion-builds.csv", "alder-flat-inversion.toml"),
]

# internal words: never in what a grower reads (the report's notes may name sources, see below)
JARGON = [
    r"\bnowcast", r"\bregimes?\b", r"walk-?forward", r"\brank \d", r"\bcalibration\b", r"\bband\b", r"cold edge",
    r"\b80 %", r"from memory", r"engineering (assumption|band)", r"\bassumption\b", r"\bunverified\b",
    r"\bcells\b", r"radiation model", r"\bmethod\b", r"\bn/a\b", r"frost possible",
    r"\bspeaker\b", r"\bprior\b", r"\bregression\b", r"\bresidual", r"\bquantile",
]
# names of papers, methods and sources: in the report's notes and the README only
SOURCES = [
    r"\bFAO\b", r"FAO-FP", r"Table 7", r"ASHRAE", r"psychrometric", r"McMeeking", r"Parsons", r"Longstroth",
    r"Connell", r"UCCE", r"\bEvans\b", r"AQMD", r"\bet al\b", r"\bp\. \d", r"common practice", r"heat budget",
    r"\bReuter", r"\bBrunt\b", r"Brutsaert", r"Stefan", r"Kepner", r"UF/IFAS", r"\bWSU\b", r"\bMSU\b",
]
# formatting that must never be printed
FORMAT = [
    (r"(?<![\d.])-0(\.0+)?(?![\d.])\s*(°|C\b|F\b)", "-0.0"),
    (r"(-?\d+(?:\.\d+)?) ?°?([CF])\b[^.;]{0,12}? is above \1 ?°?\2\b", "x is above x"),
    (r"(-?\d+(?:\.\d+)?) ?°?([CF])\b[^.;]{0,12}? is below \1 ?°?\2\b", "x is below x"),
    (r"rising \(?\+?0\.0", "a steady trend called rising"),
    (r"\+0\.0 ", "+0.0"),
    (r"\bNone\b", "None"),
    (r"\bnan\b|\bNaN\b", "nan"),
]
# SI units a US reader must not meet (degF farm)
SI_UNITS = [
    r"°C", r"(?<![\w.])-?\d+(?:\.\d+)? ?C\b", r"\bm/s\b", r"km/h", r"mm/h", r"\bL/s\b", r"\bL/h\b", r"\bm3\b", r"m³", r"\d L\b",
    r"litre", r"\bha\b", r"hectare", r"hPa", r"kPa", r"W/m2", r"(?<![\w.])\d+(\.\d+)? ?(m|mm|cm|km)\b",
]


class _Text(html.parser.HTMLParser):
    """The visible text of a page, with or without one section (by id)."""

    def __init__(self, skip_id: str | None = None):
        super().__init__()
        self.skip_id, self.parts, self.skipping, self.depth, self.in_style = skip_id, [], 0, 0, False

    def handle_starttag(self, tag, attrs):
        if tag in ("style", "script"):
            self.in_style = True
        if self.skipping:
            self.depth += 1
        elif self.skip_id and dict(attrs).get("id") == self.skip_id:
            self.skipping, self.depth = 1, 1
        if tag in ("p", "li", "tr", "td", "th", "div", "h1", "h2", "h3", "br", "section", "figcaption"):
            self.parts.append("\n")

    def handle_endtag(self, tag):
        if tag in ("style", "script"):
            self.in_style = False
        if self.skipping:
            self.depth -= 1
            if self.depth == 0:
                self.skipping = 0

    def handle_data(self, data):
        if not self.skipping and not self.in_style:
            self.parts.append(data)


def page_text(page: str, skip_id: str | None = None) -> str:
    p = _Text(skip_id)
    p.feed(page)
    return "".join(p.parts)


ACK_CODE = re.compile(r"(?<=Ack: reply )[2-9A-Z]{6}\b")  # random; "6MKN9M" is no unit


def problems(texts: dict[str, str], patterns, label: str) -> list[str]:
    out = []
    for where, text in texts.items():
        text = ACK_CODE.sub("CODE", text)
        for pat in patterns:
            pat, name = pat if isinstance(pat, tuple) else (pat, pat)
            m = re.search(pat, text, re.IGNORECASE if label != "format" else 0)
            if m:
                a = max(0, m.start() - 60)
                out.append(f"{label} {name!r} in {where}: ...{text[a:m.end() + 40]!r}")
    return out


def _status_and_fleet_pages(cfg_path: Path, times: list[dt.datetime]) -> dict[str, str]:
    """The status page and the fleet page at each instant, from the replayed store (a heartbeat
    written at that instant stands for a running daemon)."""
    from frostwatch.config import load_config
    from frostwatch.display import Display
    from frostwatch.fleet import page as fleet_page
    from frostwatch.fleet import site as fs
    from frostwatch.fleet.view import FleetModel
    from frostwatch.status.render import render_page
    from frostwatch.status.snapshot import snapshot
    from frostwatch.store import Store

    cfg = load_config(cfg_path)
    d = Display(cfg.site.display_unit, cfg.site.tz)
    out = {}
    with Store.open(cfg.storage.path) as store:
        for now in times:
            beat = {"time": (now - dt.timedelta(seconds=30)).isoformat(), "stored_every_s": 300}
            store.set_meta("daemon.heartbeat", json.dumps(beat))
            snap = snapshot(cfg, store, now)
            out[f"status page at {now:%m-%d %H:%M}Z"] = page_text(render_page(snap, 60))
            model = FleetModel()
            site = "demo-site"
            model.on_message(*fs.info_message("frostwatch", fs.info_doc(site, cfg.site.name, len(cfg.blocks), [], now)),
                             now, True)
            model.on_message(*fs.heartbeat_message("frostwatch", site, fs.heartbeat_doc(now, 60, None, None)), now, False)
            states = [fs.block_state_from_status_doc(b, b["rank"], None) for b in snap["doc"]["blocks"]]
            for topic, payload in fs.state_messages("frostwatch", site, states):
                model.on_message(topic, payload, now, True)
            out[f"fleet page at {now:%m-%d %H:%M}Z"] = page_text(fleet_page.render_page(model.snapshot(now), d, 30, now))
    return out


def _collect(replayed, config_text: str, name: str, logs: list[Path], pages: bool = True) -> dict[str, str]:
    """The texts of one farm's replay (the session's shared `frostwatch replay --json --report-dir`,
    tests/conftest.py); the status and fleet pages rendered from its store."""
    replay = replayed(config_text, logs, name)
    cfg_path = replay.config
    doc = replay.doc()
    texts: dict[str, str] = {}
    for a in doc["alerts"]:
        for k in ("message", "advice", "short"):
            if a.get(k):
                texts[f"alert {a['key']} {k}"] = a[k]
    for x in doc["decisions"]:
        texts[f"decision {x['block']} {x['time']} advice"] = x["advice"]
    for r in doc["reports"]:
        page = Path(r).read_text(encoding="utf-8")
        texts[f"report {Path(r).name}"] = page_text(page, skip_id="notes")
        texts[f"report {Path(r).name} notes"] = page_text(page).split("Notes and sources", 1)[-1]
    if pages:
        times = sorted({dt.datetime.fromisoformat(x["time"].replace("Z", "+00:00")) for x in doc["decisions"]})
        texts.update(_status_and_fleet_pages(cfg_path, times[:: max(1, len(times) // 25)]))
    return texts


@pytest.fixture(scope="module")
def demo_texts(replayed) -> dict[str, str]:
    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    return _collect(replayed, text, "demo-farm.toml", [SAMPLE / n for n in DEMO_NIGHTS])


@pytest.fixture(scope="module")
def fahrenheit_texts(replayed) -> dict[str, str]:
    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    assert 'display_unit = "degC"' in text
    return _collect(replayed, text.replace('display_unit = "degC"', 'display_unit = "degF"'), "demo-farm.toml",
                    [SAMPLE / n for n in DEMO_NIGHTS])


@pytest.fixture(scope="module")
def scenario_texts(replayed) -> dict[str, str]:
    texts: dict[str, str] = {}
    for i, (log, config) in enumerate(SCENARIO_RUNS):
        got = _collect(replayed, (SCENARIOS / config).read_text(encoding="utf-8"), config, [SCENARIOS / log],
                       pages=(i == 0))
        texts.update({f"{config}: {k}": v for k, v in got.items()})
    return texts


def _grower_texts(texts: dict[str, str]) -> dict[str, str]:
    return {k: v for k, v in texts.items() if not k.endswith(" notes")}


def test_demo_texts_have_no_internal_words_or_source_names(demo_texts):
    assert sum(1 for k in demo_texts if k.startswith("alert ")) > 20
    assert any(k.startswith("report ") for k in demo_texts) and any(k.startswith("status page") for k in demo_texts)
    assert any(k.startswith("fleet page") for k in demo_texts)
    grower = _grower_texts(demo_texts)
    assert problems(grower, JARGON, "jargon") + problems(grower, SOURCES, "source") == []


def test_report_notes_name_the_sources_but_no_internal_words(demo_texts):
    notes = {k: v for k, v in demo_texts.items() if k.endswith(" notes")}
    assert notes and all("FAO Frost Protection" in v and "ASHRAE" in v for v in notes.values())
    assert problems(notes, [p for p in JARGON if p not in (r"\bmethod\b", r"\bband\b")], "jargon") == []


def test_scenario_texts_have_no_internal_words_or_source_names(scenario_texts):
    assert sum(1 for k in scenario_texts if " alert " in k) >= 8
    grower = _grower_texts(scenario_texts)
    assert problems(grower, JARGON, "jargon") + problems(grower, SOURCES, "source") == []


def test_no_minus_zero_na_equal_comparisons_or_steady_rising(demo_texts, scenario_texts, fahrenheit_texts):
    texts = {**demo_texts, **scenario_texts, **{f"degF {k}": v for k, v in fahrenheit_texts.items()}}
    assert problems(texts, FORMAT, "format") == []


def test_a_fahrenheit_farm_reads_no_si_unit(fahrenheit_texts):
    """display_unit = "degF": °F, mph, in/h, gal/min, acre-ft and gallons, US gal, acres, ft
    everywhere people read (messages, the status and fleet pages, the report and its notes)."""
    texts = fahrenheit_texts
    assert problems(texts, SI_UNITS, "SI unit") == []
    joined = "\n".join(texts.values())
    for unit in ("°F", "mph", "acre-ft", "gal/min", "US gal", " ft)"):
        assert unit in joined, unit


def test_reasons_are_at_most_three_short_lines(demo_texts, scenario_texts):
    from frostwatch.advice.explain import MAX_REASON_CHARS, MAX_REASONS

    for where, text in {**demo_texts, **scenario_texts}.items():
        if not where.endswith(" message"):
            continue
        lines = text.splitlines()
        if "Why:" not in lines:
            continue
        i = lines.index("Why:")
        reasons = [ln for ln in lines[i + 1:] if ln.startswith("- ")]
        assert 1 <= len(reasons) <= MAX_REASONS, (where, text)
        assert all(len(r) <= MAX_REASON_CHARS + 3 for r in reasons), (where, reasons)


def test_a_block_without_an_anemometer_quotes_the_farm_wind(demo_texts):
    hill = [v for k, v in demo_texts.items() if k.startswith("alert hill/") and k.endswith(" message")]
    assert hill and all("farm wind" in v for v in hill if " wind " in v)
    east = [v for k, v in demo_texts.items() if k.startswith("alert east/") and k.endswith(" message")]
    assert east and not any("farm wind" in v for v in east)
