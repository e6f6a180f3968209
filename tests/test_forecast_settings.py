"""The forecast's settings after frostwatch/forecast/calibration.py was split by topic: every name
it held keeps its import path, and a benchmark or test that sets a setting reaches the code that
reads it. A module that imported a setting by name keeps its own binding, so a variant is set in
every module of `settings.READERS`; a module that binds a setting and is not listed there would be
left out silently (bench/forecast_variants.py, the `forecast_setting` fixture)."""

from __future__ import annotations

import importlib
import pkgutil

import frostwatch.forecast
from frostwatch.forecast import calibration, dusk_regression, features, past_night, settings

SETTINGS = sorted(n for n in vars(settings) if n.isupper() and n != "READERS")

# what calibration.py defined before the split, by the module that holds it now
MOVED = {
    features: ("dusk_regime", "feature_vector", "nowcast_bin"),
    dusk_regression: ("k_model_key", "strata_mix", "reduced_index", "reduced_model"),
    past_night: ("NightRecord",),
}


def test_calibration_keeps_every_name_it_held():
    assert len(SETTINGS) == 54  # the constants and switches calibration.py held (grep '^[A-Z_]* =' before the split)
    for name in SETTINGS:
        assert getattr(calibration, name) is getattr(settings, name), name
    for home, names in MOVED.items():
        for name in names:
            assert getattr(calibration, name) is getattr(home, name), name
    assert set(calibration.__all__) == {*SETTINGS, "Calibration", *(n for names in MOVED.values() for n in names)}


def test_every_forecast_module_that_binds_a_setting_is_a_reader():
    bound = {}
    for info in pkgutil.iter_modules(frostwatch.forecast.__path__):
        mod = importlib.import_module(f"frostwatch.forecast.{info.name}")
        names = [n for n in SETTINGS if hasattr(mod, n)]
        if names:
            bound[info.name] = names
    assert set(bound) == set(settings.READERS), set(bound) ^ set(settings.READERS)


def test_a_setting_set_for_a_test_reaches_the_code_that_reads_it(forecast_setting):
    x = features.feature_vector(5.0, 1.0, 0.8, 4.0, 0.0, -1.5)
    assert x[5] == -1.5 and calibration.dusk_regime(x) == "other"
    forecast_setting("USE_PRESSURE_TREND", False)
    forecast_setting("SKILL_BY_REGIME", False)
    assert calibration.feature_vector(5.0, 1.0, 0.8, 4.0, 0.0, -1.5)[5] == 0.0
    assert calibration.dusk_regime(x) == "any"


def test_a_setting_set_on_calibration_alone_does_not_reach_the_moved_code(monkeypatch):
    """Why the fixture and the benchmark set every reader: calibration.py's binding is a copy."""
    monkeypatch.setattr(calibration, "USE_PRESSURE_TREND", False)
    assert calibration.feature_vector(5.0, 1.0, 0.8, 4.0, 0.0, -1.5)[5] == -1.5
