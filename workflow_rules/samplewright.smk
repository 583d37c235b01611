# samplewright rules: snapshot, fit, select, draw, resample and check samplers, all content-addressed.
#
# Use from your Snakefile, either as a module:
#     import samplewright
#     module samplewright:
#         snakefile: samplewright.rules_path()
#         config: config["samplewright"]
#     use rule * from samplewright
# or with   include: samplewright.rules_path()   (then the top-level key "samplewright" is read).
#
# This entry file builds the plan (every key and path, at parse time) and includes one rule file
# per stage from rules/ beside it:
#     intake.smk   sw_fingerprint (checkpoint, for data made by the workflow), sw_snapshot,
#                  sw_table_snapshot (joint inputs; truncation / interval columns)
#     elicit.smk   sw_elicit (quantiles and three_points datasets: no data file)
#     fit.smk      sw_fit, sw_knots
#     select.smk   sw_select
#     draw.smk     sw_draw
#     resample.smk sw_intervals (bootstrap intervals), sw_replicates (parameter replicates)
#     joint.smk    sw_fit_joint, sw_joint_draw
#     check.smk    sw_check (check summary), sw_report (report page, registered with report())
# Store paths come from the plan's layout (samplewright.store.layout), never spelled here.
#
# Only the intake rules name the raw data file; every rule below reads the content-addressed
# snapshot through ancient(), so touching, re-downloading or converting a file reruns nothing
# below it. Each rule from fitting down carries the results version in params: bumping it (on an
# algorithm change) reruns them; the intake rules carry the snapshot format version instead
# (snapshots hold data, not results). Every rule has a log; resources and threads can be
# overridden from a profile (set-resources, set-threads).

import samplewright.pipeline.helpers as _sw_helpers
import samplewright.pipeline.plan as _sw_plan

SW = _sw_helpers.register(
    _sw_plan.Plan(config.get("samplewright", config), checkpoints=checkpoints)
)


include: "rules/intake.smk"
include: "rules/elicit.smk"
include: "rules/fit.smk"
include: "rules/select.smk"
include: "rules/draw.smk"
include: "rules/resample.smk"
include: "rules/joint.smk"
include: "rules/check.smk"
