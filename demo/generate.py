"""Build the Tamis demo workbook: two invented scenarios with a known, documented truth.

Everything in the workbook is simulated from a fixed seed, so a user can compare what each
method recovers with the coefficients that really produced the data (``demo/TRUTH.md``).

Sheets:

- ``Roastery lots``  96 rows (coffee lots) x 240 numeric candidates + ``lot_id`` + ``cup_score``.
  More candidates than rows; six columns carry the signal (``ROASTERY_TRUTH``).
- ``Bakery demand``  6 bakeries x 156 weeks = 936 rows, 45 candidates + ``loaves_sold``, laid out
  the way real workbooks are: two note rows above the heading row (headings on sheet row 3),
  blank separator rows, numbers stored as text, spreadsheet error cells, category and yes/no
  columns. ``price`` is set partly in response to things that also move demand, so a plain
  regression of demand on price is biased; ``BAKERY_TRUTH`` holds the true effects.
- ``About``          plain-words description of both scenarios.

Usage::

    python -m demo.generate [--out PATH]     # default: demo/tamis_demo.xlsx beside this module

Cells are plain values (numbers, text, dates). Error cells are formulas whose cached value is
the error (``=NA()`` -> ``#N/A``; a division by a zero cell -> ``#DIV/0!``), so readers that use
cached values see exactly the error a spreadsheet program would show.
"""

from __future__ import annotations

__all__ = [
    "DEFAULT_SEED",
    "DEFAULT_PATH",
    "ROASTERY_SHEET",
    "BAKERY_SHEET",
    "ABOUT_SHEET",
    "ROASTERY_RESPONSE",
    "BAKERY_RESPONSE",
    "ROASTERY_TRUTH",
    "ROASTERY_INTERCEPT",
    "ROASTERY_NOISE_SD",
    "BAKERY_TRUTH",
    "BAKERY_LEVEL_TRUTH",
    "BAKERY_NOISE_SD",
    "BAKERY_HEADER_ROW",
    "build_demo_workbook",
    "roastery_frame",
    "bakery_frame",
    "main",
]

import argparse
import datetime as dt
import sys
from pathlib import Path
from typing import TypedDict

import numpy as np
import pandas as pd

DEFAULT_SEED = 20261201
DEFAULT_PATH = Path(__file__).with_name("tamis_demo.xlsx")

ROASTERY_SHEET = "Roastery lots"
BAKERY_SHEET = "Bakery demand"
ABOUT_SHEET = "About"
ROASTERY_RESPONSE = "cup_score"
BAKERY_RESPONSE = "loaves_sold"

# ---------------------------------------------------------------------------------------------
# Roastery lots: the truth. cup_score = intercept + sum(coef * column) + N(0, sd^2) noise.
# ---------------------------------------------------------------------------------------------
ROASTERY_INTERCEPT = 55.0
ROASTERY_TRUTH: dict[str, float] = {
    "farm_altitude_m": 0.003,  # points per metre: high-grown lots score higher
    "fermentation_hours": 0.035,  # points per hour of fermentation
    "bean_density_g_l": 0.012,  # points per g/L of green-bean density
    "defects_per_300g": -0.25,  # points per defect counted in a 300 g sample
    "rain_oct_mm": -0.006,  # points per mm of October rain at the farm (harvest rain)
    "bean_temp_540s_c": 0.10,  # points per degree C of bean temperature at 9:00 of the roast
}
ROASTERY_NOISE_SD = 0.4
ROASTERY_LOTS = 96
ROAST_STEPS = 36  # readings every 30 s, from 0:30 to 18:00
MONTHS = ("jan", "feb", "mar", "apr", "may", "jun", "jul", "aug", "sep", "oct", "nov", "dec")

# ---------------------------------------------------------------------------------------------
# Bakery demand: the truth. loaves_sold = bakery level + sum(coef * column) + promotion level
# + N(0, sd^2) noise; yes/no columns enter as 1/0.
# ---------------------------------------------------------------------------------------------
BAKERY_TRUTH: dict[str, float] = {
    "price": -140.0,  # loaves per week per 1.00 of price per loaf (the focal effect)
    "tourism_index": 2.0,  # loaves per index point
    "mean_temp_c": 3.0,  # loaves per degree C
    "rain_mm": -2.5,  # loaves per mm of rain in the week
    "school_holiday": -45.0,  # loaves in a school-holiday week ("yes")
    "local_event": 80.0,  # loaves in a week with a local event ("yes")
    "footfall_count": 0.012,  # loaves per person counted passing the door
}
# category levels: bakery base level (includes the intercept) and promotion shifts vs "none"
BAKERY_LEVEL_TRUTH: dict[str, dict[str, float]] = {
    "bakery": {
        "Linden Row": 950.0,
        "Quayside": 890.0,
        "Old Mill": 810.0,
        "Station Hill": 1010.0,
        "Market Cross": 910.0,
        "Elm Park": 850.0,
    },
    "promotion": {"none": 0.0, "flyer": 40.0, "two-for-one": 150.0, "loyalty": 60.0},
}
BAKERY_NOISE_SD = 35.0
BAKERY_WEEKS = 156
BAKERY_HEADER_ROW = 3  # 1-based sheet row of the headings (two note rows above)
BAKERY_FIRST_WEEK = dt.date(2023, 1, 2)  # a Monday

# how the price is set (not a causal effect on demand: the pricing rule, documented in TRUTH.md)
PRICE_BASE = {
    "Linden Row": 3.40,
    "Quayside": 3.70,
    "Old Mill": 3.10,
    "Station Hill": 3.60,
    "Market Cross": 3.50,
    "Elm Park": 3.30,
}


class _PriceRule(TypedDict):
    """Price slopes per unit of each column, and the price offset of each promotion."""

    tourism_index: float
    local_event: float
    flour_cost_index: float
    promotion: dict[str, float]


PRICE_RULE: _PriceRule = {
    "tourism_index": 0.006,  # per index point: prices go up in the tourist season
    "local_event": 0.20,  # event weeks
    "flour_cost_index": 0.01,  # per point above 100: passed on from the miller
    "promotion": {"none": 0.0, "flyer": -0.10, "two-for-one": -0.90, "loyalty": -0.25},
}
PRICE_NOISE_SD = 0.10


# ---------------------------------------------------------------------------------------------
# Roastery lots
# ---------------------------------------------------------------------------------------------
def _roast_curves(rng: np.random.Generator, n: int) -> dict[str, np.ndarray]:
    """Five roast-curve series, one reading every 30 s; smooth and correlated along the curve."""
    t = np.arange(1, ROAST_STEPS + 1) * 30.0  # seconds
    charge = rng.normal(205.0, 4.0, n)  # drum temperature at charge
    turning = rng.normal(92.0, 3.0, n)  # bean-probe minimum
    t_turn = rng.normal(90.0, 8.0, n)
    end = rng.normal(214.0, 4.0, n)
    shape = rng.normal(0.75, 0.06, n)  # how front-loaded the rise is
    # the rate of rise wanders smoothly (AR(1)); the temperature is its running sum, so both the
    # temperatures and the rates are correlated along the curve, as on a real roaster log
    drift = np.zeros((n, ROAST_STEPS))
    for j in range(1, ROAST_STEPS):
        drift[:, j] = 0.9 * drift[:, j - 1] + rng.normal(0.0, 0.25, n)
    wobble = np.cumsum(drift, axis=1)
    frac = np.clip((t[None, :] - t_turn[:, None]) / (t[-1] - t_turn[:, None]), 0.0, 1.0)
    rise = turning[:, None] + (end - turning)[:, None] * frac ** shape[:, None]
    fall = charge[:, None] - (charge - turning)[:, None] * np.clip(
        t[None, :] / t_turn[:, None], 0, 1
    )
    bean = np.where(t[None, :] < t_turn[:, None], fall, rise) + wobble
    exhaust = (
        bean + rng.normal(28.0, 3.0, n)[:, None] + 0.5 * wobble + rng.normal(0, 0.8, bean.shape)
    )
    ror = np.diff(np.concatenate([charge[:, None], bean], axis=1), axis=1) * 2.0  # C per minute
    burner = np.clip(
        rng.normal(70.0, 6.0, n)[:, None]
        - 0.9 * np.arange(ROAST_STEPS)[None, :]
        + rng.normal(0, 2.0, bean.shape),
        15.0,
        100.0,
    )
    airflow = np.clip(
        rng.normal(40.0, 5.0, n)[:, None]
        + 1.1 * np.arange(ROAST_STEPS)[None, :]
        + rng.normal(0, 1.5, bean.shape),
        10.0,
        100.0,
    )
    series = {
        "bean_temp_{s}s_c": bean,
        "exhaust_temp_{s}s_c": exhaust,
        "rate_of_rise_{s}s_c_min": ror,
        "burner_{s}s_pct": burner,
        "airflow_{s}s_pct": airflow,
    }
    out: dict[str, np.ndarray] = {}
    for pattern, values in series.items():
        for j, sec in enumerate(t.astype(int)):
            out[pattern.format(s=f"{sec:03d}")] = np.round(values[:, j], 1)
    return out


def roastery_frame(seed: int = DEFAULT_SEED) -> pd.DataFrame:
    """The "Roastery lots" table: 96 rows; lot_id, 240 numeric candidates, cup_score last."""
    rng = np.random.default_rng([seed, 1])
    n = ROASTERY_LOTS
    cols: dict[str, np.ndarray] = {}
    cols["lot_id"] = np.array(
        [f"GL-{2025 + i // 48}-{i % 48 + 1:03d}" for i in range(n)], dtype=object
    )
    altitude = rng.uniform(1100.0, 2200.0, n)
    cols["farm_altitude_m"] = np.round(altitude, 0)
    cols["farm_size_ha"] = np.round(rng.lognormal(1.5, 0.7, n), 1)
    cols["shade_cover_pct"] = np.round(rng.uniform(0, 70, n), 0)
    cols["tree_age_years"] = np.round(rng.uniform(3, 30, n), 0)
    cols["fermentation_hours"] = np.round(rng.uniform(12.0, 96.0, n), 1)
    cols["fermentation_temp_c"] = np.round(rng.normal(21.0, 2.5, n), 1)
    cols["drying_days"] = np.round(rng.uniform(8.0, 30.0, n), 0)
    cols["drying_bed_height_cm"] = np.round(rng.uniform(2.0, 8.0, n), 1)
    cols["bean_density_g_l"] = np.round(rng.normal(700.0 + 0.03 * (altitude - 1650), 22.0, n), 0)
    cols["moisture_pct"] = np.round(rng.normal(10.8, 0.6, n), 2)
    cols["water_activity"] = np.round(
        0.42 + 0.02 * (cols["moisture_pct"] - 10.8) + rng.normal(0, 0.015, n), 3
    )
    cols["screen_size"] = np.round(rng.normal(16.5, 0.8, n), 1)
    cols["defects_per_300g"] = rng.poisson(4.0, n).astype(float)
    cols["days_since_harvest"] = np.round(rng.uniform(60, 300, n), 0)
    cols["lot_weight_kg"] = np.round(rng.uniform(60, 1200, n), 0)
    cols["batch_size_kg"] = np.round(rng.uniform(8, 15, n), 1)
    cols["first_crack_s"] = np.round(rng.normal(480, 25, n), 0)
    cols["development_time_s"] = np.round(rng.normal(110, 15, n), 0)
    cols["drop_temp_c"] = np.round(rng.normal(212, 4, n), 1)
    cols["weight_loss_pct"] = np.round(rng.normal(14.0, 1.0, n), 2)
    cols["cooling_time_s"] = np.round(rng.normal(240, 30, n), 0)
    cols["roastery_humidity_pct"] = np.round(rng.uniform(30, 70, n), 0)
    cols["roastery_temp_c"] = np.round(rng.normal(22, 3, n), 1)
    cols["rest_days_before_cupping"] = np.round(rng.uniform(1, 10, n), 0)
    # farm weather by month: rain with a wet season, temperatures that fall with altitude
    wet = 80 + 120 * np.clip(np.sin(np.linspace(0, 2 * np.pi, 12, endpoint=False) + 0.5), 0, None)
    farm_wet = rng.lognormal(0.0, 0.3, n)
    for m, name in enumerate(MONTHS):
        cols[f"rain_{name}_mm"] = np.round(wet[m] * farm_wet * rng.lognormal(0.0, 0.35, n), 0)
    for m, name in enumerate(MONTHS):
        cols[f"temp_{name}_c"] = np.round(
            28.0 - 0.0055 * altitude + 1.5 * np.cos(2 * np.pi * m / 12) + rng.normal(0, 0.7, n), 1
        )
    for m, name in enumerate(MONTHS):
        cols[f"sun_{name}_h"] = np.round(
            np.clip(220 - 0.5 * wet[m] * farm_wet + rng.normal(0, 15, n), 40, None), 0
        )
    cols.update(_roast_curves(rng, n))

    truth_part = sum(coef * cols[name] for name, coef in ROASTERY_TRUTH.items())
    score = ROASTERY_INTERCEPT + truth_part + rng.normal(0.0, ROASTERY_NOISE_SD, n)
    cols[ROASTERY_RESPONSE] = np.round(score, 2)
    frame = pd.DataFrame(cols)
    return frame


# ---------------------------------------------------------------------------------------------
# Bakery demand
# ---------------------------------------------------------------------------------------------
SCHOOL_HOLIDAY_WEEKS = {1, 8, 14, 15, 22, 30, 31, 32, 33, 34, 35, 43, 52}


def bakery_frame(seed: int = DEFAULT_SEED) -> pd.DataFrame:
    """The "Bakery demand" table as clean values (before the workbook mess is added).

    One row per bakery and week, ordered by week then bakery; yes/no columns as "yes"/"no",
    ``week_start`` as dates. Columns: week_start, bakery, 44 more candidates, loaves_sold.
    """
    rng = np.random.default_rng([seed, 2])
    names = list(PRICE_BASE)
    n_b, n_w = len(names), BAKERY_WEEKS
    n = n_b * n_w
    week = np.repeat(np.arange(n_w), n_b)
    bakery = np.array(names * n_w, dtype=object)
    b_idx = np.tile(np.arange(n_b), n_w)
    dates = np.array([BAKERY_FIRST_WEEK + dt.timedelta(weeks=int(w)) for w in week], dtype=object)
    woy = np.array([d.isocalendar()[1] for d in dates])
    summer = np.cos(2 * np.pi * (woy - 28) / 52.0)  # +1 in mid-July, -1 in mid-January

    def town(values: np.ndarray) -> np.ndarray:
        """One value per week shared by every bakery of the town."""
        return values[week]

    def per_bakery_noise(sd: float) -> np.ndarray:
        return rng.normal(0.0, sd, n)

    c: dict[str, np.ndarray] = {}
    c["week_start"] = dates
    c["bakery"] = bakery
    # weather (a town-wide week value, plus small local differences)
    mean_temp = town(
        11.0 + 8.0 * np.cos(2 * np.pi * (np.arange(n_w) % 52 - 28) / 52) + rng.normal(0, 2.2, n_w)
    )
    mean_temp = mean_temp + per_bakery_noise(0.4)
    c["mean_temp_c"] = np.round(mean_temp, 1)
    c["max_temp_c"] = np.round(mean_temp + 4.5 + per_bakery_noise(1.0), 1)
    c["min_temp_c"] = np.round(mean_temp - 4.5 + per_bakery_noise(1.0), 1)
    p_rain = np.clip(0.48 - 0.10 * summer, 0.05, 0.95)
    rain_days = rng.binomial(7, p_rain)
    rain_mm = np.round(rain_days * rng.gamma(2.0, 2.2, n), 1)
    c["rain_mm"] = rain_mm
    c["rain_days"] = rain_days.astype(float)
    with np.errstate(divide="ignore", invalid="ignore"):
        c["rain_per_wet_day_mm"] = np.where(
            rain_days > 0, np.round(rain_mm / np.maximum(rain_days, 1), 2), np.nan
        )
    c["sunshine_hours"] = np.round(
        np.clip(32 + 18 * summer - 2.5 * rain_days + rng.normal(0, 5, n), 2, 80), 1
    )
    c["wind_kmh"] = np.round(np.clip(rng.normal(16 - 3 * summer, 5, n), 0, None), 1)
    c["humidity_pct"] = np.round(
        np.clip(75 - 8 * summer + 2 * rain_days + rng.normal(0, 4, n), 30, 100), 0
    )
    c["frost_days"] = np.where(
        mean_temp < 6, rng.binomial(7, np.clip((6 - mean_temp) / 8, 0, 1)), 0
    ).astype(float)
    c["snow_days"] = np.where(mean_temp < 3, rng.binomial(3, 0.3, n), 0).astype(float)
    # calendar
    school = np.isin(woy, list(SCHOOL_HOLIDAY_WEEKS))
    c["school_holiday"] = np.where(school, "yes", "no").astype(object)
    public_days = np.where(np.isin(woy, [1, 14, 18, 22, 35, 52]), 1, 0) + np.where(woy == 52, 1, 0)
    c["public_holiday_days"] = public_days.astype(float)
    day_of_month = np.array([d.day for d in dates])
    c["payday_week"] = np.where(day_of_month >= 24, "yes", "no").astype(object)
    # town and shop context
    tourism = town(np.clip(40 + 30 * summer[::n_b] + rng.normal(0, 6, n_w), 0, 100))
    c["tourism_index"] = np.round(tourism, 1)
    event = rng.random(n) < (0.07 + 0.05 * (summer > 0.3))
    c["local_event"] = np.where(event, "yes", "no").astype(object)
    shop_size = np.array([1.0, 1.1, 0.8, 1.25, 1.0, 0.9])[b_idx]
    footfall = np.round(
        shop_size * (11000 + 60 * tourism + 2500 * event + rng.normal(0, 900, n)), 0
    )
    c["footfall_count"] = footfall
    promo_levels = list(BAKERY_LEVEL_TRUTH["promotion"])
    promotion = rng.choice(promo_levels, size=n, p=[0.68, 0.12, 0.08, 0.12]).astype(object)
    c["promotion"] = promotion
    flour = town(np.round(100 + np.cumsum(rng.normal(0.15, 1.2, n_w)), 1))
    c["flour_cost_index"] = flour
    c["butter_cost_index"] = np.round(town(100 + np.cumsum(rng.normal(0.1, 1.5, n_w))), 1)
    # the price rule: a pricing decision that reacts to season, events, promotions and flour cost
    price = (
        np.array([PRICE_BASE[b] for b in bakery])
        + PRICE_RULE["tourism_index"] * c["tourism_index"]
        + PRICE_RULE["local_event"] * event
        + PRICE_RULE["flour_cost_index"] * (flour - 100.0)
        + np.array([PRICE_RULE["promotion"][p] for p in promotion])
        + rng.normal(0.0, PRICE_NOISE_SD, n)
    )
    price = np.round(price * 20.0) / 20.0  # prices end in .x0 or .x5
    c["price"] = price
    c["competitor_price"] = np.round(price * 0.6 + 1.4 + rng.normal(0, 0.12, n), 2)
    c["staff_hours"] = np.round(shop_size * rng.normal(160, 12, n), 0)
    c["opening_hours"] = np.where(rng.random(n) < 0.9, 66.0, 60.0) - 6.0 * public_days
    c["seating_open"] = np.where(rng.random(n) < 0.85, "yes", "no").astype(object)
    c["shelf_space_m"] = np.round(shop_size * 12 + rng.normal(0, 0.3, n), 1)
    c["new_products"] = rng.poisson(0.6, n).astype(float)
    c["oven_downtime_hours"] = np.round(
        np.where(rng.random(n) < 0.08, rng.uniform(1, 12, n), 0.0), 1
    )
    c["staff_sick_days"] = rng.poisson(0.8 + 0.6 * (summer < -0.3), n).astype(float)
    c["newspaper_ad"] = np.where(rng.random(n) < 0.1, "yes", "no").astype(object)
    c["radio_ad"] = np.where(town(rng.random(n_w) < 0.08), "yes", "no").astype(object)
    c["online_orders_share_pct"] = np.round(
        np.clip(4 + week / 20 + rng.normal(0, 1.5, n), 0, None), 1
    )
    c["delivery_partner"] = np.where(week >= 60, "yes", "no").astype(object)
    c["roadworks_nearby"] = np.where(rng.random(n) < 0.05, "yes", "no").astype(object)
    c["bus_disruption"] = np.where(town(rng.random(n_w) < 0.06), "yes", "no").astype(object)
    c["sports_on_tv"] = np.where(town(rng.random(n_w) < 0.15), "yes", "no").astype(object)
    c["fuel_price"] = np.round(
        town(1.7 + 0.1 * np.sin(np.arange(n_w) / 15.0) + rng.normal(0, 0.03, n_w)), 3
    )
    c["consumer_confidence"] = np.round(town(-10 + np.cumsum(rng.normal(0, 0.8, n_w))), 1)
    c["unemployment_pct"] = np.round(
        town(4.5 + 0.3 * np.sin(np.arange(n_w) / 30.0) + rng.normal(0, 0.05, n_w)), 2
    )
    c["parking_fee"] = np.round(
        np.array([1.5, 2.0, 0.0, 2.5, 1.8, 1.0])[b_idx] + 0.5 * (week >= 80), 2
    )
    # a competitor opens closer to two of the shops in week 90
    distance = np.array([300, 150, 800, 200, 400, 600], dtype=float)[b_idx]
    c["competitor_distance_m"] = np.where((week >= 90) & np.isin(b_idx, [2, 5]), 120.0, distance)
    c["cafe_seats"] = np.array([12, 20, 6, 24, 16, 10], dtype=float)[b_idx] + 8.0 * (summer > 0.3)
    c["loyalty_members"] = np.round(shop_size * (400 + 3 * week + rng.normal(0, 20, n)), 0)

    base = np.array([BAKERY_LEVEL_TRUTH["bakery"][b] for b in bakery])
    promo_shift = np.array([BAKERY_LEVEL_TRUTH["promotion"][p] for p in promotion])
    yes = {name: (c[name] == "yes").astype(float) for name in ("school_holiday", "local_event")}
    mu = base + promo_shift
    for name, coef in BAKERY_TRUTH.items():
        mu = mu + coef * (yes[name] if name in yes else c[name])
    c[BAKERY_RESPONSE] = np.round(mu + rng.normal(0.0, BAKERY_NOISE_SD, n), 0)
    return pd.DataFrame(c)


# ---------------------------------------------------------------------------------------------
# the mess a real workbook has, decided once from the seed
# ---------------------------------------------------------------------------------------------
def _bakery_mess(frame: pd.DataFrame, seed: int) -> dict[str, object]:
    """Which cells become text numbers, error cells, and where the blank rows go."""
    rng = np.random.default_rng([seed, 3])
    n = len(frame)
    return {
        # thousands separators typed by hand: footfall written as text "12,345"
        "footfall_text": set(rng.choice(n, size=45, replace=False).tolist()),
        # pasted from a till report with stray spaces: " 642 "
        "loaves_text": set(rng.choice(n, size=9, replace=False).tolist()),
        # the weather feed was down: =NA() in sunshine_hours
        "sunshine_na": set(rng.choice(n, size=6, replace=False).tolist()),
        # blank separator rows inserted before these data rows (end of each year, mid-year)
        "blank_before": {52 * 6, 104 * 6, 130 * 6},
    }


def _excel_col(index: int) -> str:
    """0-based column index -> spreadsheet letters (0 -> A, 26 -> AA)."""
    letters = ""
    index += 1
    while index:
        index, rem = divmod(index - 1, 26)
        letters = chr(65 + rem) + letters
    return letters


def _write_roastery(book, sheet, frame: pd.DataFrame, fmt) -> None:
    head = fmt["head"]
    for j, name in enumerate(frame.columns):
        sheet.write_string(0, j, name, head)
    for j, name in enumerate(frame.columns):
        values = frame[name].to_numpy()
        if values.dtype == object:
            for i, v in enumerate(values):
                sheet.write_string(i + 1, j, str(v))
        else:
            for i, v in enumerate(values):
                sheet.write_number(i + 1, j, float(v) + 0.0)
    sheet.freeze_panes(1, 1)
    sheet.set_column(0, 0, 12)


def _write_bakery(book, sheet, frame: pd.DataFrame, mess: dict, fmt) -> None:
    cols = list(frame.columns)
    sheet.write_string(0, 0, "Weekly bread sales, all six shops (invented demo data)", fmt["title"])
    sheet.write_string(
        1,
        0,
        "Copied from the till exports each Monday; weather from the town station. Prices are per loaf.",
        fmt["note"],
    )
    hdr = BAKERY_HEADER_ROW - 1
    for j, name in enumerate(cols):
        sheet.write_string(hdr, j, name, fmt["head"])
    col_of = {name: j for j, name in enumerate(cols)}
    r = hdr + 1
    for i in range(len(frame)):
        if i in mess["blank_before"]:
            r += 1  # a blank row: nothing written
        row = frame.iloc[i]
        for name in cols:
            j = col_of[name]
            v = row[name]
            if name == "week_start":
                sheet.write_datetime(r, j, dt.datetime.combine(v, dt.time()), fmt["date"])
            elif name == "footfall_count" and i in mess["footfall_text"]:
                sheet.write_string(r, j, f"{int(v):,}")
            elif name == BAKERY_RESPONSE and i in mess["loaves_text"]:
                sheet.write_string(r, j, f" {int(v)} ")
            elif name == "sunshine_hours" and i in mess["sunshine_na"]:
                sheet.write_formula(r, j, "=NA()", None, "#N/A")
            elif name == "rain_per_wet_day_mm":
                # a live formula in every row, with its cached value; dry weeks divide by zero
                rain = f"{_excel_col(col_of['rain_mm'])}{r + 1}"
                days = f"{_excel_col(col_of['rain_days'])}{r + 1}"
                cached = "#DIV/0!" if np.isnan(v) else float(v)
                sheet.write_formula(r, j, f"=ROUND({rain}/{days},2)", None, cached)
            elif isinstance(v, str):
                sheet.write_string(r, j, v)
            else:
                sheet.write_number(r, j, float(v) + 0.0)  # + 0.0 turns -0.0 into 0.0
        r += 1
    sheet.freeze_panes(BAKERY_HEADER_ROW, 2)
    sheet.set_column(0, 0, 11)
    sheet.set_column(1, 1, 13)


ABOUT_TEXT = [
    ("Tamis demo workbook", "title"),
    (
        "Everything in this workbook is invented: simulated from a fixed seed, so the true answer is known.",
        None,
    ),
    ("", None),
    ("Roastery lots", "head"),
    (
        "A small specialty coffee roaster cupped 96 green-coffee lots (cup_score, about 80 to 90 points). "
        "For each lot there are 240 candidate columns: where and how it was grown (altitude, monthly rain, "
        "temperature and sunshine), how it was processed (fermentation, drying), the green bean itself "
        "(density, moisture, defects) and the roast curve read every 30 seconds (bean and exhaust "
        "temperature, rate of rise, burner and airflow). lot_id only names the lot.",
        None,
    ),
    (
        "There are more columns than lots. Only six columns truly move the score: farm_altitude_m, "
        "fermentation_hours, bean_density_g_l, defects_per_300g, rain_oct_mm and bean_temp_540s_c.",
        None,
    ),
    ("", None),
    ("Bakery demand", "head"),
    (
        "Three years (156 weeks) of bread sales at six neighbourhood bakeries (loaves_sold), with 45 "
        "candidate columns: weather, school holidays, promotions, price, local events, costs and shop details. "
        "The sheet looks like a real one: notes above the headings, blank rows, numbers typed as text, "
        "a few error cells.",
        None,
    ),
    (
        "The question: what does a higher price do to sales? The shops raise prices in the tourist season and "
        "in event weeks and cut them during promotions, and those also change sales, so comparing weeks with "
        "high and low prices alone gives the wrong answer. Choosing the controls for both sales and price "
        "(double selection) recovers the true effect: 140 fewer loaves a week per 1.00 on the price.",
        None,
    ),
    ("", None),
    (
        "The true coefficients of both sheets are listed in TRUTH.md beside the generator (demo/TRUTH.md).",
        None,
    ),
]


def build_demo_workbook(path: str | Path = DEFAULT_PATH, seed: int = DEFAULT_SEED) -> Path:
    """Write the demo workbook to ``path`` (overwritten) and return the path.

    The same seed gives the same cell values on every run and machine.
    """
    import xlsxwriter  # heavy-ish import kept local so importing the demo package is instant

    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    roastery = roastery_frame(seed)
    bakery = bakery_frame(seed)
    mess = _bakery_mess(bakery, seed)
    tmp = path.with_name(path.name + ".part")
    book = xlsxwriter.Workbook(
        str(tmp), {"strings_to_numbers": False, "strings_to_formulas": False}
    )
    # fixed document dates so repeated builds differ in nothing but what the seed decides
    book.set_properties(
        {
            "title": "Tamis demo workbook",
            "comments": f"Invented data, seed {seed}",
            "created": dt.datetime(2026, 12, 1, 0, 0, 0),
        }
    )
    fmt = {
        "head": book.add_format({"bold": True}),
        "title": book.add_format({"bold": True, "font_size": 14}),
        "note": book.add_format({"italic": True, "font_color": "#555555"}),
        "date": book.add_format({"num_format": "yyyy-mm-dd"}),
    }
    _write_roastery(book, book.add_worksheet(ROASTERY_SHEET), roastery, fmt)
    _write_bakery(book, book.add_worksheet(BAKERY_SHEET), bakery, mess, fmt)
    about = book.add_worksheet(ABOUT_SHEET)
    wrap = book.add_format({"text_wrap": True, "valign": "top"})
    about.set_column(0, 0, 110)
    for i, (text, style) in enumerate(ABOUT_TEXT):
        about.write_string(i, 0, text, fmt[style] if style else wrap)
    book.close()
    tmp.replace(path)  # never leave a half-written workbook at the destination
    return path


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(
        prog="python -m demo.generate", description=__doc__.splitlines()[0]
    )
    parser.add_argument(
        "--out", type=Path, default=DEFAULT_PATH, help="where to write (default: %(default)s)"
    )
    parser.add_argument(
        "--seed", type=int, default=DEFAULT_SEED, help="random seed (default: %(default)s)"
    )
    args = parser.parse_args(argv)
    out = build_demo_workbook(args.out, args.seed)
    print(out, file=sys.stderr)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
