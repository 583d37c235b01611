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

Breaks are not independent from district to district: every district shares the day's frost,
and cold spells last days. ``daily_breaks`` is the fitted distribution of one district-day; the
season couples the districts with a one-factor Gaussian copula whose factor (the day's frost)
follows an AR(1) process from day to day. Each district-day keeps exactly the fitted marginal;
the two copula correlations are solved so that the counts have the two correlations measured in
the records and given in the config (``breaks_same_day_correlation``,
``breaks_next_day_correlation``). Drawing districts independently would make the daily totals'
variance about a third of the records' and understate every daily peak.

Beside the central figures the script reports:

* the season cost with and without the hours/rate dependence (the same seasons, with the
  selected ``repair_hours`` and ``crew_hour_cost`` samplers drawn independently);
* parameter uncertainty: an outer loop over the ``repair_hours`` replicates (one plausible world
  each) around an inner loop of seasons, so the spread between worlds shows how much the finite
  record of repairs leaves open; the season cost figures carry it as ``parameter_interval_90``;
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
from scipy.optimize import brentq
from scipy.special import ndtr, ndtri

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
# season cost figures: name in the JSON -> statistic
COST_STATISTICS = {
    "p50": "quantile:0.5",
    "p90": "quantile:0.9",
    "p99": "quantile:0.99",
    "tail_mean_99": "tail_mean:0.99",
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


def _figure(estimate: float, se: float, low: float, high: float) -> dict[str, Any]:
    return {
        "value": _round_to(estimate, se),
        "mc_standard_error": _round_sig(se),
        "mc_interval_95": [_round_to(low, se), _round_to(high, se)],
    }


def figure(draws: np.ndarray, statistic: str) -> dict[str, Any]:
    """A statistic of independent draws with its Monte Carlo standard error and 95 % interval."""
    r = sw.mc_error(np.asarray(draws, dtype=np.float64).ravel(), statistic)
    return _figure(r.estimate, r.standard_error, r.low, r.high)


def figure_by_season(values: np.ndarray, statistic: str, n_batches: int = 40) -> dict[str, Any]:
    """A statistic of per-day values (rows: seasons), with a batch-means standard error.

    The days of one season are dependent (cold spells), seasons are independent: the statistic
    of each of ``n_batches`` groups of whole seasons is an independent estimate, and their spread
    over ``sqrt(n_batches)`` is the error of the pooled one (batch means, common practice in
    simulation output analysis); interval: estimate +- 1.96 standard errors.
    """
    estimate = sw.mc_error(values.ravel(), statistic).estimate
    each = [sw.mc_error(g.ravel(), statistic).estimate for g in np.array_split(values, n_batches)]
    se = float(np.std(each, ddof=1)) / math.sqrt(n_batches)
    return _figure(estimate, se, estimate - 1.959964 * se, estimate + 1.959964 * se)


def spread(values: np.ndarray, level: float = 0.9) -> dict[str, Any]:
    """Median and central ``level`` interval across worlds, to three significant digits."""
    lo, mid, hi = np.quantile(values, [(1 - level) / 2, 0.5, (1 + level) / 2])
    return {
        "median": _round_sig(float(mid), 3),
        f"interval_{round(level * 100)}": [_round_sig(float(lo), 3), _round_sig(float(hi), 3)],
    }


# --- daily breaks: the districts share each day's frost -----------------------------------------


class Given:
    """Uniforms handed to ``draw`` (a uniform source): the draws are their quantiles."""

    def __init__(self, u: np.ndarray) -> None:
        self.u = u

    def uniforms(self, shape: tuple[int, ...]) -> np.ndarray:
        return self.u.reshape(shape)


# Gauss-Legendre nodes on [-1, 1] for the integral over the copula correlation below
_NODES, _WEIGHTS = np.polynomial.legendre.leggauss(48)


def count_covariance(cdf: np.ndarray, rho: float) -> float:
    """Covariance of two counts with cdf values ``cdf`` at 0, 1, ..., K, joined by a Gaussian
    copula of correlation ``rho``.

    Hoeffding's formula for counts: Cov = sum over i, j >= 0 of P(X > i, Y > j) - P(X > i)
    P(Y > j). With normal scores z_i = Phi^-1(F(i)) each term is Phi2(z_i, z_j; rho) -
    Phi(z_i) Phi(z_j), the integral from 0 to rho of the bivariate normal density at (z_i, z_j)
    (Plackett 1954: d Phi2 / d rho is that density), here by Gauss-Legendre quadrature.
    """
    z = ndtri(cdf[(cdf > 0.0) & (cdf < 1.0)])
    h, k = z[:, None], z[None, :]
    total = 0.0
    for node, weight in zip(_NODES, _WEIGHTS, strict=True):
        t = 0.5 * rho * (node + 1.0)
        q = (h * h - 2.0 * t * h * k + k * k) / (2.0 * (1.0 - t * t))
        total += (
            0.5 * rho * weight * float(np.exp(-q).sum()) / (2.0 * math.pi * math.sqrt(1 - t * t))
        )
    return total


class SharedFrost:
    """Counts per district-day from ``breaks``, coupled within and across days.

    Latent frost of day d: ``Z_d``, standard normal, AR(1) with coefficient ``phi``; district k:
    ``Y = sqrt(r) Z_d + sqrt(1 - r) e``, ``u = Phi(Y)``, count = ``breaks``' quantile of u. So
    each district-day keeps the fitted distribution exactly, two districts' counts on one day have
    the correlation ``same_day``, and the network totals of consecutive days ``next_day``.
    """

    def __init__(
        self, breaks: sw.Sampler, districts: int, same_day: float, next_day: float
    ) -> None:
        lo, _ = breaks.support
        top = float(breaks.quantile(1.0 - 1e-13))
        if lo < 0 or not math.isfinite(top):
            raise ValueError(f"--breaks: expected a count sampler on 0, 1, ..., found {lo}..{top}")
        self.breaks, self.districts = breaks, districts
        self.cdf = np.asarray(breaks.cdf(np.arange(int(top) + 1.0)), dtype=np.float64)
        probe = sw.make_rng(0).random(4096)  # the table lookup below is breaks.quantile
        if not np.array_equal(self._quantile(probe), breaks.quantile(probe)):
            raise ValueError("--breaks: expected a sampler of whole counts (0, 1, 2, ...)")
        if not (0.0 <= same_day < 1.0 and 0.0 <= next_day < 1.0):
            raise ValueError(
                "season: breaks_same_day_correlation and breaks_next_day_correlation must lie "
                f"in [0, 1), found {same_day} and {next_day}"
            )
        var = float(breaks.var)

        def cov(rho: float) -> float:
            return count_covariance(self.cdf, rho)

        self.r = brentq(lambda r: cov(r) - same_day * var, 0.0, 0.999) if same_day else 0.0
        # covariance of two district-days on consecutive days: the totals' correlation times
        # the totals' variance, spread over districts**2 pairs
        var_total = districts * var * (1.0 + (districts - 1) * same_day)
        target = next_day * var_total / districts**2
        if target > cov(self.r):
            raise ValueError(
                f"season: breaks_next_day_correlation {next_day} needs a stronger same-day "
                f"dependence than breaks_same_day_correlation {same_day} gives"
            )
        self.phi = brentq(lambda f: cov(self.r * f) - target, 0.0, 1.0) if target else 0.0

    def _quantile(self, u: np.ndarray) -> np.ndarray:
        """``breaks.quantile(u)`` by its cdf table (the smallest count whose cdf reaches u): the
        same counts, some 25 times faster than scipy's inversion of a count family."""
        k = np.searchsorted(self.cdf, u, side="left").astype(np.float64)
        beyond = k >= self.cdf.size
        if beyond.any():
            k[beyond] = self.breaks.quantile(u[beyond])
        return k

    def daily_totals(self, n_seasons: int, days: int, rng: np.random.Generator) -> np.ndarray:
        """Breaks per day summed over districts, shape (n_seasons, days), 250 seasons at once."""
        out = np.empty((n_seasons, days), dtype=np.int64)
        a, b = math.sqrt(self.r), math.sqrt(1.0 - self.r)
        for start in range(0, n_seasons, 250):
            m = min(250, n_seasons - start)
            frost = rng.standard_normal((m, days))
            for d in range(1, days):  # AR(1), stationary from the first day
                frost[:, d] = self.phi * frost[:, d - 1] + math.sqrt(1 - self.phi**2) * frost[:, d]
            y = a * frost[:, :, None] + b * rng.standard_normal((m, days, self.districts))
            u = np.clip(ndtr(y), 1e-300, np.nextafter(1.0, 0.0))
            out[start : start + m] = self._quantile(u.ravel()).reshape(u.shape).sum(axis=2)
        return out


# --- the season model ---------------------------------------------------------------------------


def coupled_uniforms(joint: Any, n: int, gen: np.random.Generator) -> np.ndarray:
    """The joint sampler's copula uniforms, (n, 2), exactly as its own ``draw`` makes them.

    Drawn here step by step so that each parameter world can send the same uniforms through its
    own repair-hour replicate while the rate keeps its dependence on the hours.
    """
    from samplewright.fitting.copulas import gaussian_copula_uniforms

    if joint.coupling != "gaussian_copula":
        raise ValueError(f"--joint: expected a gaussian_copula coupling, found {joint.coupling!r}")
    u = gen.random((n, len(joint.columns)))
    u[u <= 0.0] = 0.5 / max(n, 1)
    return np.asarray(gaussian_copula_uniforms(joint.correlation, u))


def check_coupled_uniforms(joint: Any, seed: int) -> None:
    """Refuse to go on unless :func:`coupled_uniforms` through the marginals gives exactly the
    joint sampler's own draws (the worlds below rely on it)."""
    v = coupled_uniforms(joint, 256, sw.stream_rng(seed, "check"))
    mine = np.column_stack([m.draw(256, rng=Given(v[:, j])) for j, m in enumerate(joint.marginals)])
    if not np.array_equal(mine, joint.draw(256, rng=sw.stream_rng(seed, "check"))):
        raise RuntimeError("--joint: its draws no longer follow coupled_uniforms; update it")


def daily_demand(hours: np.ndarray, per_day: np.ndarray) -> np.ndarray:
    """Crew-hours per season-day from the jobs' hours (jobs in day order)."""
    day_of_job = np.repeat(np.arange(per_day.size), per_day.ravel())
    return np.bincount(day_of_job, weights=hours, minlength=per_day.size).reshape(per_day.shape)


def per_season(values: np.ndarray, per_day: np.ndarray) -> np.ndarray:
    """Sum of per-job ``values`` within each season (jobs in day order)."""
    season_of_job = np.repeat(np.arange(per_day.shape[0]), per_day.sum(axis=1))
    return np.bincount(season_of_job, weights=values, minlength=per_day.shape[0])


def simulate(
    art: dict[str, Any], cfg: dict[str, Any], frost: SharedFrost, n_seasons: int, stream: str
) -> dict[str, np.ndarray]:
    """``n_seasons`` seasons with every input at its selected sampler (streams under ``stream``)."""
    seed, days = int(cfg["seed"]), int(cfg["days"])

    def rng(name: str) -> np.random.Generator:
        return sw.stream_rng(seed, stream, name)

    per_day = frost.daily_totals(n_seasons, days, rng("breaks"))
    n_jobs = int(per_day.sum())
    joint = art["joint"]
    v = coupled_uniforms(joint, n_jobs, rng("repair_cost"))
    u_hours = v[:, joint.columns.index("hours")]
    hours = joint.marginal("hours").draw(n_jobs, rng=Given(u_hours))
    rate_u = v[:, joint.columns.index("cost_per_crew_hour")]
    rate = joint.marginal("cost_per_crew_hour").draw(n_jobs, rng=Given(rate_u))
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

    # booster pumps, new at the season start: a failure on day d adds a repair job that day and
    # a hired stand-in pump until the new model arrives
    n_pumps = int(cfg["booster_pumps"])
    life = art["pumps"].draw((n_seasons, n_pumps), rng=rng("pump_life"))
    fail_day = np.floor(life / 24.0).astype(np.int64)
    failed = fail_day < days
    rows = np.broadcast_to(np.arange(n_seasons)[:, None], failed.shape)[failed]
    pump_demand = np.zeros((n_seasons, days))
    np.add.at(pump_demand, (rows, fail_day[failed]), float(cfg["pump_repair_crew_hours"]))
    n_failed = int(failed.sum())
    hire = art["lead_time"].draw(n_failed, rng=rng("lead_time")) * art["hire_rate"].draw(
        n_failed, rng=rng("hire_rate")
    )
    pump_hire = np.bincount(rows, weights=hire, minlength=n_seasons)
    others = per_season(traffic + damage, per_day) + pump_hire
    return {
        "per_day": per_day,
        "u_hours": u_hours,
        "rate": rate,
        "pump_demand": pump_demand,
        "pump_failures": failed.sum(axis=1),
        "restore": hours + wait,
        "traffic": per_season(traffic, per_day),
        "damage": per_season(damage, per_day),
        "pump_hire": pump_hire,
        "others": others,
        "cost_independent": per_season(hours_ind * rate_ind, per_day) + others,
        **season_of(hours, rate, per_day, pump_demand, others, cfg),
    }


def season_of(
    hours: np.ndarray,
    rate: np.ndarray,
    per_day: np.ndarray,
    pump_demand: np.ndarray,
    others: np.ndarray,
    cfg: dict[str, Any],
) -> dict[str, np.ndarray]:
    """What the repair hours decide: daily crew-hour demand, overload days, crew and total cost."""
    demand = daily_demand(hours, per_day) + pump_demand
    capacity = float(cfg["crews"]) * float(cfg["crew_hours_per_day"])
    crew = per_season(hours * rate, per_day)
    return {
        "demand": demand,
        "overload_days": (demand > capacity).sum(axis=1),
        "crew": crew,
        "cost": crew + others,
    }


def parameter_worlds(
    art: dict[str, Any], cfg: dict[str, Any], frost: SharedFrost
) -> dict[str, np.ndarray]:
    """Two-level Monte Carlo: outer worlds (repair-hour replicates) x inner seasons.

    Every world simulates the same inner seasons (common random numbers: the same breaks, the
    same copula uniforms, rates and other costs); only the repair-hour sampler changes, so the
    spread between worlds is the parameter uncertainty alone, not Monte Carlo noise. The point
    fit runs through the same seasons, as the reference of the worlds' ratios.
    """
    n_worlds, n_inner = int(cfg["parameter_worlds"]), int(cfg["seasons_per_world"])
    ens = art["replicates"]
    sim = simulate(art, cfg, frost, n_inner, "worlds")
    u, per_day = sim["u_hours"], sim["per_day"]
    samplers = [ens.replicate(w % ens.n_replicates) for w in range(n_worlds)]
    samplers.append(ens.point if ens.point is not None else art["joint"].marginal("hours"))
    out: dict[str, list[Any]] = {"season_crew_hours": [], "overload_days": [], "cost": []}
    for sampler in samplers:
        hours = sampler.draw(u.size, rng=Given(u))
        season = season_of(hours, sim["rate"], per_day, sim["pump_demand"], sim["others"], cfg)
        out["season_crew_hours"].append(per_season(hours, per_day))
        out["overload_days"].append(season["overload_days"])
        out["cost"].append(
            [sw.mc_error(season["cost"], s).estimate for s in COST_STATISTICS.values()]
        )
    which = np.arange(n_worlds) % ens.n_replicates
    arrays = {k: np.asarray(v, dtype=np.float64) for k, v in out.items()}
    return {
        **{k: v[:-1] for k, v in arrays.items()},
        **{f"point_{k}": v[-1] for k, v in arrays.items()},
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


def cost_figures(x: np.ndarray, worlds: dict[str, np.ndarray] | None = None) -> dict[str, Any]:
    """Season cost statistics with their Monte Carlo errors and, given the worlds, the 90 %
    interval of their parameter uncertainty.

    Each world's statistic over the point fit's, on the same seasons, is how far the finite record
    of repairs could move it; the 5 % and 95 % of those ratios times the central estimate give
    ``parameter_interval_90``, rounded like the value.
    """
    out = {}
    for j, (name, statistic) in enumerate(COST_STATISTICS.items()):
        r = sw.mc_error(x, statistic)
        out[name] = _figure(r.estimate, r.standard_error, r.low, r.high)
        if worlds is not None:
            ratios = worlds["cost"][:, j] / worlds["point_cost"][j]
            ends = np.quantile(ratios, [0.05, 0.95]) * r.estimate
            out[name]["parameter_interval_90"] = [_round_to(e, r.standard_error) for e in ends]
    return out


def summarise(
    art: dict[str, Any], files: dict[str, str], cfg: dict[str, Any]
) -> tuple[dict[str, Any], dict[str, np.ndarray], dict[str, np.ndarray]]:
    """Run both simulations; the risk figures (JSON-ready) and the arrays the plot needs."""
    districts = int(cfg["districts"])
    same_day = float(cfg["breaks_same_day_correlation"])
    next_day = float(cfg["breaks_next_day_correlation"])
    frost = SharedFrost(art["breaks"], districts, same_day, next_day)
    check_coupled_uniforms(art["joint"], int(cfg["seed"]))
    sim = simulate(art, cfg, frost, int(cfg["n_seasons"]), "central")
    worlds = parameter_worlds(art, cfg, frost)
    with_dep = cost_figures(sim["cost"], worlds)
    without = cost_figures(sim["cost_independent"])
    ens = art["replicates"]
    intervals_breaks = read_intervals(files["intervals-breaks"])
    n_inner = int(cfg["seasons_per_world"])
    result = {
        "scenario": "Northvale Water winter repair crews (invented data)",
        "n_seasons": int(cfg["n_seasons"]),
        "how_to_read": (
            "value: the Monte Carlo estimate, rounded to the second digit of its standard "
            "error; mc_standard_error and mc_interval_95: the simulation's own error (more "
            "seasons shrink it); parameter_interval_90 and parameter_uncertainty: the spread "
            "between plausible worlds (more data would shrink it, more seasons would not); "
            "data_intervals: bootstrap intervals of statistics of the records themselves"
        ),
        "samplers": {
            name: {"method": s.method, "content_hash": s.metadata["content_hash"]}
            for name, s in art.items()
        },
        "crew_hour_capacity_per_day": float(cfg["crews"]) * float(cfg["crew_hours_per_day"]),
        "breaks_per_season": figure(sim["per_day"].sum(axis=1), "mean"),
        "breaks_dependence": {
            "what": (
                f"breaks of the {districts} districts drawn together: each district-day from "
                "the selected daily_breaks sampler, coupled by a shared daily frost factor "
                "(Gaussian copula, AR(1) from day to day) matched to the records' correlations; "
                "errors by batches of whole seasons"
            ),
            "same_day_correlation": same_day,
            "next_day_correlation": next_day,
            "copula_same_day_correlation": round(frost.r, 3),
            "copula_day_to_day_correlation": round(frost.phi, 3),
            "network_breaks_per_day_sd": figure_by_season(sim["per_day"], "std"),
            "network_breaks_per_day_p99": figure_by_season(sim["per_day"], "quantile:0.99"),
            "network_breaks_per_day_sd_if_districts_independent": _round_sig(
                math.sqrt(districts * float(art["breaks"].var)), 3
            ),
        },
        "pump_failures_per_season": figure(sim["pump_failures"], "mean"),
        "daily_demand_p99_crew_hours": figure_by_season(sim["demand"], "quantile:0.99"),
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
            "season_cost_eur": {
                name: spread(worlds["cost"][:, j]) for j, name in enumerate(COST_STATISTICS)
            },
            "mc_error_shared_by_every_world": {
                "season_crew_hours_mean": figure(worlds["point_season_crew_hours"], "mean"),
                "overload_days_mean": figure(worlds["point_overload_days"], "mean"),
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
