#!/usr/bin/env python3
"""Generate the invented demo data for the example pipeline (fixed seed, so always the same).

Scenario (invented): "Northvale Water", a regional water utility, plans repair crews for the
coming winter. Its records (all made up here) are:

* data/repairs.csv: one row per past main repair: district, pipe material, crew size, repair
  hours (a heavy right tail: most jobs take a few hours, a few take days) and cost per crew-hour.
* data/breaks.parquet: breaks reported per district per winter day over past winters
  (24 districts).
* data/pumps.csv: hours each booster pump ran until it failed, or until the records were cut
  off while it was still running (``still_running`` = 1: a right-censored value).
* data/spare_part_wait.yaml: the network engineer's drawn CDF of the wait for a spare part
  (hours), from experience with the supplier: never under 2 h, usually within a day, a 10 %
  chance of a weekend delay (a step at 60 h), at most a week.

Nothing here is real data. Files are written only if missing (pass --force to rewrite).
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pandas as pd

HERE = Path(__file__).resolve().parent
DATA = HERE / "data"
SEED = 20261201
DISTRICTS = [f"D{i:02d}" for i in range(1, 25)]


def make_repairs(rng: np.random.Generator, n: int = 30_000) -> pd.DataFrame:
    district = rng.choice(DISTRICTS, n)
    material = rng.choice(
        ["cast_iron", "ductile", "pvc", "asbestos_cement"], n, p=[0.35, 0.3, 0.25, 0.1]
    )
    crew = rng.choice([2, 3, 4], n, p=[0.5, 0.35, 0.15])
    # body: lognormal hours; one job in twelve is a long one (Pareto-like tail)
    hours = rng.lognormal(np.log(4.0), 0.55, n)
    long_job = rng.random(n) < 1 / 12
    hours[long_job] = 8.0 * (1.0 + rng.pareto(2.5, long_job.sum()))
    rate = rng.gamma(20.0, 4.2, n)  # EUR per crew-hour, around 84
    return pd.DataFrame(
        {
            "job_id": np.arange(1, n + 1),
            "district": district,
            "material": material,
            "crew_size": crew,
            "hours": np.round(hours, 3),
            "cost_per_crew_hour": np.round(rate, 2),
            "reported_lat": np.round(rng.uniform(51.2, 51.9, n), 6),
            "reported_lon": np.round(rng.uniform(4.1, 5.3, n), 6),
        }
    )


def make_breaks(rng: np.random.Generator, winters: int = 30, days: int = 120) -> pd.DataFrame:
    """Breaks per district per winter day; over-dispersed (the rate rises on frosty days)."""
    n_days = winters * days
    frost = rng.normal(-1.0, 4.0, n_days)  # one network-wide minimum temperature per day
    rows = n_days * len(DISTRICTS)
    day_frost = np.repeat(frost, len(DISTRICTS))
    lam = np.exp(-0.9 - 0.12 * day_frost) * rng.gamma(4.0, 0.25, rows)
    return pd.DataFrame(
        {
            "winter": np.repeat(np.arange(1996, 1996 + winters), days * len(DISTRICTS)),
            "day": np.tile(np.repeat(np.arange(1, days + 1), len(DISTRICTS)), winters),
            "district": np.tile(DISTRICTS, n_days),
            "min_temp_c": np.round(day_frost, 4),
            "breaks": rng.poisson(lam),
            "network_pressure_bar": rng.normal(4.2, 0.3, rows),
            "night_flow_m3h": rng.gamma(9.0, 14.0, rows),
        }
    )


def make_pumps(rng: np.random.Generator, n: int = 400) -> pd.DataFrame:
    """Booster pump lives (Weibull wear-out); pumps installed later are still running."""
    life = 9000.0 * rng.weibull(1.8, n)
    observed_for = rng.uniform(2000.0, 20000.0, n)  # hours since installation at cut-off
    still_running = life > observed_for
    return pd.DataFrame(
        {
            "pump_id": [f"P{i:04d}" for i in range(1, n + 1)],
            "station": rng.choice([f"S{i}" for i in range(1, 9)], n),
            "hours": np.round(np.minimum(life, observed_for), 1),
            "still_running": still_running.astype(int),
        }
    )


KNOTS = """\
# Wait for a spare part (hours), drawn by the network engineer.
# x: hours, p: probability the wait is at most x. A flat stretch carries no probability;
# two points at the same x make a step (here: weekend delays of exactly 60 h).
x: [2, 6, 12, 24, 48, 60, 60, 96, 168]
p: [0, 0.25, 0.55, 0.8, 0.9, 0.9, 0.97, 0.99, 1.0]
"""


def main(force: bool = False) -> None:
    DATA.mkdir(exist_ok=True)
    rng = np.random.default_rng(SEED)
    repairs, breaks, pumps = rng.spawn(3)
    if force or not (DATA / "repairs.csv").exists():
        make_repairs(repairs).to_csv(DATA / "repairs.csv", index=False)
    if force or not (DATA / "breaks.parquet").exists():
        make_breaks(breaks).to_parquet(DATA / "breaks.parquet", index=False)
    if force or not (DATA / "pumps.csv").exists():
        make_pumps(pumps).to_csv(DATA / "pumps.csv", index=False)
    if force or not (DATA / "spare_part_wait.yaml").exists():
        (DATA / "spare_part_wait.yaml").write_text(KNOTS)


if __name__ == "__main__":
    main(force="--force" in sys.argv[1:])
