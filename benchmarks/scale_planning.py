#!/usr/bin/env python3
"""Planning cost at scale: samplewright's rules against a plain Snakefile of the same shape.

A generated workflow with N datasets (default 200) x 3 methods. Both workflows have the same jobs
per dataset (copy/snapshot, 3 fits, select, draw, check); the plain one uses fixed paths and no
fingerprints. Outputs are made with ``snakemake --touch`` (no fitting is run: only planning is
measured). Printed, each as a ratio to the plain baseline measured in the same run:

* planning a dry run from scratch (samplewright with a cold and with a warm fingerprint cache)
* a no-op rerun (everything up to date) with a warm cache  -- target: at most 1.5x
* the re-parse each cluster job does (``snakemake -n`` of one job's output)

    python benchmarks/scale_planning.py [--datasets 200] [--repeat 3]
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd
import yaml

BIN = Path(sys.executable).parent
METHODS = ["gamma", "lognormal", "empirical"]

PLAIN = """
import json
configfile: "config.yaml"
DS = list(config["datasets"])
M = {m!r}

rule all:
    input:
        expand("plain/selected/{{ds}}.parquet", ds=DS),
        expand("plain/draws/{{ds}}.parquet", ds=DS),
        expand("plain/checks/{{ds}}.json", ds=DS),

rule snapshot:
    input: lambda wc: config["datasets"][wc.ds]["path"]
    output: "plain/columns/{{ds}}.parquet"
    log: "plain/logs/snapshot/{{ds}}.log"
    shell: "samplewright snapshot {{input}} --column value --out {{output}} > {{log}} 2>&1"

rule fit:
    input: "plain/columns/{{ds}}.parquet"
    output: "plain/samplers/{{ds}}/{{m}}.parquet"
    params: version=1
    log: "plain/logs/fit/{{ds}}/{{m}}.log"
    shell: "samplewright fit {{input}} --method {{wildcards.m}} --out {{output}} > {{log}} 2>&1"

rule select:
    input: expand("plain/samplers/{{{{ds}}}}/{{m}}.parquet", m=M)
    output: "plain/selected/{{ds}}.parquet"
    params: version=1
    log: "plain/logs/select/{{ds}}.log"
    shell: "samplewright select {{input}} --out {{output}} > {{log}} 2>&1"

rule draw:
    input: "plain/selected/{{ds}}.parquet"
    output: "plain/draws/{{ds}}.parquet"
    params: version=1
    log: "plain/logs/draw/{{ds}}.log"
    shell: "samplewright draw {{input}} -n 100 --seed 1 --out {{output}} > {{log}} 2>&1"

rule check:
    input:
        data="plain/columns/{{ds}}.parquet",
        cand=expand("plain/samplers/{{{{ds}}}}/{{m}}.parquet", m=M),
    output: "plain/checks/{{ds}}.json"
    params: version=1
    log: "plain/logs/check/{{ds}}.log"
    shell: "samplewright check {{input.data}} {{input.cand}} --out {{output}} > {{log}} 2>&1"
""".format(m=METHODS)

WRIGHT = """
import samplewright
import samplewright.pipeline.plan as sw
configfile: "config.yaml"

module samplewright:
    snakefile: samplewright.rules_path()
    config: config["samplewright"]

use rule * from samplewright

rule all:
    default_target: True
    input: sw.targets()
"""


def make_workflow(root: Path, n: int) -> None:
    rng = np.random.default_rng(0)  # generated benchmark data, not a reference
    (root / "data").mkdir(parents=True)
    datasets = {}
    for i in range(n):
        name = f"d{i:03d}"
        pd.DataFrame({"value": rng.gamma(2.0, 3.0, 2000), "other": rng.random(2000)}).to_csv(
            root / "data" / f"{name}.csv", index=False
        )
        datasets[name] = {"path": f"data/{name}.csv", "column": "value", "methods": METHODS}
    cfg = {
        "datasets": {k: {"path": v["path"]} for k, v in datasets.items()},
        "samplewright": {"store": "store", "draws": 100, "datasets": datasets},
    }
    (root / "config.yaml").write_text(yaml.safe_dump(cfg))
    (root / "Snakefile.plain").write_text(PLAIN)
    (root / "Snakefile.wright").write_text(WRIGHT)


def snakemake(root: Path, snakefile: str, *args: str) -> float:
    env = dict(os.environ)
    env["PATH"] = f"{BIN}{os.pathsep}{env.get('PATH', '')}"
    t0 = time.perf_counter()
    proc = subprocess.run(
        [
            str(BIN / "snakemake"),
            "-s",
            snakefile,
            "--cores",
            "1",
            "--max-checksum-file-size",
            "0",
            *args,
        ],
        cwd=root,
        env=env,
        capture_output=True,
        text=True,
    )
    elapsed = time.perf_counter() - t0
    if proc.returncode != 0:
        sys.exit(f"snakemake {snakefile} {' '.join(args)} failed:\n{proc.stderr[-3000:]}")
    return elapsed


def materialise(root: Path, snakefile: str) -> None:
    env = dict(os.environ)
    env["PATH"] = f"{BIN}{os.pathsep}{env.get('PATH', '')}"
    proc = subprocess.run(
        [str(BIN / "snakemake"), "-s", snakefile, "--cores", "1", "--summary"],
        cwd=root,
        env=env,
        capture_output=True,
        text=True,
        check=True,
    )
    for line in proc.stdout.splitlines()[1:]:
        path = root / line.split("\t", 1)[0]
        path.parent.mkdir(parents=True, exist_ok=True)
        path.touch()


def median_of(repeat: int, fn) -> float:
    return statistics.median(fn() for _ in range(repeat))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--datasets", type=int, default=200)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    root = Path(tempfile.mkdtemp(prefix="sw-scale-"))
    try:
        make_workflow(root, args.datasets)
        cache = root / "store" / "fingerprints.json"

        def cold() -> float:
            cache.unlink(missing_ok=True)
            return snakemake(root, "Snakefile.wright", "-n")

        plan_plain = median_of(args.repeat, lambda: snakemake(root, "Snakefile.plain", "-n"))
        plan_cold = median_of(args.repeat, cold)
        plan_warm = median_of(args.repeat, lambda: snakemake(root, "Snakefile.wright", "-n"))

        # make every output up to date without running a job: create each planned output
        # (listed by --summary), then let --touch set their times in DAG order
        for snakefile in ("Snakefile.plain", "Snakefile.wright"):
            materialise(root, snakefile)
            snakemake(root, snakefile, "--touch")
        noop_plain = median_of(args.repeat, lambda: snakemake(root, "Snakefile.plain"))
        noop_warm = median_of(args.repeat, lambda: snakemake(root, "Snakefile.wright"))

        # one cluster job's re-parse: plan the single output of one fit job
        one = next((root / "store" / "samplers" / "d000" / "gamma").glob("*.parquet"))
        job_plain = median_of(
            args.repeat,
            lambda: snakemake(root, "Snakefile.plain", "-n", "plain/samplers/d000/gamma.parquet"),
        )
        job_wright = median_of(
            args.repeat,
            lambda: snakemake(root, "Snakefile.wright", "-n", str(one.relative_to(root))),
        )
    finally:
        shutil.rmtree(root, ignore_errors=True)

    n_jobs = args.datasets * (1 + len(METHODS) + 3)
    print(
        f"{args.datasets} datasets x {len(METHODS)} methods ({n_jobs} jobs per workflow), "
        f"median of {args.repeat}; baseline = plain Snakefile of the same shape, same run"
    )
    rows = [
        ("dry-run planning, cold fingerprint cache", plan_cold, plan_plain),
        ("dry-run planning, warm fingerprint cache", plan_warm, plan_plain),
        ("no-op rerun, warm cache (target <= 1.5x)", noop_warm, noop_plain),
        ("one cluster job's re-parse (-n one output)", job_wright, job_plain),
    ]
    for label, ours, base in rows:
        print(f"  {label:<46} {ours:7.2f} s  vs {base:7.2f} s   ratio {ours / base:5.2f}x")


if __name__ == "__main__":
    main()
