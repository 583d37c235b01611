# Checks: every candidate against the data (included by samplewright.smk).


rule sw_check:
    """A short check summary of every candidate against the data (JSON, Markdown beside)."""
    input:
        data=lambda wc: ancient(SW.snapshot_path(wc.dataset)),
        candidates=lambda wc: [ancient(p) for p in SW.candidate_paths(wc.dataset)],
    output:
        json=SW.layout.check("{dataset}", "{key}"),
        md=SW.layout.check_markdown("{dataset}", "{key}"),
    wildcard_constraints:
        dataset=SW.dataset_pattern,
        key=SW.key_pattern,
    params:
        results_version=SW.results_version,
    log:
        SW.layout.log("check", "{dataset}", "{key}"),
    benchmark:
        SW.layout.benchmark("check", "{dataset}", "{key}")
    shell:
        "samplewright check {input.data:q} {input.candidates:q}"
        " --dataset {wildcards.dataset} --out {output.json:q} > {log:q} 2>&1"
