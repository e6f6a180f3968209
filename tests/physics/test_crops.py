"""Critical temperatures against the published extension tables (frost-physics.md section 5)."""

import itertools
import math

import numpy as np
import pytest
import scipy.constants

from frostwatch.physics.crops import (
    CriticalTemps,
    UnknownCropError,
    UnknownStageError,
    critical_temps,
    growing_degree_hours,
    known_crops,
    known_stages,
    normalise_name,
    suggest_stage,
)


def f_to_c(value_f):
    # scipy.constants.convert_temperature (NIST SP 811), not frostwatch's own conversion
    return float(scipy.constants.convert_temperature(value_f, "Fahrenheit", "Celsius"))


# Published degF values, (stage, T10 degF, T90 degF), typed from the reprints named per crop.
# Tolerance 1e-9: the code stores the same published numbers and converts exactly.
PUBLISHED_F = {
    # WSU EB0913 via Penn State Extension 'Orchard Frost - Critical Temperatures' (Red Delicious)
    "apple": [
        ("silver tip", 15, 2),
        ("green tip", 18, 10),
        ("half-inch green", 23, 15),
        ("tight cluster", 27, 21),
        ("first pink", 28, 24),
        ("full pink", 28, 25),
        ("first bloom", 28, 25),
        ("full bloom", 28, 25),
        ("post bloom", 28, 25),
    ],
    # WSU EB0978 via Penn State Extension (Bartlett)
    "pear": [
        ("scales separating", 15, 0),
        ("blossom buds exposed", 20, 6),
        ("tight cluster", 24, 15),
        ("first white", 25, 19),
        ("full white", 26, 22),
        ("first bloom", 27, 23),
        ("full bloom", 28, 24),
        ("post bloom", 28, 24),
    ],
    # WSU EB1128 via Penn State Extension
    "sweet cherry": [
        ("first swelling", 17, 5),
        ("side green", 22, 9),
        ("green tip", 25, 14),
        ("tight cluster", 26, 17),
        ("open cluster", 27, 21),
        ("first white", 27, 24),
        ("first bloom", 28, 25),
        ("full bloom", 28, 25),
        ("post bloom", 28, 25),
    ],
    # Utah State University Extension tart cherry table (frost-physics.md section 10)
    "tart cherry": [
        ("swollen bud", 15, 0),
        ("green tip", 26, 22),
        ("tight cluster", 26, 24),
        ("first white", 28, 24),
        ("first bloom", 28, 24),
        ("full bloom", 28, 25),
        ("petal fall", 28, 25),
    ],
    # WSU EB0914 via Penn State Extension
    "peach": [
        ("first swelling", 18, 1),
        ("calyx green", 21, 5),
        ("calyx red", 23, 9),
        ("first pink", 25, 15),
        ("first bloom", 26, 21),
        ("full bloom", 27, 24),
        ("post bloom", 28, 25),
    ],
    # WSU EB1240 via MSU Extension; first swelling has no published T90
    "apricot": [
        ("first swelling", 15, None),
        ("tip separates", 20, 0),
        ("red calyx", 22, 9),
        ("first white", 24, 14),
        ("first bloom", 25, 19),
        ("full bloom", 27, 22),
        ("in the shuck", 27, 24),
        ("green fruit", 28, 25),
    ],
    # MSU/WSU European plum table via MSU Extension
    "european plum": [
        ("first swelling", 14, 0),
        ("side white", 17, 3),
        ("tip green", 20, 7),
        ("tight cluster", 24, 16),
        ("first white", 26, 22),
        ("first bloom", 27, 23),
        ("full bloom", 28, 23),
        ("post bloom", 28, 23),
    ],
}

# FAO-FP (Snyder & de Melo-Abreu 2005) Table 4.8, Concord grape, published in degC.
PUBLISHED_GRAPE_C = [
    ("first swell", -10.6, -19.4),
    ("late swell", -6.1, -12.2),
    ("bud burst", -3.9, -8.9),
    ("first leaf", -2.8, -6.1),
    ("second leaf", -2.2, -5.6),
    ("third leaf", -2.2, -3.3),
    ("fourth leaf", -2.2, -2.8),
]

F_CASES = [(crop, *row) for crop, rows in PUBLISHED_F.items() for row in rows]


@pytest.mark.parametrize(("crop", "stage", "t10_f", "t90_f"), F_CASES)
def test_critical_temps_vs_wsu_msu_usu_extension_tables(crop, stage, t10_f, t90_f):
    # Sources per crop in PUBLISHED_F; exact conversion of the published degF values.
    got = critical_temps(crop, stage)
    assert isinstance(got, CriticalTemps)
    assert got.crop == crop and got.stage == stage
    assert got.kill_10pct_c == pytest.approx(f_to_c(t10_f), abs=1e-9)
    if t90_f is None:
        assert math.isnan(got.kill_90pct_c)
    else:
        assert got.kill_90pct_c == pytest.approx(f_to_c(t90_f), abs=1e-9)
        assert got.kill_90pct_c <= got.kill_10pct_c  # 90 % kill needs more cold


@pytest.mark.parametrize(("stage", "t10_c", "t90_c"), PUBLISHED_GRAPE_C)
def test_critical_temps_vs_fao_fp_table_4_8(stage, t10_c, t90_c):
    # FAO-FP Table 4.8 (Concord, Proebsting, Brummund & Clore 1988), degC as published.
    got = critical_temps("grape", stage)
    assert (got.kill_10pct_c, got.kill_90pct_c) == pytest.approx(
        (t10_c, t90_c), abs=1e-9
    )


def test_critical_temps_vs_omafra_celsius_reprint():
    # frost-physics.md 5: the degC columns match the OMAFRA reprint, rounded to 0.1 degC.
    assert round(critical_temps("apple", "full bloom").kill_10pct_c, 1) == -2.2
    assert round(critical_temps("apple", "full bloom").kill_90pct_c, 1) == -3.9
    assert round(critical_temps("pear", "scales separating").kill_90pct_c, 1) == -17.8
    assert round(critical_temps("peach", "first swelling").kill_90pct_c, 1) == -17.2


def test_known_stages_in_published_order():
    for crop, rows in PUBLISHED_F.items():
        assert known_stages(crop) == [row[0] for row in rows]
    assert known_stages("grape") == [row[0] for row in PUBLISHED_GRAPE_C]
    assert known_crops() == [*PUBLISHED_F, "grape"]


def test_every_crop_has_a_named_source():
    for crop in known_crops():
        assert critical_temps(crop, known_stages(crop)[0]).source
    assert "EB0913" in critical_temps("apple", "full bloom").source
    assert "Red Delicious" in critical_temps("apple", "full bloom").source
    assert "Table 4.8" in critical_temps("grape", "bud burst").source


def test_normalise_name_ignores_case_spaces_hyphens_underscores():
    assert (
        normalise_name("Full-Bloom")
        == normalise_name("full bloom")
        == normalise_name("fullbloom")
    )
    assert (
        normalise_name("Sweet Cherry")
        == normalise_name("sweet-cherry")
        == "sweetcherry"
    )
    assert normalise_name("half_inch GREEN") == normalise_name("half-inch green")


def test_critical_temps_matches_names_loosely():
    ref = critical_temps("sweet cherry", "full bloom")
    assert critical_temps("Sweet-Cherry", "FULL_BLOOM") == ref
    assert critical_temps("  sweetcherry", "Full-Bloom") == ref
    assert critical_temps("apple", "Half Inch Green").stage == "half-inch green"
    assert critical_temps("Apricot", "in-the-shuck").stage == "in the shuck"


def test_plum_is_an_alias_of_european_plum():
    assert critical_temps("plum", "full bloom") == critical_temps(
        "european plum", "full bloom"
    )
    assert critical_temps("Plum", "tip green").crop == "european plum"


def test_unknown_crop_error_lists_known_crops():
    with pytest.raises(UnknownCropError) as info:
        critical_temps("quince", "full bloom")
    assert isinstance(info.value, ValueError)
    message = str(info.value)
    assert "quince" in message
    for crop in known_crops():
        assert crop in message


def test_unknown_stage_error_lists_stages_in_order():
    with pytest.raises(UnknownStageError) as info:
        critical_temps("peach", "king bloom")
    assert isinstance(info.value, ValueError)
    message = str(info.value)
    positions = [message.index(stage) for stage in known_stages("peach")]
    assert positions == sorted(positions)
    assert "king bloom" in message


def test_critical_temps_hardiness_offset_shifts_both():
    base = critical_temps("apple", "tight cluster")
    hardier = critical_temps("apple", "tight cluster", hardiness_offset_c=-1.1)
    assert hardier.kill_10pct_c == pytest.approx(base.kill_10pct_c - 1.1)
    assert hardier.kill_90pct_c == pytest.approx(base.kill_90pct_c - 1.1)
    assert math.isnan(critical_temps("apricot", "first swelling", -0.5).kill_90pct_c)
    with pytest.raises(ValueError):
        critical_temps("apple", "tight cluster", hardiness_offset_c=math.nan)


def test_growing_degree_hours_vs_anderson_richardson_kesner_1986_asymcur():
    # ASYMCUR curve (Anderson, Richardson & Kesner 1986; coefficients 4/25/36 degC from memory):
    # 0 at and below the base, Tu - Tb = 21 at the optimum, half of it midway, 0 at critical.
    one_hour = lambda t: growing_degree_hours([t], step_h=1.0)
    assert one_hour(4.0) == 0.0
    assert one_hour(-3.0) == 0.0
    assert one_hour(14.5) == pytest.approx(10.5)
    assert one_hour(25.0) == pytest.approx(21.0)
    assert one_hour(30.5) == pytest.approx(21.0 * (1.0 + math.cos(math.pi * 0.75)))
    assert one_hour(36.0) == pytest.approx(0.0, abs=1e-9)
    assert one_hour(40.0) == 0.0


def test_growing_degree_hours_invariants():
    temps = np.linspace(-5.0, 35.0, 81)
    per_hour = [growing_degree_hours([t], 1.0) for t in temps]
    rising = [g for t, g in zip(temps, per_hour, strict=True) if t <= 25.0]
    assert all(b >= a for a, b in itertools.pairwise(rising))
    # Same day sampled hourly or every 15 min (repeated) gives the same sum.
    day = [2.0, 6.0, 10.0, 15.0, 20.0, 12.0]
    assert growing_degree_hours(np.repeat(day, 4), 0.25) == pytest.approx(
        growing_degree_hours(day, 1.0)
    )
    assert growing_degree_hours([10.0, math.nan], 1.0) == growing_degree_hours(
        [10.0], 1.0
    )
    with pytest.raises(ValueError):
        growing_degree_hours(day, 0.0)


def test_suggest_stage_is_a_suggestion_in_phenological_order():
    # Apple thresholds are from memory and approximate; only their order is checked here.
    stages = known_stages("apple")
    suggestions = [suggest_stage("apple", gdh) for gdh in range(0, 12000, 100)]
    seen = [s for s in suggestions if s is not None]
    assert seen and seen[0] == stages[0]
    indices = [stages.index(s) for s in seen]
    assert indices == sorted(indices)
    assert suggest_stage("apple", 0.0) is None
    assert suggest_stage("apple", math.nan) is None
    assert suggest_stage("peach", 5000.0) is None  # no basis for other crops
    with pytest.raises(UnknownCropError):
        suggest_stage("quince", 5000.0)
