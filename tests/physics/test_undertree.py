"""Under-tree sprinklers against the published rates (UCCE almonds, Parsons 2015) and an exact
unit conversion."""

import math

import pytest

from frostwatch.physics.undertree import (
    CITRUS_RATE_MM_H,
    LINES_FREEZE_BELOW_MM_H,
    TARGET_RATE_MM_H,
    gpm_per_acre_to_mm_h,
    judge_undertree,
    undertree_warming_c,
)


def test_gpm_per_acre_to_mm_h_by_hand():
    # 1 US gal = 3.785411784 L (exact), 1 acre = 4046.8564224 m2 (exact); 1 L/m2 = 1 mm:
    # 1 gpm/acre = 3.785411784 * 60 / 4046.8564224 = 0.05612 mm/h (frost-physics.md 4.3: 0.0561)
    assert gpm_per_acre_to_mm_h(1.0) == pytest.approx(0.05612, abs=1e-5)


def test_rates_vs_connell_snyder_ucce_and_parsons_2015():
    # UCCE almonds: 30-40 gal/min/acre (about 1.7-2.2 mm/h), at least 15 (about 0.84 mm/h);
    # Parsons (2015), Florida citrus: 18.7 m3/ha/h = 1.87 mm/h, inside that range
    assert TARGET_RATE_MM_H == pytest.approx((1.68, 2.24), abs=0.01)
    assert LINES_FREEZE_BELOW_MM_H == pytest.approx(0.84, abs=0.01)
    assert CITRUS_RATE_MM_H == pytest.approx(18.7 / 10.0)
    assert TARGET_RATE_MM_H[0] <= CITRUS_RATE_MM_H <= TARGET_RATE_MM_H[1]


def test_undertree_warming_needs_an_inversion():
    # Parsons (2015): 0.6-1.4 C at 1.2 m; the apple-orchard study: warming only under inversions
    assert undertree_warming_c(3.0) == (0.6, 1.4)
    assert undertree_warming_c(0.8) == (0.0, 0.0)
    assert undertree_warming_c(None) == (0.0, 0.0)
    assert undertree_warming_c(math.nan) == (0.0, 0.0)


def test_judge_undertree_against_t10_plus_margin():
    # T10 -2.2, margin 1: the line is -1.2. A projected -1.6 with a 3 C inversion: -1.6 + 0.6 =
    # -1.0 >= -1.2, sufficient; a projected -2.5: -1.9, short by 0.7 C.
    ok = judge_undertree(1.9, -1.6, -2.2, 1.0, 3.0)
    assert ok.sufficient and ok.shortfall_c == 0.0 and not ok.lines_may_freeze
    short = judge_undertree(1.9, -2.5, -2.2, 1.0, 3.0)
    assert not short.sufficient and short.shortfall_c == pytest.approx(0.7)
    flat = judge_undertree(1.9, -1.6, -2.2, 1.0, 0.5)  # no inversion: no warming counted
    assert not flat.sufficient and flat.shortfall_c == pytest.approx(0.4)
    frozen = judge_undertree(0.6, -1.0, -2.2, 1.0, 3.0)
    assert frozen.lines_may_freeze and frozen.below_target and not frozen.sufficient
