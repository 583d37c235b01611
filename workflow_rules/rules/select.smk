# Selection: the sampler downstream steps use (included by samplewright.smk).


rule sw_select:
    """The sampler downstream steps use, chosen among the dataset's candidates."""
    input:
        lambda wc: [ancient(p) for p in SW.candidate_paths(wc.dataset)],
    output:
        SW.layout.selected("{dataset}", "{key}"),
    wildcard_constraints:
        dataset=SW.dataset_pattern,
        key=SW.key_pattern,
    params:
        results_version=SW.results_version,
        rule=lambda wc: SW.select_rule(wc.dataset),
    log:
        SW.layout.log("select", "{dataset}", "{key}"),
    shell:
        "samplewright select {input:q} --by {params.rule} --key {wildcards.key}"
        " --out {output:q} > {log:q} 2>&1"
