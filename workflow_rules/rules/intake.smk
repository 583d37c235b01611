# Intake: the only rules that name a raw data file (included by samplewright.smk, which defines SW).


checkpoint sw_fingerprint:
    """Fingerprint of data made by a rule of this workflow (datasets with produced: true)."""
    input:
        lambda wc: SW.datasets[wc.dataset]["path"],
    output:
        SW.layout.produced("{dataset}"),
    wildcard_constraints:
        dataset=SW.dataset_pattern,
    params:
        snapshot_version=SW.snapshot_version,
        args=lambda wc: SW.snapshot_args(wc.dataset),
    log:
        SW.layout.log("fingerprint", "{dataset}"),
    resources:
        mem_mb=lambda wc, input: SW.snapshot_mem_mb(input[0], input.size_mb),
        runtime=10,
    shell:
        "samplewright fingerprint {input:q} {params.args} --json-out {output:q}"
        " > {log:q} 2>&1"


rule sw_snapshot:
    """The cleaned values of one data column, stored under their fingerprint."""
    input:
        lambda wc: ancient(SW.datasets[wc.dataset]["path"]),
    output:
        SW.layout.snapshot("{dataset}", "{fp}"),
    wildcard_constraints:
        dataset=SW.dataset_pattern,
        fp=SW.key_pattern,
    params:
        snapshot_version=SW.snapshot_version,
        args=lambda wc: SW.snapshot_args(wc.dataset),
        cache=lambda wc: SW.layout.root,
    log:
        SW.layout.log("snapshot", "{dataset}", "{fp}"),
    benchmark:
        SW.layout.benchmark("snapshot", "{dataset}", "{fp}")
    resources:
        # scales with the data file (reading a column holds it in memory a few times over)
        mem_mb=lambda wc, input: SW.snapshot_mem_mb(input[0], input.size_mb),
        runtime=10,
    shell:
        "samplewright snapshot {input:q} {params.args} --expect-fingerprint {wildcards.fp}"
        " --cache-dir {params.cache:q} --out {output:q} > {log:q} 2>&1"


rule sw_table_snapshot:
    """Several row-aligned columns (a joint input, or a dataset's truncation / interval
    columns), cleaned row by row and stored under their fingerprint."""
    input:
        lambda wc: ancient(SW.table_source(wc.name)),
    output:
        SW.layout.table_snapshot("{name}", "{fp}"),
    wildcard_constraints:
        name=SW.table_pattern,
        fp=SW.key_pattern,
    params:
        snapshot_version=SW.snapshot_version,
        args=lambda wc: SW.table_snapshot_args(wc.name),
        cache=lambda wc: SW.layout.root,
    log:
        SW.layout.log("table_snapshot", "{name}", "{fp}"),
    benchmark:
        SW.layout.benchmark("table_snapshot", "{name}", "{fp}")
    resources:
        mem_mb=lambda wc, input: SW.snapshot_mem_mb(input[0], input.size_mb),
        runtime=10,
    shell:
        "samplewright snapshot-table {input:q} {params.args} --expect-fingerprint {wildcards.fp}"
        " --cache-dir {params.cache:q} --out {output:q} > {log:q} 2>&1"
