# Checks and reports: every candidate against the data (included by samplewright.smk).
#
#   sw_check   a check summary per dataset read from one column: which candidate was selected
#              and why, goodness of fit, every warning, the previous selection found in the store
#              and what moved since (JSON, Markdown beside);
#   sw_report  the self-contained HTML page per dataset (its numbers as JSON beside), registered
#              with Snakemake's report(): `snakemake --report report.html` gathers every page,
#              one category per dataset.


SW.enable_reports()


def _sw_labels(wc):
    return " ".join(f"--label {s.label}" for s in SW.candidates(wc.dataset))


def _sw_report_args(wc):
    import shlex

    ds, args = SW.datasets[wc.dataset], []
    if SW.has_check(wc.dataset):
        args += ["--check", SW.check_path(wc.dataset)]
    if SW.has_data(wc.dataset):
        args += ["--data", SW.snapshot_path(wc.dataset)]
    if ds.get("units"):
        args += ["--units", ds["units"]]
    if "intervals" in ds:
        args += ["--intervals", SW.intervals_path(wc.dataset)]
    if "replicates" in ds:
        args += ["--replicates", SW.replicates_path(wc.dataset)]
    return " ".join(shlex.quote(a) for a in args)


def _sw_optional(fn, when):
    return lambda wc: [ancient(fn(wc.dataset))] if when(wc.dataset) else []


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
        labels=_sw_labels,
        store=SW.layout.root,
        seed=SW.root_seed,
        threshold=SW.config["report"]["drift_threshold"],
    log:
        SW.layout.log("check", "{dataset}", "{key}"),
    benchmark:
        SW.layout.benchmark("check", "{dataset}", "{key}")
    shell:
        "samplewright check {input.data:q} {input.candidates:q} --selected {input.selected:q}"
        " {params.labels} --dataset {wildcards.dataset} --store {params.store:q}"
        " --drift-threshold {params.threshold} --seed {params.seed}"
        " --stream {wildcards.dataset} --stream check --out {output.json:q} > {log:q} 2>&1"


rule sw_report:
    """The check report page of one dataset (self-contained HTML; its numbers as JSON)."""
    input:
        candidates=lambda wc: [ancient(p) for p in SW.candidate_paths(wc.dataset)],
        selected=lambda wc: ancient(SW.selected_path(wc.dataset)),
        check=_sw_optional(SW.check_path, SW.has_check),
        data=_sw_optional(SW.snapshot_path, SW.has_data),
        intervals=_sw_optional(SW.intervals_path, lambda d: "intervals" in SW.datasets[d]),
        replicates=_sw_optional(SW.replicates_path, lambda d: "replicates" in SW.datasets[d]),
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
        dataset=SW.dataset_pattern,
        key=SW.key_pattern,
    params:
        results_version=SW.results_version,
        labels=_sw_labels,
        args=_sw_report_args,
        threshold=SW.config["report"]["drift_threshold"],
    log:
        SW.layout.log("report", "{dataset}", "{key}"),
    shell:
        "samplewright report {input.candidates:q} --selected {input.selected:q} {params.args}"
        " {params.labels} --dataset {wildcards.dataset} --drift-threshold {params.threshold}"
        " --out {output.html:q} > {log:q} 2>&1"
