#!/usr/bin/env python3
"""Generate the invented demo data for the example pipeline (fixed seed, so always the same).

Scenario (invented): "Northvale Water", a regional water utility, plans repair crews for the
coming winter. Its records (all made up here) are:

* data/repairs.csv: one row per past main repair: district, pipe material, crew size, repair
  hours (a heavy right tail: most jobs take a few hours, a few take days), cost per crew-hour and
  hours of traffic control. Long repairs cost more per hour (night and weekend rates, hired
  plant): hours and rate share a Gaussian-copula dependence with a rank correlation near 0.5.
  Most breaks lie under verges and footpaths and need no traffic control at all (exactly 0 h);
  breaks under a road need a lane closure of a few hours (a spike at zero plus a long tail).
* data/breaks.parquet: breaks reported per district per winter day over past winters
  (24 districts). A network-wide frost index follows an AR(1) process from day to day, so cold
  spells last several days and the daily counts are serially dependent: resampling single days
  as if they were independent understates the uncertainty of any average.
* data/pumps.csv: hours each booster pump ran until it failed, or until the records were cut
  off while it was still running (``still_running`` = 1: a right-censored value).
* data/claims.csv: household burst-pipe damage claims shared by a local insurer. Each policy has
  its own deductible: damage below it never reaches the insurer (left truncation, per row), and
  its own limit: damage above it is recorded at the limit (``at_limit`` = 1: right-censored).
  ``damage_eur`` is the assessed ground-up damage, capped at the limit.
* data/spare_part_wait.yaml: the network engineer's drawn CDF of the wait for a spare part
  (hours), from experience with the supplier: never under 2 h, usually within a day, a 10 %
  chance of a weekend delay (a step at 60 h), at most a week.

Two more inputs have no data at all and live in config.yaml: the supplier's lead time for the
new booster pump model (three points from the supplier's engineer) and the day rate of a hired
stand-in pump (three quantiles from hire firms' quotes).

Nothing here is real data. Files are written only if missing or made by an earlier version of
this script (its ``DATA_VERSION``, recorded in data/VERSION); pass --force to rewrite them all.
Checking takes no numpy or pandas, so the Snakefile can call this script on every planning run.
"""

from __future__ import annotations

import sys
from pathlib import Path
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    import numpy as np
    import pandas as pd

HERE = Path(__file__).resolve().parent
DATA = HERE / "data"
SEED = 20261201
# Bump when the generated data change, so stale copies are rewritten on the next run.
DATA_VERSION = "2"
STAMP = DATA / "VERSION"
FILES = ("repairs.csv", "breaks.parquet", "pumps.csv", "claims.csv", "spare_part_wait.yaml")
DISTRICTS = [f"D{i:02d}" for i in range(1, 25)]


def _ranks(x: np.ndarray) -> np.ndarray:
    """0-based ranks of ``x`` (ties broken by position)."""
    import numpy as np

    out = np.empty(x.size, dtype=np.int64)
    out[np.argsort(x, kind="stable")] = np.arange(x.size)
    return out


def make_repairs(rng: np.random.Generator, n: int = 30_000) -> pd.DataFrame:
    """Past main repairs; hours and cost per crew-hour move together (rank correlation ~0.5)."""
    import numpy as np
    import pandas as pd

    district = rng.choice(DISTRICTS, n)
    material = rng.choice(
        ["cast_iron", "ductile", "pvc", "asbestos_cement"], n, p=[0.35, 0.3, 0.25, 0.1]
    )
    crew = rng.choice([2, 3, 4], n, p=[0.5, 0.35, 0.15])
    # body: lognormal hours; one job in twelve is a long one (Pareto-like tail)
    hours = rng.lognormal(np.log(4.0), 0.55, n)
    long_job = rng.random(n) < 1 / 12
    hours[long_job] = 8.0 * (1.0 + rng.pareto(2.5, long_job.sum()))
    # Gaussian copula: the rate's normal score leans on the hours' normal score. A correlation
    # of 2 sin(pi * 0.5 / 6) = 0.518 gives a Spearman rank correlation of 0.5.
    rho = 2.0 * np.sin(np.pi * 0.5 / 6.0)
    z_hours = np.sort(rng.standard_normal(n))[_ranks(hours)]  # normal scores of the hours
    z_rate = rho * z_hours + np.sqrt(1.0 - rho**2) * rng.standard_normal(n)
    rate = np.sort(rng.gamma(20.0, 4.2, n))[_ranks(z_rate)]  # EUR per crew-hour, around 84
    # traffic control: none for 62 % of breaks, else a lane closure of a few hours
    under_road = rng.random(n) < 0.38
    traffic = np.where(under_road, rng.lognormal(np.log(5.0), 0.7, n), 0.0)
    return pd.DataFrame(
        {
            "job_id": np.arange(1, n + 1),
            "district": district,
            "material": material,
            "crew_size": crew,
            "hours": np.round(hours, 3),
            "cost_per_crew_hour": np.round(rate, 2),
            "traffic_control_hours": np.round(traffic, 2),
            "reported_lat": np.round(rng.uniform(51.2, 51.9, n), 6),
            "reported_lon": np.round(rng.uniform(4.1, 5.3, n), 6),
        }
    )


def make_breaks(rng: np.random.Generator, winters: int = 30, days: int = 120) -> pd.DataFrame:
    """Breaks per district per winter day; over-dispersed and serially dependent.

    A network-wide frost index follows an AR(1) process within each winter (day-to-day
    correlation 0.8), and the break rate of every district rises on frosty days.
    """
    import numpy as np
    import pandas as pd

    phi, mean, sd = 0.8, -1.0, 4.0  # AR(1) coefficient, mean and spread of the daily minimum
    shocks = rng.standard_normal((winters, days))
    frost = np.empty((winters, days))
    frost[:, 0] = shocks[:, 0]
    for d in range(1, days):
        frost[:, d] = phi * frost[:, d - 1] + np.sqrt(1.0 - phi**2) * shocks[:, d]
    daily_min = (mean + sd * frost).ravel()  # one network-wide minimum temperature per day
    n_days = winters * days
    rows = n_days * len(DISTRICTS)
    day_frost = np.repeat(daily_min, len(DISTRICTS))
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
    import numpy as np
    import pandas as pd

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


def make_claims(rng: np.random.Generator, n_incidents: int = 5_000) -> pd.DataFrame:
    """Burst-pipe damage claims as an insurer records them: above the deductible, capped.

    Ground-up damage is lognormal (median 3,500 EUR); each policy's deductible hides smaller
    losses (left truncation) and its limit caps larger ones (right censoring).
    """
    import numpy as np
    import pandas as pd

    damage = rng.lognormal(np.log(3_500.0), 1.2, n_incidents)
    deductible = rng.choice([250.0, 500.0, 1_000.0, 2_500.0], n_incidents, p=[0.2, 0.4, 0.3, 0.1])
    limit = rng.choice([25_000.0, 50_000.0, 100_000.0], n_incidents, p=[0.3, 0.5, 0.2])
    reported = damage > deductible
    damage, deductible, limit = damage[reported], deductible[reported], limit[reported]
    at_limit = damage >= limit
    n = int(reported.sum())
    return pd.DataFrame(
        {
            "claim_id": [f"C{i:05d}" for i in range(1, n + 1)],
            "policy_id": [f"H{i:06d}" for i in rng.choice(900_000, n, replace=False)],
            "deductible_eur": deductible,
            "limit_eur": limit,
            "damage_eur": np.round(np.minimum(damage, limit), 2),
            "at_limit": at_limit.astype(int),
            "paid_eur": np.round(np.minimum(damage, limit) - deductible, 2),
        }
    )


KNOTS = """\
# Wait for a spare part (hours), drawn by the network engineer.
# x: hours, p: probability the wait is at most x. A flat stretch carries no probability;
# two points at the same x make a step (here: weekend delays of exactly 60 h).
x: [2, 6, 12, 24, 48, 60, 60, 96, 168]
p: [0, 0.25, 0.55, 0.8, 0.9, 0.9, 0.97, 0.99, 1.0]
"""


def up_to_date() -> bool:
    """Whether every data file exists and was made by this version of the script."""
    if not STAMP.is_file() or STAMP.read_text().strip() != DATA_VERSION:
        return False
    return all((DATA / f).is_file() for f in FILES)


def main(force: bool = False) -> None:
    """Write the data files that are missing (all of them when stale or ``force``)."""
    if not force and up_to_date():
        return
    import numpy as np

    DATA.mkdir(exist_ok=True)
    stale = force or not STAMP.is_file() or STAMP.read_text().strip() != DATA_VERSION
    rng = np.random.default_rng(SEED)
    repairs, breaks, pumps, claims = rng.spawn(4)
    makers = {
        "repairs.csv": lambda p: make_repairs(repairs).to_csv(p, index=False),
        "breaks.parquet": lambda p: make_breaks(breaks).to_parquet(p, index=False),
        "pumps.csv": lambda p: make_pumps(pumps).to_csv(p, index=False),
        "claims.csv": lambda p: make_claims(claims).to_csv(p, index=False),
        "spare_part_wait.yaml": lambda p: p.write_text(KNOTS),
    }
    for name, make in makers.items():
        path = DATA / name
        if stale or not path.exists():
            tmp = path.with_name(f".{name}.tmp")
            make(tmp)
            tmp.replace(path)  # atomic: a reader never sees half a file
            print(f"make_data.py: wrote data/{name}", file=sys.stderr)
    STAMP.write_text(DATA_VERSION + "\n")


if __name__ == "__main__":
    main(force="--force" in sys.argv[1:])
