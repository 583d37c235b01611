# Draws: a Parquet file of draws per dataset (included by samplewright.smk).


rule sw_draw:
    """A Parquet file of draws (column 'value') for consumers outside Python; uniforms from the
    dataset's sequence (random, or a scrambled quasi-random one)."""
    input:
        lambda wc: ancient(SW.selected_path(wc.dataset)),
    output:
        SW.layout.draws("{dataset}", "{key}"),
    wildcard_constraints:
        dataset=SW.dataset_pattern,
        key=SW.key_pattern,
    params:
        results_version=SW.results_version,
        n=lambda wc: SW.datasets[wc.dataset]["draws"],
        seed=SW.root_seed,
        sequence=lambda wc: SW.datasets[wc.dataset]["sequence"],
    log:
        SW.layout.log("draw", "{dataset}", "{key}"),
    shell:
        "samplewright draw {input:q} -n {params.n} --seed {params.seed}"
        " --stream {wildcards.dataset} --stream draws --sequence {params.sequence}"
        " --out {output:q} > {log:q} 2>&1"
