#!/usr/bin/env python3
"""Monte Carlo of a winter season for Northvale Water's repair crews (invented scenario).

Reads the selected samplers (verified on load), simulates ``n_seasons`` seasons and writes risk
figures: crew-hour demand against capacity (main breaks and booster pump failures), restoration
times, and season cost quantiles. All randomness comes from one root seed through named streams,
so the figures are reproducible.

Model per season: breaks per district-day from ``daily_breaks``; each break takes repair hours
from ``repair_hours`` (crew-hours) at a cost per crew-hour from ``crew_hour_cost``; a share of
breaks waits for a spare part (``spare_part_wait``, elapsed time, not crew time); each booster
pump (new at the season start) fails after ``pump_life`` hours, adding a fixed repair job.
"""

from __future__ import annotations

import argparse
import json
from pathlib import Path

import numpy as np

import samplewright as sw


def simulate(args: argparse.Namespace, cfg: dict) -> dict:
    repair = sw.load_sampler(args.repair)
    cost = sw.load_sampler(args.cost)
    breaks = sw.load_sampler(args.breaks)
    wait = sw.load_sampler(args.wait)
    pumps = sw.load_sampler(args.pumps)
    seed = int(cfg["seed"])
    n_seasons, days, districts = int(cfg["n_seasons"]), int(cfg["days"]), int(cfg["districts"])
    capacity = float(cfg["crews"]) * float(cfg["crew_hours_per_day"])

    # breaks per district-day, summed over districts -> breaks per day (season x day)
    counts = breaks.draw((n_seasons, days, districts), rng=sw.stream_rng(seed, "breaks"))
    per_day = counts.sum(axis=2).astype(np.int64)
    n_jobs = int(per_day.sum())
    day_of_job = np.repeat(np.arange(n_seasons * days), per_day.ravel())

    hours = repair.draw(n_jobs, rng=sw.stream_rng(seed, "repair_hours"))
    rate = cost.draw(n_jobs, rng=sw.stream_rng(seed, "crew_hour_cost"))
    needs_part = sw.stream_rng(seed, "needs_part").random(n_jobs) < float(
        cfg["share_needing_spare_part"]
    )
    part_wait = np.where(needs_part, wait.draw(n_jobs, rng=sw.stream_rng(seed, "part_wait")), 0.0)
    restore = hours + part_wait

    demand = np.bincount(day_of_job, weights=hours, minlength=n_seasons * days)
    demand = demand.reshape(n_seasons, days)
    # booster pumps, modelled as new at the start of the season: a failure on day d adds a
    # fixed repair job to that day's crew-hours
    n_pumps = int(cfg["booster_pumps"])
    pump_life = pumps.draw((n_seasons, n_pumps), rng=sw.stream_rng(seed, "pump_life"))
    fail_day = np.floor(pump_life / 24.0).astype(np.int64)
    failed = fail_day < days
    rows = np.repeat(np.arange(n_seasons), n_pumps).reshape(n_seasons, n_pumps)[failed]
    np.add.at(demand, (rows, fail_day[failed]), float(cfg["pump_repair_crew_hours"]))
    pump_failures = failed.sum(axis=1)
    overload_days = (demand > capacity).sum(axis=1)
    season_of_job = day_of_job // days
    season_cost = np.bincount(season_of_job, weights=hours * rate, minlength=n_seasons)

    q = [0.5, 0.9, 0.95, 0.99]
    cost_q = np.quantile(season_cost, q)
    tail = season_cost[season_cost >= cost_q[3]]
    return {
        "scenario": "Northvale Water winter repair crews (invented data)",
        "n_seasons": n_seasons,
        "samplers": {
            name: sw.read_metadata(path)["content_hash"]
            for name, path in (
                ("repair_hours", args.repair),
                ("crew_hour_cost", args.cost),
                ("daily_breaks", args.breaks),
                ("spare_part_wait", args.wait),
                ("pump_life", args.pumps),
            )
        },
        "chosen_methods": {
            "repair_hours": repair.method,
            "crew_hour_cost": cost.method,
            "daily_breaks": breaks.method,
            "spare_part_wait": wait.method,
            "pump_life": pumps.method,
        },
        "breaks_per_season_mean": float(per_day.sum(axis=1).mean()),
        "crew_hour_capacity_per_day": capacity,
        "pump_failures_per_season_mean": float(pump_failures.mean()),
        "daily_demand_p99_crew_hours": float(np.quantile(demand, 0.99)),
        "prob_any_overload_day": float(np.mean(overload_days > 0)),
        "overload_days_mean": float(overload_days.mean()),
        "overload_days_p95": float(np.quantile(overload_days, 0.95)),
        "restore_hours_p95": float(np.quantile(restore, 0.95)),
        "restore_hours_p99": float(np.quantile(restore, 0.99)),
        "prob_restore_over_48h": float(np.mean(restore > 48.0)),
        "season_cost_eur": {f"p{round(p * 100)}": float(v) for p, v in zip(q, cost_q, strict=True)},
        "season_cost_expected_shortfall_99_eur": float(tail.mean()),
        "caution": (
            "Invented data; a fitted distribution is a model. Check inputs and tails and "
            "defer to local codes and licensed practice before using such figures."
        ),
        "_season_cost": season_cost,
        "_overload_days": overload_days,
    }


def plot(result: dict, path: str) -> None:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    cost = result.pop("_season_cost") / 1e6
    over = result.pop("_overload_days")
    fig, (a, b) = plt.subplots(1, 2, figsize=(10, 4))
    a.hist(cost, bins=60, color="#4a7ab5")
    for key, style in (("p95", "--"), ("p99", ":")):
        a.axvline(result["season_cost_eur"][key] / 1e6, color="k", ls=style, label=key)
    a.set(xlabel="season repair cost (million EUR)", ylabel="seasons", title="Season cost")
    a.legend()
    b.hist(over, bins=np.arange(over.max() + 2) - 0.5, color="#b5654a")
    b.set(
        xlabel="days with crew-hour demand above capacity",
        ylabel="seasons",
        title="Overload days per season",
    )
    fig.suptitle("Northvale Water (invented data): simulated winters")
    fig.tight_layout()
    fig.savefig(path, dpi=110)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__)
    for name in ("repair", "cost", "breaks", "wait", "pumps", "settings", "out", "plot"):
        ap.add_argument(f"--{name}", required=True)
    args = ap.parse_args()
    result = simulate(args, json.loads(args.settings))
    plot(result, args.plot)
    result = {k: v for k, v in result.items() if not k.startswith("_")}
    Path(args.out).write_text(json.dumps(result, indent=2) + "\n")
    print(json.dumps(result, indent=2))


if __name__ == "__main__":
    main()
