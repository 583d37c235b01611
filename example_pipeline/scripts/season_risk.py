#!/usr/bin/env python3
"""Monte Carlo of a winter season for Northvale Water's repair crews (invented scenario).

Reads the artifacts samplewright's rules made (every sampler verified on load), simulates
``n_seasons`` seasons and writes risk figures, each with its Monte Carlo standard error:
crew-hour demand against capacity, restoration times and season cost. All randomness comes from
one seed through named streams, so the figures are reproducible on any machine and job order.

Model per season: breaks per district-day from ``daily_breaks``; each break takes repair hours
(crew-hours) at a cost per crew-hour, drawn together from the joint sampler ``repair_cost``
(long repairs cost more per hour); a share of breaks waits for a spare part (``spare_part_wait``,
elapsed time, not crew time); a break under a road needs traffic control
(``traffic_control_hours``: mostly 0 h); a share of breaks floods a property, with damage from
``damage_claims`` (fitted to an insurer's claims through their deductibles and limits); each
booster pump (new at the season start) fails after ``pump_life`` hours, adding a repair job and
a hired stand-in pump for the new model's lead time (``pump_lead_time`` x ``pump_hire_rate``,
both from expert judgement, no data).

Beside the central figures the script reports:

* the season cost with and without the hours/rate dependence (the same seasons, with the
  selected ``repair_hours`` and ``crew_hour_cost`` samplers drawn independently);
* parameter uncertainty: an outer loop over the ``repair_hours`` replicates (one plausible world
  each) around an inner loop of seasons, so the spread between worlds shows how much the finite
  record of repairs leaves open;
* the data's own bootstrap intervals computed by the rules (a block bootstrap for the serially
  dependent daily breaks, next to the iid one that ignores the dependence).
"""

from __future__ import annotations

import argparse
import json
import math
from pathlib import Path
from typing import Any

import numpy as np

import samplewright as sw

CAUTION = (
    "Invented data. A fitted distribution is a model, not the truth: check each input and its "
    "tail before decisions on safety or money rest on these figures, and defer to local codes "
    "and licensed engineering practice."
)
# artifact arguments: option -> what it is (all required); samplers are loaded and verified
SAMPLERS = {
    "breaks": "selected sampler of daily_breaks",
    "joint": "joint sampler of repair hours and cost per crew-hour (repair_cost)",
    "repair": "selected sampler of repair_hours",
    "cost": "selected sampler of crew_hour_cost",
    "replicates": "parameter replicates of repair_hours (an ensemble artifact)",
    "traffic": "selected sampler of traffic_control_hours",
    "wait": "selected sampler of spare_part_wait",
    "pumps": "selected sampler of pump_life",
    "damage": "selected sampler of damage_claims",
    "lead-time": "selected sampler of pump_lead_time",
    "hire-rate": "selected sampler of pump_hire_rate",
}
FILES = {
    "joint-draws": "stored draws of the joint sampler (Parquet)",
    "intervals-repair": "bootstrap intervals of repair_hours (JSON)",
    "intervals-breaks": "bootstrap intervals of daily_breaks (JSON)",
}


# --- rounding to what the Monte Carlo error supports --------------------------------------------


def _round_sig(x: float, digits: int = 2) -> float | int:
    """``x`` to ``digits`` significant digits (an int when no decimals are left)."""
    if x == 0.0 or not math.isfinite(x):
        return x
    decimals = digits - 1 - math.floor(math.log10(abs(x)))
    return int(round(x, decimals)) if decimals <= 0 else round(x, decimals)


def _round_to(x: float, se: float) -> float | int:
    """``x`` rounded to the decimal of the second significant digit of ``se``."""
    if se <= 0.0 or not math.isfinite(se):
        return _round_sig(x, 4)
    decimals = 1 - math.floor(math.log10(se))
    return int(round(x, decimals)) if decimals <= 0 else round(x, decimals)


def figure(draws: np.ndarray, statistic: str) -> dict[str, Any]:
    """A statistic of independent draws with its Monte Carlo standard error and 95 % interval."""
    r = sw.mc_error(np.asarray(draws, dtype=np.float64).ravel(), statistic)
    se = _round_sig(r.standard_error)
    return {
        "value": _round_to(r.estimate, r.standard_error),
        "mc_standard_error": se,
        "mc_interval_95": [_round_to(r.low, r.standard_error), _round_to(r.high, r.standard_error)],
    }


def spread(values: np.ndarray, level: float = 0.9) -> dict[str, Any]:
    """Median and central ``level`` interval across worlds, to three significant digits."""
    lo, mid, hi = np.quantile(values, [(1 - level) / 2, 0.5, (1 + level) / 2])
    return {
        "median": _round_sig(float(mid), 3),
        f"interval_{round(level * 100)}": [_round_sig(float(lo), 3), _round_sig(float(hi), 3)],
    }


# --- the season model ---------------------------------------------------------------------------


def draw_breaks(
    breaks: sw.Sampler, n_seasons: int, cfg: dict[str, Any], rng: np.random.Generator
) -> np.ndarray:
    """Breaks per day, summed over districts: shape (n_seasons, days)."""
    days, districts = int(cfg["days"]), int(cfg["districts"])
    counts = breaks.draw((n_seasons, days, districts), rng=rng)
    return counts.sum(axis=2).astype(np.int64)


def daily_demand(hours: np.ndarray, per_day: np.ndarray) -> np.ndarray:
    """Crew-hours per season-day from the jobs' hours (jobs in day order)."""
    day_of_job = np.repeat(np.arange(per_day.size), per_day.ravel())
    return np.bincount(day_of_job, weights=hours, minlength=per_day.size).reshape(per_day.shape)


def per_season(values: np.ndarray, per_day: np.ndarray) -> np.ndarray:
    """Sum of per-job ``values`` within each season (jobs in day order)."""
    season_of_job = np.repeat(np.arange(per_day.shape[0]), per_day.sum(axis=1))
    return np.bincount(season_of_job, weights=values, minlength=per_day.shape[0])


def simulate(art: dict[str, Any], cfg: dict[str, Any]) -> dict[str, np.ndarray]:
    """Central run: ``n_seasons`` seasons with every input at its selected sampler."""
    seed, n_seasons, days = int(cfg["seed"]), int(cfg["n_seasons"]), int(cfg["days"])

    def rng(name: str) -> np.random.Generator:
        return sw.stream_rng(seed, "central", name)

    per_day = draw_breaks(art["breaks"], n_seasons, cfg, rng("breaks"))
    n_jobs = int(per_day.sum())
    joint = art["joint"]
    pair = joint.draw(n_jobs, rng=rng("repair_cost"))
    hours = pair[:, joint.columns.index("hours")]
    rate = pair[:, joint.columns.index("cost_per_crew_hour")]
    # the same jobs with hours and rate drawn independently from their selected samplers
    hours_ind = art["repair"].draw(n_jobs, rng=rng("repair_hours"))
    rate_ind = art["cost"].draw(n_jobs, rng=rng("crew_hour_cost"))

    needs_part = rng("needs_part").random(n_jobs) < float(cfg["share_needing_spare_part"])
    wait = np.where(needs_part, art["wait"].draw(n_jobs, rng=rng("part_wait")), 0.0)
    traffic = art["traffic"].draw(n_jobs, rng=rng("traffic")) * float(
        cfg["traffic_control_eur_per_hour"]
    )
    flooded = rng("flooded").random(n_jobs) < float(cfg["share_breaks_with_property_damage"])
    damage = np.zeros(n_jobs)
    damage[flooded] = art["damage"].draw(int(flooded.sum()), rng=rng("damage"))

    demand = daily_demand(hours, per_day)
    # booster pumps, new at the season start: a failure on day d adds a repair job that day and
    # a hired stand-in pump until the new model arrives
    n_pumps = int(cfg["booster_pumps"])
    life = art["pumps"].draw((n_seasons, n_pumps), rng=rng("pump_life"))
    fail_day = np.floor(life / 24.0).astype(np.int64)
    failed = fail_day < days
    rows = np.broadcast_to(np.arange(n_seasons)[:, None], failed.shape)[failed]
    np.add.at(demand, (rows, fail_day[failed]), float(cfg["pump_repair_crew_hours"]))
    n_failed = int(failed.sum())
    hire = art["lead_time"].draw(n_failed, rng=rng("lead_time")) * art["hire_rate"].draw(
        n_failed, rng=rng("hire_rate")
    )
    pump_hire = np.bincount(rows, weights=hire, minlength=n_seasons)

    crew = per_season(hours * rate, per_day)
    others = per_season(traffic + damage, per_day) + pump_hire
    capacity = float(cfg["crews"]) * float(cfg["crew_hours_per_day"])
    return {
        "per_day": per_day,
        "demand": demand,
        "overload_days": (demand > capacity).sum(axis=1),
        "pump_failures": failed.sum(axis=1),
        "restore": hours + wait,
        "crew": crew,
        "traffic": per_season(traffic, per_day),
        "damage": per_season(damage, per_day),
        "pump_hire": pump_hire,
        "cost": crew + others,
        "cost_independent": per_season(hours_ind * rate_ind, per_day) + others,
    }


class CommonUniforms:
    """Uniforms for ``draw_nested``: every world gets the same inner uniforms.

    With common random numbers each world sees the same seasons, so the spread between worlds
    is the parameter uncertainty alone, not Monte Carlo noise. Column 0 (which world) is unused
    with ``outer="cycle"``.
    """

    def __init__(self, u: np.ndarray) -> None:
        self.u = u

    def uniforms(self, shape: tuple[int, ...]) -> np.ndarray:
        out = np.empty(shape)
        out[:, 0] = 0.5
        out[:, 1:] = self.u
        return out


def parameter_worlds(art: dict[str, Any], cfg: dict[str, Any]) -> dict[str, np.ndarray]:
    """Two-level Monte Carlo: outer worlds (repair-hour replicates) x inner seasons."""
    seed = int(cfg["seed"])
    n_worlds, n_inner = int(cfg["parameter_worlds"]), int(cfg["seasons_per_world"])
    ens = art["replicates"]
    capacity = float(cfg["crews"]) * float(cfg["crew_hours_per_day"])
    per_day = draw_breaks(art["breaks"], n_inner, cfg, sw.stream_rng(seed, "worlds", "breaks"))
    u = sw.stream_rng(seed, "worlds", "hours").random(int(per_day.sum()))
    # row w: the hours of every job of the inner seasons, through world w's replicate
    hours = ens.draw_nested(n_worlds, u.size, rng=CommonUniforms(u), outer="cycle")
    season_hours = np.empty((n_worlds, n_inner))
    overload = np.empty((n_worlds, n_inner))
    for w in range(n_worlds):
        demand = daily_demand(hours[w], per_day)
        season_hours[w] = demand.sum(axis=1)
        overload[w] = (demand > capacity).sum(axis=1)
    which = np.arange(n_worlds) % ens.n_replicates
    return {
        "season_crew_hours": season_hours,
        "overload_days": overload,
        "repair_hours_p99": ens.replicate_quantiles(0.99)[which],
    }


# --- reading the rules' other artifacts ----------------------------------------------------------


def read_intervals(path: str) -> list[dict[str, Any]]:
    """The bootstrap intervals the rules computed for one dataset, rounded for reading."""
    doc = json.loads(Path(path).read_text())
    out = []
    for row in doc["intervals"]:
        width = abs(float(row["high"]) - float(row["low"])) or abs(float(row["estimate"]))
        step = width / 20.0 if width > 0 else 1.0
        entry = {
            k: row[k] for k in ("statistic", "method", "scheme", "confidence_level") if k in row
        }
        if row.get("block_length") is not None:
            entry["block_length"] = _round_sig(float(row["block_length"]), 3)
        for k in ("estimate", "low", "high"):
            entry[k] = _round_to(float(row[k]), step)
        out.append(entry)
    return out


def block_vs_iid(rows: list[dict[str, Any]], statistic: str = "mean") -> float | None:
    """How many times wider the block-bootstrap interval of ``statistic`` is than the iid one."""
    widths = {
        r.get("scheme", "iid"): float(r["high"]) - float(r["low"])
        for r in rows
        if r["statistic"] == statistic
    }
    block = [w for s, w in widths.items() if s != "iid"]
    if "iid" not in widths or not block or widths["iid"] <= 0:
        return None
    return round(max(block) / widths["iid"], 1)


def joint_draws_correlation(path: str, columns: tuple[str, ...]) -> float:
    """Spearman rank correlation of the first two columns of the stored joint draws."""
    import pyarrow.parquet as pq

    table = pq.read_table(path, columns=list(columns[:2]))
    a, b = (table.column(i).to_numpy() for i in range(2))
    ra, rb = np.argsort(np.argsort(a)), np.argsort(np.argsort(b))
    return round(float(np.corrcoef(ra, rb)[0, 1]), 2)


# --- report ---------------------------------------------------------------------------------------


def summarise(
    art: dict[str, Any], files: dict[str, str], cfg: dict[str, Any]
) -> tuple[dict[str, Any], dict[str, np.ndarray], dict[str, np.ndarray]]:
    """Run both simulations; the risk figures (JSON-ready) and the arrays the plot needs."""
    sim = simulate(art, cfg)
    worlds = parameter_worlds(art, cfg)

    def cost_figures(x: np.ndarray) -> dict[str, Any]:
        out = {f"p{round(p * 100)}": figure(x, f"quantile:{p}") for p in (0.5, 0.9, 0.99)}
        out["tail_mean_99"] = figure(x, "tail_mean:0.99")
        return out

    with_dep, without = cost_figures(sim["cost"]), cost_figures(sim["cost_independent"])
    ens = art["replicates"]
    intervals_breaks = read_intervals(files["intervals-breaks"])
    n_inner = int(cfg["seasons_per_world"])
    result = {
        "scenario": "Northvale Water winter repair crews (invented data)",
        "n_seasons": int(cfg["n_seasons"]),
        "how_to_read": (
            "value: the Monte Carlo estimate, rounded to the second digit of its standard "
            "error; mc_standard_error and mc_interval_95: the simulation's own error (more "
            "seasons shrink it); parameter_uncertainty: the spread between plausible worlds "
            "(more data would shrink it, more seasons would not); data_intervals: bootstrap "
            "intervals of statistics of the records themselves"
        ),
        "samplers": {
            name: {"method": s.method, "content_hash": s.metadata["content_hash"]}
            for name, s in art.items()
        },
        "crew_hour_capacity_per_day": float(cfg["crews"]) * float(cfg["crew_hours_per_day"]),
        "breaks_per_season": figure(sim["per_day"].sum(axis=1), "mean"),
        "pump_failures_per_season": figure(sim["pump_failures"], "mean"),
        "daily_demand_p99_crew_hours": figure(sim["demand"], "quantile:0.99"),
        "prob_any_overload_day": figure(sim["overload_days"], "exceedance:0"),
        "overload_days_mean": figure(sim["overload_days"], "mean"),
        "restore_hours_p95": figure(sim["restore"], "quantile:0.95"),
        "restore_hours_p99": figure(sim["restore"], "quantile:0.99"),
        "prob_restore_over_48h": figure(sim["restore"], "exceedance:48"),
        "season_cost_eur": with_dep,
        "season_cost_eur_mean_by_part": {
            part: figure(sim[part], "mean") for part in ("crew", "traffic", "damage", "pump_hire")
        },
        "dependence": {
            "what": (
                "season cost with repair hours and cost per crew-hour drawn together (joint "
                "sampler repair_cost) versus drawn independently from the selected samplers of "
                "repair_hours and crew_hour_cost; the same seasons otherwise"
            ),
            "rank_correlation_of_joint_draws": joint_draws_correlation(
                files["joint-draws"], art["joint"].columns
            ),
            "season_cost_eur_independent": without,
            "p99_change_from_dependence_percent": round(
                100.0 * (with_dep["p99"]["value"] / without["p99"]["value"] - 1.0), 1
            ),
        },
        "parameter_uncertainty": {
            "what": (
                f"{int(cfg['parameter_worlds'])} worlds, each the chosen repair_hours method "
                f"refitted to a {ens.params['replication']} replicate of the repairs, all "
                f"simulating the same {n_inner} seasons (common random numbers, so the spread "
                "between worlds is parameter uncertainty, not simulation noise); median and "
                "90 % interval across worlds"
            ),
            "n_replicates": ens.n_replicates,
            "repair_hours_p99": spread(worlds["repair_hours_p99"]),
            "season_crew_hours_mean": spread(worlds["season_crew_hours"].mean(axis=1)),
            "overload_days_mean": spread(worlds["overload_days"].mean(axis=1)),
            "prob_any_overload_day": spread((worlds["overload_days"] > 0).mean(axis=1)),
            "mc_error_shared_by_every_world": {
                "season_crew_hours_mean": figure(worlds["season_crew_hours"][0], "mean"),
                "overload_days_mean": figure(worlds["overload_days"][0], "mean"),
            },
        },
        "data_intervals": {
            "repair_hours": read_intervals(files["intervals-repair"]),
            "daily_breaks": intervals_breaks,
            "daily_breaks_mean_block_over_iid_width": block_vs_iid(intervals_breaks),
        },
        "caution": CAUTION,
    }
    return result, sim, worlds


def plot(
    result: dict[str, Any], sim: dict[str, np.ndarray], worlds: dict[str, np.ndarray], path: str
) -> None:
    """Four panels: cost with/without dependence, overload days, worlds, cost by part."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, ((a, b), (c, d)) = plt.subplots(2, 2, figsize=(11, 8))
    for x, label, color in (
        (sim["cost_independent"], "hours and rate independent", "#9aa9bd"),
        (sim["cost"], "hours and rate dependent (joint)", "#2f5d9a"),
    ):
        xs = np.sort(x) / 1e6
        a.plot(xs, 1.0 - np.arange(1, xs.size + 1) / xs.size, color=color, label=label)
    a.set_yscale("log")
    a.set_ylim(1.0 / sim["cost"].size, 1.0)
    a.set(xlabel="season cost (million EUR)", ylabel="share of seasons above")
    a.set_title("Season cost, with and without the hours/rate dependence")
    a.legend(fontsize=8)
    over = sim["overload_days"]
    b.hist(over, bins=np.arange(over.max() + 2) - 0.5, color="#b5654a")
    b.set(xlabel="days with crew-hour demand above capacity", ylabel="seasons")
    b.set_title("Overload days per season")
    per_world = worlds["overload_days"].mean(axis=1)
    c.hist(per_world, bins=20, color="#6c9a5b")
    lo, hi = result["parameter_uncertainty"]["overload_days_mean"]["interval_90"]
    for v in (lo, hi):
        c.axvline(v, color="k", ls=":")
    c.yaxis.get_major_locator().set_params(integer=True)
    c.set(xlabel="mean overload days per season, one world each", ylabel="worlds")
    c.set_title("Parameter uncertainty: repair-hour worlds (90 % between dotted lines)")
    parts = result["season_cost_eur_mean_by_part"]
    names = {"crew": "crews", "traffic": "traffic control", "damage": "property damage"}
    d.barh(
        [names.get(k, "pump hire") for k in parts],
        [parts[k]["value"] / 1e3 for k in parts],
        color="#8a6fb0",
    )
    d.set(xlabel="mean per season (thousand EUR)")
    d.set_title("Season cost by part")
    for ax in (a, b, c, d):
        ax.title.set_fontsize(10)
    fig.suptitle("Northvale Water (invented data): simulated winters")
    fig.text(0.5, 0.01, CAUTION, ha="center", fontsize=7, wrap=True)
    fig.tight_layout(rect=(0, 0.04, 1, 0.97))
    fig.savefig(path, dpi=110)
    plt.close(fig)


def main() -> None:
    ap = argparse.ArgumentParser(description=(__doc__ or "").split("\n\n")[0])
    for name, what in {**SAMPLERS, **FILES}.items():
        ap.add_argument(f"--{name}", required=True, help=what)
    ap.add_argument("--settings", required=True, help="JSON of the config's season section")
    ap.add_argument("--out", required=True, help="risk figures (JSON)")
    ap.add_argument("--plot", required=True, help="figure (PNG)")
    args = ap.parse_args()
    art = {
        name.replace("-", "_"): sw.load_sampler(getattr(args, name.replace("-", "_")))
        for name in SAMPLERS
    }
    files = {name: getattr(args, name.replace("-", "_")) for name in FILES}
    result, sim, worlds = summarise(art, files, json.loads(args.settings))
    plot(result, sim, worlds, args.plot)
    Path(args.out).write_text(json.dumps(result, indent=2) + "\n")
    print(json.dumps(result, indent=2))


if __name__ == "__main__":
    main()
