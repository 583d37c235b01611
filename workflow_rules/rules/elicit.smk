# Expert judgement: quantiles / three_points datasets as sampler artifacts (included by
# samplewright.smk). No data file: the key is taken of the points and settings in the config.


rule sw_elicit:
    """A sampler through elicited quantiles, or a three-point (PERT / triangular) estimate."""
    output:
        SW.layout.sampler("{dataset}", "{label}", "{key}"),
    wildcard_constraints:
        dataset=SW.elicited_pattern,
        label=SW.elicited_label_pattern,
        key=SW.key_pattern,
    params:
        results_version=SW.results_version,
        args=lambda wc: SW.elicit_args(wc.dataset),
    log:
        SW.layout.log("elicit", "{dataset}", "{label}", "{key}"),
    shell:
        "samplewright elicit {params.args} --key {wildcards.key} --out {output:q} > {log:q} 2>&1"

