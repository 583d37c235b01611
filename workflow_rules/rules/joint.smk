# Joint inputs: several row-aligned columns as one sampler, its draws and its report page
# (included by samplewright.smk). The table snapshot is made by sw_table_snapshot (intake.smk).
#
#   sw_joint_report  the page of one joint input (the report command given the joint artifact
#                    and its table snapshot): data rows over joint draws with rank correlations,
#                    each column against its marginal; registered with Snakemake's report().

import samplewright.pipeline.report_args as _sw_joint_report_args


rule sw_fit_joint:
    """Fit the marginals and the coupling of one joint input from its table snapshot."""
    input:
        lambda wc: ancient(SW.joint_snapshot_path(wc.joint)),
    output:
        SW.layout.joint("{joint}", "{key}"),
    wildcard_constraints:
        joint=SW.joint_pattern,
        key=SW.key_pattern,
    params:
        results_version=SW.results_version,
        args=lambda wc: SW.fit_joint_args(wc.joint),
        seed=SW.root_seed,
        fingerprint=lambda wc: SW.joint_fingerprint(wc.joint),
    log:
        SW.layout.log("fit_joint", "{joint}", "{key}"),
    benchmark:
        SW.layout.benchmark("fit_joint", "{joint}", "{key}")
    threads: 1
    resources:
        mem_mb=2000,
        runtime=30,
    shell:
        "samplewright fit-joint {input:q} {params.args} --seed {params.seed}"
        " --stream {wildcards.joint} --stream check --key {wildcards.key}"
        " --expect-fingerprint {params.fingerprint} --out {output:q} > {log:q} 2>&1"


rule sw_joint_draw:
    """A Parquet file of joint draws, one column per input."""
    input:
        lambda wc: ancient(SW.joint_path(wc.joint)),
    output:
        SW.layout.joint_draws("{joint}", "{key}"),
    wildcard_constraints:
        joint=SW.joint_pattern,
        key=SW.key_pattern,
    params:
        results_version=SW.results_version,
        n=lambda wc: SW.joints[wc.joint]["draws"],
        seed=SW.root_seed,
        sequence=lambda wc: SW.joints[wc.joint]["sequence"],
    log:
        SW.layout.log("joint_draw", "{joint}", "{key}"),
    shell:
        "samplewright draw {input:q} -n {params.n} --seed {params.seed}"
        " --stream {wildcards.joint} --stream draws --sequence {params.sequence}"
        " --out {output:q} > {log:q} 2>&1"


rule sw_joint_report:
    """The report page of one joint input (self-contained HTML; its numbers as JSON)."""
    input:
        joint=lambda wc: ancient(SW.joint_path(wc.joint)),
        data=lambda wc: ancient(SW.joint_snapshot_path(wc.joint)),
    output:
        html=report(
            SW.layout.report("{joint}", "{key}"),
            caption="joint_report.rst",
            category="{joint}",
            subcategory="joint report",
            labels={"joint input": "{joint}", "page": "joint report"},
        ),
        json=SW.layout.report_json("{joint}", "{key}"),
    wildcard_constraints:
        joint=SW.joint_pattern,
        key=SW.key_pattern,
    params:
        results_version=SW.results_version,
    log:
        SW.layout.log("joint_report", "{joint}", "{key}"),
    shell:
        "samplewright report {input.joint:q} --data {input.data:q} --dataset {wildcards.joint}"
        " --out {output.html:q} > {log:q} 2>&1"
