"""The Gerber & Harrison table lookup (grower's favour) and tonight's governing application rate.

Every table cell is FROM MEMORY (frost-physics.md 4.2 and 10): these tests check the lookup rule
(colder row, windier class, never interpolated) and that the advice never comes in below it.
"""

import itertools
import math

import numpy as np
import pytest

from frostwatch.physics.sprinklers import (
    gerber_harrison_rate_mm_h,
    heat_released_w_m2_per_mm_h,
    iced_surface_net_loss_w_m2,
    rate_tonight_mm_h,
    required_application_rate_mm_h,
)

MPH = 0.44704


def f_to_c(f):
    return (f - 32) * 5 / 9


@pytest.mark.parametrize(
    ("min_f", "wind_mph", "row_f", "cls", "in_h"),
    [
        (27.0, 0.5, 27, (0, 1), 0.10),  # on a row, in a class
        (25.0, 0.5, 24, (0, 1), 0.10),  # between rows: the colder one
        (23.0, 3.0, 22, (2, 4), 0.24),
        (21.9, 1.5, 20, (2, 4), 0.30),  # between classes: the windier one
        (20.0, 9.0, 20, (10, 14), 0.80),
        (30.0, 0.5, 27, (0, 1), 0.10),  # warmer than the table: its warmest row
    ],
)
def test_gerber_harrison_rate_mm_h_colder_row_windier_class_from_memory(min_f, wind_mph, row_f, cls, in_h):
    # Gerber & Harrison 1964 / UF Circ. 287 as reproduced from memory in frost-physics.md 4.2.
    cell = gerber_harrison_rate_mm_h(f_to_c(min_f), wind_mph * MPH)
    assert cell.row_min_temp_f == row_f
    assert cell.wind_class_mph == cls
    assert cell.rate_mm_h == pytest.approx(in_h * 25.4)


def test_gerber_harrison_rate_mm_h_never_below_either_neighbour_cell():
    # Never interpolated in the grower's disfavour: for any point, the looked-up cell is at least
    # every cell that is warmer or calmer than it.
    for t_c, u in itertools.product(np.arange(-11.5, -2.0, 0.37), np.arange(0.0, 9.5, 0.29)):
        here = gerber_harrison_rate_mm_h(t_c, u).rate_mm_h
        warmer = gerber_harrison_rate_mm_h(t_c + 0.6, u).rate_mm_h
        calmer = gerber_harrison_rate_mm_h(t_c, max(0.0, u - 0.5)).rate_mm_h
        if here is not None:
            assert warmer is None or here >= warmer - 1e-9
            assert calmer is None or here >= calmer - 1e-9


def test_gerber_harrison_rate_mm_h_beyond_the_table():
    assert gerber_harrison_rate_mm_h(f_to_c(9.0), 0.2).rate_mm_h is None  # colder than 11 F
    assert gerber_harrison_rate_mm_h(-3.0, 25 * MPH).rate_mm_h is None  # windier than 22 mph
    assert gerber_harrison_rate_mm_h(f_to_c(15.0), 12 * MPH).rate_mm_h is None  # empty cell
    assert gerber_harrison_rate_mm_h(math.nan, 1.0).rate_mm_h is None


def test_iced_surface_net_loss_w_m2_vs_frost_physics_2_5_range():
    # frost-physics.md 2.5: clear calm frost nights lose about 50-110 W m-2; an iced surface at
    # 0 C radiates more than one at air temperature, so it sits at the top of that range or above.
    loss = iced_surface_net_loss_w_m2(-3.0, 4.0)
    assert 95.0 <= loss <= 135.0
    assert iced_surface_net_loss_w_m2(-3.0, 4.0, cloud_frac=1.0) < loss  # cloud cuts the loss


@pytest.mark.parametrize("t_c", [-2.8, -4.4, -5.6, -7.8])
@pytest.mark.parametrize("u", [0.2, 1.3, 2.9, 4.0])
def test_rate_tonight_mm_h_never_below_heat_budget_or_table(t_c, u):
    # frost-physics.md 10: compute from the heat budget, cross-check with the table, take the
    # larger and say which governed.
    r = rate_tonight_mm_h(t_c, t_c - 3.0, u)
    assert r.required_mm_h >= r.heat_budget_mm_h - 1e-9
    if r.table.rate_mm_h is not None:
        assert r.required_mm_h >= r.table.rate_mm_h - 1e-9
    assert r.governed_by in ("heat budget", "table (from memory)")
    # the heat budget itself: loss / (92.8 (1 - 8.49 x)) with the sensible term held at 0 C
    h = 5.7 + 3.8 * u
    expected = (r.net_loss_w_m2 + h * (0.0 - t_c)) / (heat_released_w_m2_per_mm_h() * (1 - 8.497 * 0.05))
    assert r.heat_budget_mm_h == pytest.approx(expected, rel=2e-3)


def test_rate_tonight_mm_h_table_governs_in_wind():
    # -5.6 C (22 F) in 2.9 m/s (6.5 mph, the 5-8 mph class -> 20 F row 0.60 in/h): the heat
    # budget (a lower bound) is well under it, so the table governs.
    r = rate_tonight_mm_h(-5.6, -8.6, 2.9)
    assert r.governed_by == "table (from memory)"
    assert r.required_mm_h == pytest.approx(0.60 * 25.4)
    assert r.heat_budget_mm_h < r.required_mm_h / 2


def test_rate_tonight_mm_h_beyond_table_is_a_floor_and_flagged():
    r = rate_tonight_mm_h(-8.0, -11.0, 4.0)  # 17.6 F, 9 mph: the 15 F row has no 10-14 mph cell
    assert r.beyond_table
    assert r.required_mm_h >= 0.90 * 25.4 - 1e-9


def test_rate_tonight_more_wind_needs_more_and_colder_needs_more():
    winds = np.arange(0.0, 4.5, 0.2)
    for t_c in (-3.0, -5.0, -7.0):
        rates = [rate_tonight_mm_h(t_c, t_c - 3, u).required_mm_h for u in winds]
        assert all(b >= a for a, b in itertools.pairwise(rates))
        assert rates[-1] > rates[0]
    temps = np.arange(-9.0, -2.0, 0.25)
    rates = [rate_tonight_mm_h(t, t - 3, 1.0).required_mm_h for t in temps]
    assert all(a >= b for a, b in itertools.pairwise(rates))


def test_rate_tonight_unknown_wind_is_not_calm():
    r = rate_tonight_mm_h(-4.0, -7.0, math.nan)
    assert math.isnan(r.heat_budget_mm_h)
    assert r.table.rate_mm_h is None
    assert math.isnan(r.required_mm_h)
    assert math.isnan(required_application_rate_mm_h(100.0, math.nan, -4.0, 0.0))
