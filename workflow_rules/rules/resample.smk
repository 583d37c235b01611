# Resampling: bootstrap intervals of the data and parameter replicates of the selected method
# (included by samplewright.smk). Streams: the root seed and the names (dataset, purpose).


rule sw_intervals:
    """Bootstrap confidence intervals of the statistics a dataset's config lists (JSON)."""
    input:
        lambda wc: ancient(SW.snapshot_path(wc.dataset)),
    output:
        SW.layout.intervals("{dataset}", "{key}"),
    wildcard_constraints:
        dataset=SW.data_pattern,
        key=SW.key_pattern,
    params:
        results_version=SW.results_version,
        args=lambda wc: SW.interval_args(wc.dataset),
        seed=SW.root_seed,
        fingerprint=lambda wc: SW.fingerprint(wc.dataset),
    log:
        SW.layout.log("intervals", "{dataset}", "{key}"),
    benchmark:
        SW.layout.benchmark("intervals", "{dataset}", "{key}")
    threads: 1
    resources:
        mem_mb=2000,
        runtime=60,
    shell:
        "samplewright interval {input:q} {params.args} --seed {params.seed}"
        " --stream {wildcards.dataset} --stream intervals --key {wildcards.key}"
        " --expect-fingerprint {params.fingerprint} --out {output:q} > {log:q} 2>&1"


rule sw_replicates:
    """Parameter replicates of the selected method, one ensemble artifact."""
    input:
        data=lambda wc: ancient(SW.snapshot_path(wc.dataset)),
        selected=lambda wc: ancient(SW.selected_path(wc.dataset)),
    output:
        SW.layout.replicates("{dataset}", "{key}"),
    wildcard_constraints:
        dataset=SW.data_pattern,
        key=SW.key_pattern,
    params:
        results_version=SW.results_version,
        args=lambda wc: SW.replicate_args(wc.dataset),
        seed=SW.root_seed,
        fingerprint=lambda wc: SW.fingerprint(wc.dataset),
    log:
        SW.layout.log("replicates", "{dataset}", "{key}"),
    benchmark:
        SW.layout.benchmark("replicates", "{dataset}", "{key}")
    threads: 1
    resources:
        mem_mb=2000,
        runtime=60,
    shell:
        "samplewright replicate {input.data:q} --method-from {input.selected:q} {params.args}"
        " --seed {params.seed} --stream {wildcards.dataset} --stream replicates"
        " --key {wildcards.key} --expect-fingerprint {params.fingerprint}"
        " --out {output:q} > {log:q} 2>&1"
