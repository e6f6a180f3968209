"""`frostwatch calc`: exit codes 0/2, the JSON keys of DESIGN.md 1.4, --fahrenheit, readable output.

Run in-process through `frostwatch.cli.main` (fast); the contract-check runs the installed command.
"""

from __future__ import annotations

import json

import pytest

from frostwatch.cli import main


def run(capsys, *argv):
    rc = main(["calc", *argv])
    out, err = capsys.readouterr()
    return rc, out, err


def run_json(capsys, *argv):
    rc, out, err = run(capsys, *argv, "--json")
    assert rc == 0, err
    return json.loads(out)


def test_wet_bulb_json_key_and_value_vs_frost_physics_6_3(capsys):
    # frost-physics.md 6.3 [computed]: T 5 / Td -3 C at 101.325 kPa -> Tw +1.83 C (ASHRAE)
    doc = run_json(capsys, "wet-bulb", "--air-temp", "5", "--dew-point", "-3")
    assert doc["wet_bulb_c"] == pytest.approx(1.83, abs=0.02)
    assert doc["pressure_hpa"] == 1013.25
    assert doc["cautions"]


def test_wet_bulb_fahrenheit(capsys):
    doc = run_json(capsys, "wet-bulb", "--air-temp", "41", "--dew-point", "26.6", "--fahrenheit")
    assert "wet_bulb_c" not in doc
    assert doc["wet_bulb_f"] == pytest.approx(1.83 * 9 / 5 + 32, abs=0.05)


def test_dew_point_json(capsys):
    # frost-physics.md 6.3 table: T 5 C, RH 56.2 % <-> Td -3 C
    doc = run_json(capsys, "dew-point", "--air-temp", "5", "--humidity", "56.2")
    assert doc["dew_point_c"] == pytest.approx(-3.0, abs=0.05)
    assert doc["frost_point_c"] > doc["dew_point_c"]


def test_sprinkler_start_vs_rechecked_table_frost_physics_10(capsys):
    # frost-physics.md 10 rechecked table: Td -10, Tc -2 -> 2.0 C; Td -6, Tc -3 -> -1.5 C
    assert run_json(capsys, "sprinkler-start", "--dew-point", "-10", "--critical", "-2")["start_air_temp_c"] == \
        pytest.approx(2.0, abs=0.1)
    assert run_json(capsys, "sprinkler-start", "--dew-point", "-6", "--critical", "-3")["start_air_temp_c"] == \
        pytest.approx(-1.5, abs=0.1)


def test_sprinkler_start_margin_and_fahrenheit(capsys):
    base = run_json(capsys, "sprinkler-start", "--dew-point", "-10", "--critical", "-2.2")["start_air_temp_c"]
    with_margin = run_json(capsys, "sprinkler-start", "--dew-point", "-10", "--critical", "-2.2", "--margin", "1")
    assert with_margin["start_air_temp_c"] > base
    assert with_margin["target_wet_bulb_c"] == pytest.approx(-1.2)
    f = run_json(capsys, "sprinkler-start", "--dew-point", "14", "--critical", "28", "--fahrenheit")
    assert f["start_air_temp_f"] == pytest.approx(
        run_json(capsys, "sprinkler-start", "--dew-point", "-10", "--critical", "-2.2222")["start_air_temp_c"] * 1.8 + 32,
        abs=0.05)


def test_sprinkler_start_dew_point_above_target_exits_2(capsys):
    rc, out, err = run(capsys, "sprinkler-start", "--dew-point", "-1", "--critical", "-2")
    assert rc == 2 and out == "" and "dew-point" in err


def test_critical_json_keys_and_loose_names(capsys):
    doc = run_json(capsys, "critical", "--crop", "Sweet-Cherry", "--stage", "FULL bloom")
    assert set(doc) >= {"kill_10pct_c", "kill_90pct_c", "source"}
    assert doc["kill_10pct_c"] == pytest.approx(-2.22, abs=0.01)  # 28 F, WSU EB1128
    f = run_json(capsys, "critical", "--crop", "apple", "--stage", "full bloom", "--fahrenheit")
    assert f["kill_10pct_f"] == pytest.approx(28.0) and f["kill_90pct_f"] == pytest.approx(25.0)


@pytest.mark.parametrize(("crop", "stage", "listed"), [("banana", "full bloom", "apple"),
                                                        ("apple", "bloom", "half-inch green")])
def test_critical_unknown_crop_or_stage_exits_2_listing_known(capsys, crop, stage, listed):
    rc, out, err = run(capsys, "critical", "--crop", crop, "--stage", stage, "--json")
    assert rc == 2 and out == ""
    assert listed in err


def test_sprinkler_rate_json_is_the_heat_budget(capsys):
    # no table governs (its cells could not be read in a printed source, frost-physics.md 10): the
    # heat budget of the iced plant, a lower bound, with its three losses and the practice anchor
    doc = run_json(capsys, "sprinkler-rate", "--min-temp", "-5.6", "--wind", "2.9", "--dew-point", "-9",
                   "--capacity", "3.0", "--area", "4", "--hours", "8")
    assert doc["required_rate_mm_h"] == doc["heat_budget_rate_mm_h"]
    assert doc["governed_by"] == "heat budget" and "table_rate_mm_h" not in doc
    loss = doc["net_longwave_loss_w_m2"] + doc["sensible_loss_w_m2"] + doc["sublimation_loss_w_m2"]
    assert doc["required_rate_mm_h"] == pytest.approx(loss / (333.7e3 / 3600), abs=0.02)
    assert doc["capacity_adequate"] is False  # -5.6 C in 2.9 m/s asks for about 3.3 mm/h
    assert "Longstroth" in doc["practice"]
    assert doc["peak_flow_l_s"] == pytest.approx(33.3, abs=0.05)  # 3.0 mm/h on 4 ha: 12 * 10 m3/h / 3.6
    assert doc["water_m3"] == pytest.approx(960)


def test_sprinkler_rate_more_wind_more_water(capsys):
    rates = [run_json(capsys, "sprinkler-rate", "--min-temp", "-4", "--wind", str(u))["required_rate_mm_h"]
             for u in (0.0, 1.0, 2.0, 3.0, 4.0)]
    assert rates == sorted(rates) and rates[-1] > rates[0]


def test_sprinkler_rate_readable_warns_and_wind_is_required(capsys):
    rc, out, _ = run(capsys, "sprinkler-rate", "--min-temp", "-3", "--wind", "5", "--capacity", "3")
    assert rc == 0
    assert "not advised" in out and "more harm than good" in out and "Cautions:" in out
    with pytest.raises(SystemExit) as exc:  # argparse: --wind is required (unknown is not calm)
        main(["calc", "sprinkler-rate", "--min-temp", "-3"])
    assert exc.value.code == 2
    rc, _, err = run(capsys, "sprinkler-rate", "--min-temp", "-3", "--wind", "-1")
    assert rc == 2 and "--wind" in err


def test_wind_machine_json_and_invariants(capsys):
    doc = run_json(capsys, "wind-machine", "--inversion", "4", "--wind", "0.8", "--min-temp", "-3", "--critical", "-2.2")
    assert doc["useful"] and doc["expected_gain_c"] == pytest.approx(1.6)
    gains = [run_json(capsys, "wind-machine", "--inversion", str(i), "--wind", "0.5", "--min-temp", "-3",
                      "--critical", "-2.2")["expected_gain_c"] for i in (2, 3, 4, 6)]
    assert gains == sorted(gains) and gains[0] < gains[-1]
    windy = run_json(capsys, "wind-machine", "--inversion", "6", "--wind", "3.0", "--min-temp", "-3", "--critical", "-2.2")
    assert windy["useful"] is False and windy["alternatives"]
    fog = run_json(capsys, "wind-machine", "--inversion", "6", "--wind", "0.5", "--min-temp", "-3", "--critical", "-2.2",
                   "--fog")
    assert fog["useful"] is False


def test_wind_machine_fahrenheit_text_in_fahrenheit(capsys):
    rc, out, _ = run(capsys, "wind-machine", "--inversion", "7", "--wind", "0.5", "--min-temp", "26", "--critical", "28",
                     "--fahrenheit")
    assert rc == 0 and "°F" in out and "°C" not in out.split("Cautions:")[0]
    doc = run_json(capsys, "wind-machine", "--inversion", "7", "--wind", "0.5", "--min-temp", "26", "--critical", "28",
                   "--fahrenheit")
    assert doc["expected_gain_f"] == pytest.approx(0.4 * 7, abs=0.01)


def test_readable_output_by_default(capsys):
    rc, out, _ = run(capsys, "critical", "--crop", "grape", "--stage", "bud burst")
    assert rc == 0 and out.startswith("grape, bud burst: 10 % kill -3.9 °C") and "Cautions:" in out


# ---- units: suffixes, --units us, the pressure and humidity guards (issue 13) ---------------------


def test_wet_bulb_pressure_in_inhg_is_refused_with_the_hint(capsys):
    # the case: 29.92 taken as hPa gave -6.08 C instead of -1.35 C
    rc, out, err = run(capsys, "wet-bulb", "--air-temp", "1", "--dew-point", "-3", "--pressure", "29.92")
    assert rc == 2 and out == ""
    assert "29.92 looks like inHg: pass --pressure-inhg 29.92" in err
    as_inhg = run_json(capsys, "wet-bulb", "--air-temp", "1", "--dew-point", "-3", "--pressure-inhg", "29.92")
    as_hpa = run_json(capsys, "wet-bulb", "--air-temp", "1", "--dew-point", "-3", "--pressure", "1013.2")
    suffixed = run_json(capsys, "wet-bulb", "--air-temp", "1", "--dew-point", "-3", "--pressure", "29.92inHg")
    assert as_inhg["wet_bulb_c"] == pytest.approx(as_hpa["wet_bulb_c"], abs=0.01) == suffixed["wet_bulb_c"]
    assert as_inhg["pressure_hpa"] == pytest.approx(1013.2, abs=0.1)  # JSON keys keep their unit
    rc, _, err = run(capsys, "wet-bulb", "--air-temp", "1", "--dew-point", "-3", "--pressure", "101.3")
    assert rc == 2 and "looks like kPa" in err
    rc, _, err = run(capsys, "wet-bulb", "--air-temp", "1", "--dew-point", "-3", "--pressure", "1013", "--units", "us")
    assert rc == 2 and "looks like hPa: pass --pressure 1013hPa" in err


def test_dew_point_humidity_that_looks_like_a_fraction_asks(capsys):
    rc, out, err = run(capsys, "dew-point", "--air-temp", "5", "--humidity", "0.5")
    assert rc == 2 and out == "" and "did you mean 50 %" in err and "--humidity-low-ok" in err
    confirmed = run_json(capsys, "dew-point", "--air-temp", "5", "--humidity", "0.5", "--humidity-low-ok")
    written = run_json(capsys, "dew-point", "--air-temp", "5", "--humidity", "0.5%")
    assert confirmed["dew_point_c"] == written["dew_point_c"] < -40
    assert run_json(capsys, "dew-point", "--air-temp", "5", "--humidity", "1.5")["relative_humidity_pct"] == 1.5


def test_unit_suffixes_and_negative_values_with_a_unit(capsys):
    c = run_json(capsys, "wet-bulb", "--air-temp", "5C", "--dew-point", "-3C")
    f = run_json(capsys, "wet-bulb", "--air-temp", "41F", "--dew-point", "26.6F")
    assert c["wet_bulb_c"] == pytest.approx(f["wet_bulb_c"], abs=0.02)
    neg = run_json(capsys, "sprinkler-start", "--dew-point", "-10C", "--critical", "-2.2C", "--margin", "1.8F")
    assert neg["target_wet_bulb_c"] == pytest.approx(-1.2)
    rc, _, err = run(capsys, "wet-bulb", "--air-temp", "5mph", "--dew-point", "-3")
    assert rc == 2 and "--air-temp" in err and "does not fit" in err


def test_fahrenheit_applies_to_every_temperature_option(capsys):
    c = run_json(capsys, "wind-machine", "--inversion", "4", "--wind", "0.8", "--min-temp", "-3", "--critical", "-2.2")
    f = run_json(capsys, "wind-machine", "--inversion", "7.2", "--wind", "0.8", "--min-temp", "26.6", "--critical", "28.04",
                 "--margin", "3.6", "--fahrenheit")
    assert f["expected_gain_f"] == pytest.approx(c["expected_gain_c"] * 1.8, abs=0.01)
    assert f["sufficient"] == c["sufficient"]


def test_units_us_reads_and_answers_in_us_units(capsys):
    si = run_json(capsys, "sprinkler-rate", "--min-temp", "-4.4", "--wind", "1.34", "--capacity", "3.556", "--area", "4.047",
                  "--hours", "8")
    us = run_json(capsys, "sprinkler-rate", "--units", "us", "--min-temp", "24", "--wind", "3", "--capacity", "0.14",
                  "--area", "10", "--hours", "8")
    assert us["required_rate_mm_h"] == pytest.approx(si["required_rate_mm_h"], abs=0.02)
    assert us["capacity_mm_h"] == pytest.approx(3.556) and us["area_ha"] == pytest.approx(4.047, abs=0.001)
    assert us["peak_flow_l_s"] == pytest.approx(si["peak_flow_l_s"], abs=0.1)
    assert us["peak_flow_gpm"] == pytest.approx(us["peak_flow_l_s"] * 15.850323, abs=1.0)
    assert us["water_acre_ft"] == pytest.approx(us["water_m3"] / 1233.48, abs=0.001)
    rc, out, _ = run(capsys, "sprinkler-rate", "--units", "us", "--min-temp", "24", "--wind", "3", "--capacity", "0.14",
                     "--area", "10", "--hours", "8")
    text = out.split("Cautions:")[0]
    assert rc == 0 and "in/h" in text and "gal/min" in text and "acre-ft" in text and "acres" in text and "mph" in text
    for si_unit in ("mm/h", "L/s", "m3", " ha", "m/s", "°C"):
        assert si_unit not in text, si_unit


@pytest.mark.parametrize("air_c, rh", [(5.0, 56.0), (2.0, 60.0), (-1.0, 80.0), (8.0, 35.0)])
def test_wet_bulb_from_humidity_matches_psychrolib(capsys, air_c, rh):
    """A handheld hygrometer shows air and RH: `--humidity` instead of `--dew-point`. Outside
    reference: psychrolib 2.5 (ASHRAE Handbook Fundamentals 2017 ch. 1), GetTWetBulbFromRelHum at
    101325 Pa (an ice bulb below 0 °C, as frostwatch's)."""
    import psychrolib

    psychrolib.SetUnitSystem(psychrolib.SI)
    want = psychrolib.GetTWetBulbFromRelHum(air_c, rh / 100.0, 101325.0)
    doc = run_json(capsys, "wet-bulb", "--air-temp", str(air_c), "--humidity", str(rh))
    assert doc["wet_bulb_c"] == pytest.approx(want, abs=0.1)
    assert doc["relative_humidity_pct"] == rh
    # the same as through the dew point it reports
    same = run_json(capsys, "wet-bulb", "--air-temp", str(air_c), "--dew-point", str(doc["dew_point_c"]))
    assert same["wet_bulb_c"] == pytest.approx(doc["wet_bulb_c"], abs=0.02)


def test_sprinkler_start_from_humidity_and_its_usage_errors(capsys):
    td = run_json(capsys, "dew-point", "--air-temp", "3", "--humidity", "50")["dew_point_c"]
    by_td = run_json(capsys, "sprinkler-start", "--dew-point", str(td), "--critical", "-2.2")
    by_rh = run_json(capsys, "sprinkler-start", "--air-temp", "3", "--humidity", "50", "--critical", "-2.2")
    assert by_rh["start_air_temp_c"] == pytest.approx(by_td["start_air_temp_c"], abs=0.02)
    assert by_rh["dew_point_c"] == pytest.approx(td, abs=0.01)
    rc, out, err = run(capsys, "sprinkler-start", "--air-temp", "3", "--humidity", "50", "--critical", "-2.2")
    assert rc == 0 and "from RH 50 %" in out
    rc, _, err = run(capsys, "sprinkler-start", "--humidity", "50", "--critical", "-2.2")
    assert rc == 2 and "--humidity needs --air-temp" in err
    rc, _, err = run(capsys, "sprinkler-start", "--air-temp", "3", "--dew-point", "-5", "--critical", "-2.2")
    assert rc == 2 and "--air-temp is used only with --humidity" in err
    rc, _, err = run(capsys, "sprinkler-start", "--air-temp", "3", "--humidity", "99", "--critical", "-2.2")
    assert rc == 2 and "from --humidity 99 at --air-temp 3" in err and "air temperature itself governs" in err
    with pytest.raises(SystemExit) as exc:  # argparse: one of them, not both
        run(capsys, "wet-bulb", "--air-temp", "2", "--humidity", "50", "--dew-point", "1")
    assert exc.value.code == 2
    assert "not allowed with" in capsys.readouterr().err
