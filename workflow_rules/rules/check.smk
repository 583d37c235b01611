# Checks and reports: every candidate against the data (included by samplewright.smk).
#
#   sw_check   a check summary per dataset read from data (one column, a truncated column, or a
#              table snapshot of columns by role: truncation, censoring, interval rows): which
#              candidate was selected and why, goodness of fit (for incomplete data against the
#              matching nonparametric estimate, by a bootstrap that redoes the censoring and
#              truncation), every candidate's tail with bootstrap intervals, every warning, the
#              previous selection found in the store and what moved since (JSON, Markdown
#              beside);
#   sw_report  the self-contained HTML page per dataset (its numbers as JSON beside), registered
#              with Snakemake's report(): `snakemake --report report.html` gathers every page,
#              one category per dataset.


import samplewright.pipeline.report_args as _sw_report_args

SW.enable_reports()


rule sw_check:
    """Every candidate against the data: selection, goodness of fit, warnings, drift."""
    input:
        data=lambda wc: ancient(SW.snapshot_path(wc.dataset)),
        candidates=lambda wc: [ancient(p) for p in SW.candidate_paths(wc.dataset)],
        selected=lambda wc: ancient(SW.selected_path(wc.dataset)),
    output:
        json=SW.layout.check("{dataset}", "{key}"),
        md=SW.layout.check_markdown("{dataset}", "{key}"),
    wildcard_constraints:
        dataset=SW.dataset_pattern,
        key=SW.key_pattern,
    params:
        results_version=SW.results_version,
        labels=lambda wc: _sw_report_args.label_args(SW, wc.dataset),
        store=lambda wc: SW.layout.root,
        seed=SW.root_seed,
        threshold=SW.config["report"]["drift_threshold"],
        args=lambda wc: _sw_report_args.check_args(SW, wc.dataset),
    log:
        SW.layout.log("check", "{dataset}", "{key}"),
    benchmark:
        SW.layout.benchmark("check", "{dataset}", "{key}")
    shell:
        "samplewright check {input.data:q} {input.candidates:q} --selected {input.selected:q}"
        " {params.labels} --dataset {wildcards.dataset} --store {params.store:q}"
        " --drift-threshold {params.threshold} --seed {params.seed} {params.args}"
        " --stream {wildcards.dataset} --stream check --out {output.json:q} > {log:q} 2>&1"


rule sw_report:
    """The check report page of one dataset (self-contained HTML; its numbers as JSON)."""
    input:
        candidates=lambda wc: [ancient(p) for p in SW.candidate_paths(wc.dataset)],
        selected=lambda wc: ancient(SW.selected_path(wc.dataset)),
        check=lambda wc: _sw_report_args.optional_input(SW, "check", wc.dataset, ancient),
        data=lambda wc: _sw_report_args.optional_input(SW, "data", wc.dataset, ancient),
        intervals=lambda wc: _sw_report_args.optional_input(SW, "intervals", wc.dataset, ancient),
        replicates=lambda wc: _sw_report_args.optional_input(SW, "replicates", wc.dataset, ancient),
    output:
        html=report(
            SW.layout.report("{dataset}", "{key}"),
            caption="check_report.rst",
            category="{dataset}",
            subcategory="check report",
            labels={"dataset": "{dataset}", "page": "check report"},
        ),
        json=SW.layout.report_json("{dataset}", "{key}"),
    wildcard_constraints:
        dataset=_sw_report_args.dataset_report_pattern(SW),
        key=SW.key_pattern,
    params:
        results_version=SW.results_version,
        labels=lambda wc: _sw_report_args.label_args(SW, wc.dataset),
        args=lambda wc: _sw_report_args.report_args(SW, wc.dataset),
        threshold=SW.config["report"]["drift_threshold"],
    log:
        SW.layout.log("report", "{dataset}", "{key}"),
    shell:
        "samplewright report {input.candidates:q} --selected {input.selected:q} {params.args}"
        " {params.labels} --dataset {wildcards.dataset} --drift-threshold {params.threshold}"
        " --out {output.html:q} > {log:q} 2>&1"
