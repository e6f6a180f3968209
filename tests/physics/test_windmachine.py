"""Wind-machine rules against frost-physics.md 3, 4.1 and 10."""

import itertools
import math

import numpy as np
import pytest

from frostwatch.physics.windmachine import (
    MAX_WIND_FOR_FANS_M_S,
    WindMachineSuitability,
    classify_inversion,
    wind_machine_gain_c,
    wind_machine_suitability,
)


@pytest.mark.parametrize(
    ("inversion_c", "expected"),
    [
        (-1.0, "none"),
        (0.0, "none"),
        (0.49, "none"),
        (0.5, "weak"),
        (1.49, "weak"),
        (1.5, "moderate"),
        (2.8, "moderate"),
        (2.99, "moderate"),
        (3.0, "strong"),
        (7.2, "strong"),
        (math.nan, "unknown"),
    ],
)
def test_classify_inversion_vs_niagara_goodall_and_common_practice(
    inversion_c, expected
):
    # 3.0 C "strong": Ker et al. 2007 / Shaw 2001 (Niagara); 1.5 C minimum useful: common
    # practice; Goodall et al. 1957 weak < 2.8 C falls below our "strong"; 0.5 C: sensor-pair
    # resolution (engineering choice).
    assert classify_inversion(inversion_c) == expected


def test_wind_machine_gain_c_vs_mcmeeking_2002():
    # McMeeking et al. 2002: 3.5 C inversion -> about 1-2 C of warming (the 0.3-0.5 band).
    assert 1.0 <= wind_machine_gain_c(3.5, 0.3) <= wind_machine_gain_c(3.5, 0.5) <= 2.0
    assert wind_machine_gain_c(3.5) == pytest.approx(1.4)


def test_wind_machine_gain_c_stronger_inversion_gives_more():
    gains = [wind_machine_gain_c(x) for x in np.arange(0.0, 10.0, 0.25)]
    assert all(b > a for a, b in itertools.pairwise(gains))
    assert wind_machine_gain_c(0.0) == 0.0
    assert wind_machine_gain_c(-2.0) == 0.0  # lapse, no inversion
    assert math.isnan(wind_machine_gain_c(math.nan))
    with pytest.raises(ValueError):
        wind_machine_gain_c(3.0, gain_fraction=1.5)


def test_wind_machine_suitability_never_useful_above_wind_limit_vs_fao_fp_p160():
    # FAO-FP p.160: not recommended above 2.5 m/s.
    for wind in np.arange(2.51, 8.0, 0.5):
        for inversion in (1.5, 3.0, 6.0, 10.0):
            result = wind_machine_suitability(inversion, wind, -3.0, -2.2)
            assert not result.useful and not result.sufficient
            assert result.expected_gain_c == 0.0
    result = wind_machine_suitability(5.0, 3.4, -3.0, -2.2)
    assert "too windy for fans: 3.4 m/s > 2.5 m/s (FAO-FP p.160)" in result.reasons
    assert wind_machine_suitability(5.0, MAX_WIND_FOR_FANS_M_S, -3.0, -2.2).useful


def test_wind_machine_suitability_never_useful_in_supercooled_fog_vs_fao_fp_p160():
    result = wind_machine_suitability(5.0, 0.5, -3.0, -2.2, supercooled_fog=True)
    assert not result.useful
    assert any("supercooled fog" in reason for reason in result.reasons)


def test_wind_machine_suitability_weak_inversion():
    result = wind_machine_suitability(0.8, 0.5, -3.0, -2.2)
    assert not result.useful
    assert any("inversion weak: 0.8 C" in reason for reason in result.reasons)


def test_wind_machine_suitability_useful_and_sufficient():
    result = wind_machine_suitability(4.0, 0.8, -3.0, -2.2)
    assert isinstance(result, WindMachineSuitability)
    assert result.useful and result.sufficient
    assert (
        result.expected_gain_low_c
        < result.expected_gain_c
        < result.expected_gain_high_c
    )
    assert result.expected_gain_c == pytest.approx(1.6)
    assert (result.expected_gain_low_c, result.expected_gain_high_c) == pytest.approx(
        (1.2, 2.0)
    )


def test_wind_machine_suitability_fans_alone_not_enough():
    result = wind_machine_suitability(4.0, 0.8, -5.3, -2.2)
    assert result.useful and not result.sufficient
    assert any(
        "projected minimum 3.1 C below critical + margin: fans alone will not hold it; "
        "consider sprinklers or heaters with fans" in reason
        for reason in result.reasons
    )


def test_wind_machine_suitability_judged_against_t10_plus_margin():
    # Buds run 1-2 C below screen air on clear nights (frost-physics.md 5, common practice), so
    # "fans should hold it" must mean the air is held at T10 + margin, not at T10. Hand
    # computation: inversion 4 C, low-band gain 0.3 * 4 = 1.2 C (McMeeking et al. 2002's measured
    # lower end); projected -3.0 C: -3.0 + 1.2 = -1.8 C. That holds T10 (-2.2) but not
    # T10 + 2 (-0.2).
    assert wind_machine_suitability(4.0, 0.8, -3.0, -2.2).sufficient
    held = wind_machine_suitability(4.0, 0.8, -3.0, -2.2, margin_c=2.0)
    assert held.useful and not held.sufficient
    assert any("2.8 C below critical + margin" in r for r in held.reasons)
    # with a 1 C margin the line is -1.2 C: -1.8 < -1.2, still not sufficient; 0.4 C margin: -1.8 is
    # at the line, sufficient
    assert not wind_machine_suitability(4.0, 0.8, -3.0, -2.2, margin_c=1.0).sufficient
    assert wind_machine_suitability(4.0, 0.8, -3.0, -2.2, margin_c=0.4).sufficient


def test_wind_machine_suitability_unknown_inputs_are_not_useful():
    assert not wind_machine_suitability(math.nan, 0.5, -3.0, -2.2).useful
    assert not wind_machine_suitability(3.0, math.nan, -3.0, -2.2).useful
    assert not wind_machine_suitability(3.0, 0.5, math.nan, -2.2).sufficient
