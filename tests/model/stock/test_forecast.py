import numpy as np
import pandas as pd
import pytest

from model.base.errors import InputError
from model.io.purchases import read_purchases
from model.io.scenario import load_scenario
from model.stock import StockItem, plan_stock
from model.stock.forecast import change_practice, forecast_from_history, forecast_from_year, monthly_history
from model.year import compute_year

DEMO = "demo_data/records/fernhollow_purchases_{}.csv"


@pytest.fixture(scope="module")
def history():
    return pd.concat([read_purchases(DEMO.format(y)) for y in (2025, 2026)])


@pytest.fixture(scope="module")
def year():
    return compute_year(load_scenario("demo_data/year/baseline_2l.toml"), draws=200)


def test_year_forecast_is_the_years_own_months(year):
    f = forecast_from_year(year, "sevoflurane")
    # Internal consistency (common practice, no source): the draws' P50 sits on the year's central months
    np.testing.assert_allclose(f.p50, year.monthly["liquid_ml_sevoflurane"], rtol=0.05)
    assert np.all(f.p5 <= f.p50) and np.all(f.p50 <= f.p95)
    n2o = forecast_from_year(year, "nitrous_oxide")
    assert n2o.unit == "L" and n2o.draws.shape == (200, 12)
    with pytest.raises(InputError, match="agent"):
        forecast_from_year(year, "xenon")


def test_history_forecast_matches_simple_exponential_smoothing(history):
    # Source: Hyndman and Athanasopoulos, Forecasting: Principles and Practice, 3rd ed. 2021, 8.1 and
    # table 8.8 (from memory): simple exponential smoothing forecasts are flat, and the h-step
    # standard deviation is sigma sqrt(1 + alpha^2 (h - 1)).
    from statsmodels.tsa.exponential_smoothing.ets import ETSModel

    series = monthly_history(history, "sevoflurane")
    f = forecast_from_history(series, "sevoflurane", horizon=6)
    fit = ETSModel(pd.Series(series.to_numpy()), error="add").fit(disp=False)
    alpha = fit.params[0]
    sigma = np.sqrt(fit.mse)
    np.testing.assert_allclose(f.p50, f.p50[0])
    h = np.arange(1, 7)
    np.testing.assert_allclose(f.sigma, sigma * np.sqrt(1 + alpha**2 * (h - 1)), rtol=0.02)


@pytest.mark.parametrize("agent", ["sevoflurane", "desflurane", "isoflurane", "nitrous_oxide"])
def test_holdout_of_the_last_three_months_is_reported(history, agent):
    f = forecast_from_history(monthly_history(history, agent), agent)
    ho = f.holdout
    print(
        f"\n{agent}: hold-out {ho['months']} actual {ho['actual']} forecast {np.round(ho['forecast'], 0)}"
        f" mean abs error {ho['mean_abs_error']:.0f} {f.unit} ({ho['mean_abs_pct_error']:.0f} %),"
        f" {ho['inside_p5_p95']} of 3 inside P5-P95"
    )
    assert len(ho["months"]) == 3 and ho["months"][-1] == "2026-12"
    # Hand check of the error (definition of the mean absolute error, common practice, no source)
    assert ho["mean_abs_error"] == pytest.approx(np.mean(np.abs(np.array(ho["forecast"]) - ho["actual"])))


def test_change_of_practice_scales_use_from_its_month(year):
    f = forecast_from_year(year, "desflurane")
    g = change_practice(f, 6, 0.0)
    np.testing.assert_allclose(g.p50[:6], f.p50[:6])
    assert np.all(g.p50[6:] == 0) and np.all(g.draws[:, 6:] == 0)
    # an agent phased out: the plan stops ordering once cover for the new practice is in hand
    item = StockItem(agent="desflurane", bottle_ml=240.0, price_per_bottle=120.0, opening_bottles=10)
    plan = plan_stock(item, g.p50, g.sigma, draws_ml=g.draws)
    assert plan.ordered_bottles[6:].sum() == 0
    with pytest.raises(InputError, match="practice_from"):
        change_practice(f, 12, 0.5)
