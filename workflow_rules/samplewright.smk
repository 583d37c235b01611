# samplewright rules: snapshot, fit, select, draw and check samplers, all content-addressed.
#
# Use from your Snakefile, either as a module:
#     import samplewright
#     module samplewright:
#         snakefile: samplewright.rules_path()
#         config: config["samplewright"]
#     use rule * from samplewright
# or with   include: samplewright.rules_path()   (then the top-level key "samplewright" is read).
#
# Only sw_snapshot (and the sw_fingerprint checkpoint, for data made by the workflow) names the
# raw data file; every rule below reads the content-addressed snapshot through ancient(), so
# touching, re-downloading or converting a file reruns nothing below it. Each rule from fitting
# down carries the results version in params: bumping it (on an algorithm change) reruns them;
# the snapshot rules carry the snapshot format version instead (snapshots hold data, not results).

import samplewright.pipeline.plan as _sw

SW = _sw.register(
    _sw.Plan(config.get("samplewright", config), checkpoints=checkpoints)
)


checkpoint sw_fingerprint:
    """Fingerprint of data made by a rule of this workflow (datasets with produced: true)."""
    input:
        lambda wc: SW.datasets[wc.dataset]["path"],
    output:
        SW.path("produced/{dataset}.json"),
    wildcard_constraints:
        dataset=SW.dataset_pattern(),
    params:
        snapshot_version=SW.snapshot_version,
        args=lambda wc: SW.snapshot_args(wc.dataset),
    log:
        SW.path("logs/fingerprint/{dataset}.log"),
    shell:
        "samplewright fingerprint {input:q} {params.args} --json-out {output:q}"
        " > {log:q} 2>&1"


rule sw_snapshot:
    """The cleaned values of one data column, stored under their fingerprint."""
    input:
        lambda wc: ancient(SW.datasets[wc.dataset]["path"]),
    output:
        SW.path("columns/{dataset}/{fp}.parquet"),
    wildcard_constraints:
        dataset=SW.dataset_pattern(),
        fp=_sw.KEY_PATTERN,
    params:
        snapshot_version=SW.snapshot_version,
        args=lambda wc: SW.snapshot_args(wc.dataset),
    log:
        SW.path("logs/snapshot/{dataset}/{fp}.log"),
    resources:
        mem_mb=1000,
        runtime=10,
    shell:
        "samplewright snapshot {input:q} {params.args}"
        " --expect-fingerprint {wildcards.fp} --out {output:q} > {log:q} 2>&1"


rule sw_fit:
    """Fit one candidate method to one dataset's snapshot."""
    input:
        lambda wc: ancient(SW.snapshot_path(wc.dataset)),
    output:
        SW.path("samplers/{dataset}/{label}/{key}.parquet"),
    wildcard_constraints:
        dataset=SW.dataset_pattern(),
        label=_sw.LABEL_PATTERN,
        key=_sw.KEY_PATTERN,
    params:
        results_version=SW.results_version,
        args=lambda wc: SW.fit_args(wc.dataset, wc.label),
        fingerprint=lambda wc: SW.fingerprint(wc.dataset),
    log:
        SW.path("logs/fit/{dataset}/{label}/{key}.log"),
    benchmark:
        SW.path("benchmarks/fit/{dataset}/{label}/{key}.tsv")
    threads: 1
    resources:
        mem_mb=2000,
        runtime=30,
    shell:
        "samplewright fit {input:q} {params.args} --key {wildcards.key}"
        " --expect-fingerprint {params.fingerprint} --out {output:q} > {log:q} 2>&1"


rule sw_knots:
    """A user-drawn CDF (knots file) as a sampler artifact."""
    input:
        lambda wc: ancient(SW.datasets[wc.dataset]["knots"]),
    output:
        SW.path("samplers/{dataset}/knots/{key}.parquet"),
    wildcard_constraints:
        dataset=SW.dataset_pattern(),
        key=_sw.KEY_PATTERN,
    params:
        results_version=SW.results_version,
    log:
        SW.path("logs/knots/{dataset}/{key}.log"),
    shell:
        "samplewright knots --file {input:q} --key {wildcards.key}"
        " --out {output:q} > {log:q} 2>&1"


ruleorder: sw_knots > sw_fit


rule sw_select:
    """The sampler downstream steps use, chosen among the dataset's candidates."""
    input:
        lambda wc: [ancient(p) for p in SW.candidate_paths(wc.dataset)],
    output:
        SW.path("selected/{dataset}/{key}.parquet"),
    wildcard_constraints:
        dataset=SW.dataset_pattern(),
        key=_sw.KEY_PATTERN,
    params:
        results_version=SW.results_version,
        rule=lambda wc: SW.select_rule(wc.dataset),
    log:
        SW.path("logs/select/{dataset}/{key}.log"),
    shell:
        "samplewright select {input:q} --by {params.rule} --key {wildcards.key}"
        " --out {output:q} > {log:q} 2>&1"


rule sw_draw:
    """A Parquet file of draws (column 'value') for consumers outside Python."""
    input:
        lambda wc: ancient(SW.selected_path(wc.dataset)),
    output:
        SW.path("draws/{dataset}/{key}.parquet"),
    wildcard_constraints:
        dataset=SW.dataset_pattern(),
        key=_sw.KEY_PATTERN,
    params:
        results_version=SW.results_version,
        n=lambda wc: SW.datasets[wc.dataset]["draws"],
        seed=SW.root_seed,
    log:
        SW.path("logs/draw/{dataset}/{key}.log"),
    shell:
        "samplewright draw {input:q} -n {params.n} --seed {params.seed}"
        " --stream {wildcards.dataset} --stream draws --out {output:q} > {log:q} 2>&1"


rule sw_check:
    """A short check summary of every candidate against the data (JSON, Markdown beside)."""
    input:
        data=lambda wc: ancient(SW.snapshot_path(wc.dataset)),
        candidates=lambda wc: [ancient(p) for p in SW.candidate_paths(wc.dataset)],
    output:
        json=SW.path("checks/{dataset}/{key}.json"),
        md=SW.path("checks/{dataset}/{key}.md"),
    wildcard_constraints:
        dataset=SW.dataset_pattern(),
        key=_sw.KEY_PATTERN,
    params:
        results_version=SW.results_version,
    log:
        SW.path("logs/check/{dataset}/{key}.log"),
    shell:
        "samplewright check {input.data:q} {input.candidates:q}"
        " --dataset {wildcards.dataset} --out {output.json:q} > {log:q} 2>&1"
