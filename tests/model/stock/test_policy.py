import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from model.base.errors import InputError
from model.stock import StockItem, check_item, order_up_to_level, plan_stock, safety_stock, service_z

ITEM = StockItem(
    agent="sevoflurane",
    bottle_ml=250.0,
    price_per_bottle=100.0,
    opening_bottles=2,
    opening_open_ml=100.0,
    lead_months=1,
    review_months=1,
    service_level=0.95,
)


def test_z_of_95_percent_service():
    # Source: standard normal table, Phi(1.645) = 0.95 (from memory)
    assert float(service_z(0.95)) == pytest.approx(1.645, abs=5e-4)


def test_safety_stock_and_order_up_to_level_by_hand():
    # Source: Silver, Pyke and Thomas 2017, (R, S) system: SS = z sigma sqrt(L + R),
    # S = mean (L + R) + SS (from memory). By hand: 1.6449 x 100 x sqrt(2) = 232.6 mL.
    assert float(safety_stock(1.6449, 100.0, 1.0, 1.0)) == pytest.approx(232.62, abs=0.01)
    assert float(order_up_to_level(500.0, 100.0, 1.0, 1.0, 0.95)) == pytest.approx(1232.6, abs=0.1)


def test_orders_and_carried_stock_by_hand():
    # Hand calculation of the (R, S) rule (Silver, Pyke and Thomas 2017, from memory):
    # month 0: position 2 x 250 + 100 = 600 mL, S = 1232.6 -> 632.6 mL -> 3 bottles.
    # use 500 mL: the 100 mL open, then 2 bottles opened, 100 mL left open (nothing rounded up).
    # month 1: 3 delivered, on hand 100 + 750 = 850 -> 382.6 mL -> 2 bottles.
    plan = plan_stock(ITEM, [500.0] * 4, [100.0] * 4)
    assert plan.safety_ml[0] == pytest.approx(232.6, abs=0.1)
    assert list(plan.ordered_bottles[:2]) == [3, 2]
    assert plan.closing_ml[0] == pytest.approx(100.0)
    assert plan.opening_ml[1] == pytest.approx(100.0)
    assert plan.received_bottles[1] == 3
    assert plan.closing_ml[1] == pytest.approx(350.0)
    rows = plan.orders()
    assert rows[0]["bottles"] == 3 and rows[0]["month_delivered"] == 1 and rows[0]["cost"] == 300.0
    assert rows[0]["stock_after_bottles"] == pytest.approx(850.0 / 250.0)


def test_order_multiple_rounds_up_to_whole_cases():
    # common practice, no source: bottles are bought in whole cases
    plan = plan_stock(StockItem(**{**ITEM.__dict__, "order_multiple": 6, "pack_bottles": 6}), [500.0] * 3, [100.0] * 3)
    assert all(b % 6 == 0 for b in plan.ordered_bottles)
    assert plan.ordered_bottles[0] == 6


def test_unopened_bottles_expire_first_in_first_out():
    # common practice, no source: an unopened bottle past its shelf life is discarded, oldest first
    item = StockItem(**{**ITEM.__dict__, "opening_bottles": 10, "shelf_life_months": 2, "opening_open_ml": 0.0})
    plan = plan_stock(item, [250.0] * 4, [0.0] * 4)
    # opening lot (10) loses 2 bottles to use in months 0-1, the 8 left expire at the end of month 1
    assert plan.expired_bottles[1] == 8


def test_higher_service_level_orders_more():
    # Source: Silver, Pyke and Thomas 2017 (from memory): z rises with the service level
    low = plan_stock(StockItem(**{**ITEM.__dict__, "service_level": 0.8}), [500.0] * 12, [150.0] * 12)
    high = plan_stock(StockItem(**{**ITEM.__dict__, "service_level": 0.99}), [500.0] * 12, [150.0] * 12)
    assert high.ordered_bottles.sum() > low.ordered_bottles.sum()
    assert high.stockout_chance[3:].mean() < low.stockout_chance[3:].mean()


@pytest.mark.parametrize(
    ("change", "field"),
    [
        ({"opening_bottles": -1}, "opening_bottles"),
        ({"opening_open_ml": -5.0}, "opening_open_ml"),
        ({"lead_months": 13}, "lead_months"),
        ({"pack_bottles": 4, "order_multiple": 6}, "order_multiple"),
        ({"agent": "xenonane"}, "agent"),
    ],
)
def test_bad_item_names_the_field(change, field):
    with pytest.raises(InputError) as err:
        check_item(StockItem(**{**ITEM.__dict__, **change}), known_agents={"sevoflurane", "desflurane"})
    assert field in str(err.value)


@settings(max_examples=60, deadline=None)
@given(
    use=st.lists(st.floats(0.0, 3000.0), min_size=1, max_size=18),
    sigma=st.floats(0.0, 500.0),
    lead=st.integers(0, 3),
    review=st.integers(1, 3),
    multiple=st.sampled_from([1, 2, 6]),
    shelf=st.floats(1.0, 36.0),
    opening=st.integers(0, 40),
    open_ml=st.floats(0.0, 250.0),
)
def test_every_bottle_is_accounted_for_and_stock_never_negative(
    use, sigma, lead, review, multiple, shelf, opening, open_ml
):
    # Conservation (common practice, no source): opening + received = used + closing + expired, each month and in total
    item = StockItem(
        agent="sevoflurane",
        bottle_ml=250.0,
        price_per_bottle=90.0,
        opening_bottles=opening,
        opening_open_ml=open_ml,
        lead_months=lead,
        review_months=review,
        order_multiple=multiple,
        pack_bottles=1,
        shelf_life_months=shelf,
    )
    plan = plan_stock(item, use, [sigma] * len(use), n_draws=20)
    b = item.bottle_ml
    lhs = plan.opening_ml + plan.received_bottles * b
    rhs = plan.used_ml + plan.closing_ml + plan.expired_bottles * b
    np.testing.assert_allclose(lhs, rhs, atol=1e-6)
    assert np.all(plan.closing_ml >= -1e-9) and np.all(plan.opening_ml >= -1e-9)
    np.testing.assert_allclose(plan.opening_ml[1:], plan.closing_ml[:-1], atol=1e-6)
    total_in = plan.opening_ml[0] + plan.received_bottles.sum() * b
    total_out = plan.used_ml.sum() + plan.closing_ml[-1] + plan.expired_bottles.sum() * b
    assert total_in == pytest.approx(total_out, abs=1e-6)
    assert plan.cash.sum() == pytest.approx(sum(r["cost"] for r in plan.orders() if r["month_delivered"] < len(use)))
    # At P50 use there is no shortfall once the first order can have arrived, while nothing expires unused
    if shelf >= 36.0 - 1e-9 or not plan.expired_bottles.any():
        assert np.all(plan.short_ml[lead:] <= 1e-6)
