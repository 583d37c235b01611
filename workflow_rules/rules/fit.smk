# Fitting: one artifact per candidate method, and user-drawn CDFs (included by samplewright.smk).


rule sw_fit:
    """Fit one candidate method to one dataset's snapshot (a column, or a table of columns by
    role for truncated and interval data)."""
    input:
        lambda wc: ancient(SW.snapshot_path(wc.dataset)),
    output:
        SW.layout.sampler("{dataset}", "{label}", "{key}"),
    wildcard_constraints:
        dataset=SW.data_pattern,
        label=SW.label_pattern,
        key=SW.key_pattern,
    params:
        results_version=SW.results_version,
        args=lambda wc: SW.fit_args(wc.dataset, wc.label),
        fingerprint=lambda wc: SW.fingerprint(wc.dataset),
    log:
        SW.layout.log("fit", "{dataset}", "{label}", "{key}"),
    benchmark:
        SW.layout.benchmark("fit", "{dataset}", "{label}", "{key}")
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
        SW.layout.sampler("{dataset}", "knots", "{key}"),
    wildcard_constraints:
        dataset=SW.knots_pattern,
        key=SW.key_pattern,
    params:
        results_version=SW.results_version,
    log:
        SW.layout.log("knots", "{dataset}", "{key}"),
    shell:
        "samplewright knots --file {input:q} --key {wildcards.key}"
        " --out {output:q} > {log:q} 2>&1"


ruleorder: sw_knots > sw_fit
