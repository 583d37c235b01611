"""``samplewright store ...``: look after a whole store (tables for people, ``--json`` for tools).

* ``list``     every file: area, dataset, label, method, key, created, n, size, and whether the
               current configuration references it;
* ``current``  the sampler a dataset's downstream steps get now (from the configuration);
* ``verify``   every artifact's hashes and every snapshot's fingerprint;
* ``compare``  two artifacts: parameters, key quantiles, mean, tail mean, KS distance;
* ``prune``    what the configuration no longer references (a dry run unless ``--apply``; the
               newest ``--keep`` unreferenced versions of each kind are kept);
* ``clean``    stale temporary files left by interrupted writes;
* ``export``   a dataset's current draws (or any draws file) as CSV or Parquet (``--json``:
               what was written, as JSON).

The configuration is the workflow's YAML (``--config``, default ``config.yaml`` when present),
read with the top-level key ``samplewright`` (or as the section itself); relative data paths in
it are relative to the folder the command runs in, as for Snakemake. The listing, pruning and
cleaning logic is :mod:`samplewright.store.listing`; this module reads the plan and prints.
"""

from __future__ import annotations

import argparse
import json
from pathlib import Path
from typing import Any

from samplewright.core.errors import ConfigError, MethodError
from samplewright.pipeline.cli.common import EXIT_INPUT, EXIT_INTEGRITY, check_outputs
from samplewright.pipeline.cli.output import emit, table

__all__ = ["add_commands", "referenced_paths"]

_DEFAULT_CONFIG = "config.yaml"


def _size(n: int) -> str:
    v = float(n)
    for unit in ("B", "kB", "MB", "GB"):
        if v < 1000 or unit == "GB":
            return f"{v:.0f} {unit}" if unit == "B" else f"{v:.1f} {unit}"
        v /= 1000
    return f"{v:.1f} TB"  # pragma: no cover


def _load_config(path: str | None, required: bool) -> dict[str, Any] | None:
    import yaml

    if path is None:
        if not Path(_DEFAULT_CONFIG).is_file():
            if required:
                raise ConfigError(
                    f"--config: no configuration given and no {_DEFAULT_CONFIG} in this folder"
                )
            return None
        path = _DEFAULT_CONFIG
    try:
        raw = yaml.safe_load(Path(path).read_text(encoding="utf-8"))
    except (OSError, yaml.YAMLError) as exc:
        raise ConfigError(f"--config {path}: cannot be read ({str(exc).splitlines()[0]})") from None
    if not isinstance(raw, dict):
        raise ConfigError(f"--config {path}: expected a mapping, found {type(raw).__name__}")
    section = raw.get("samplewright", raw)
    return section if isinstance(section, dict) else None


class _Checkpoints:
    """Stands in for Snakemake's checkpoints: a produced dataset's record, if it was written."""

    def __init__(self, layout: Any) -> None:
        self.layout = layout
        self.sw_fingerprint = self

    def get(self, *, dataset: str) -> Any:
        path = self.layout.produced(dataset)
        if not Path(path).is_file():
            raise ConfigError(f"{path}: the produced dataset {dataset!r} was not fingerprinted yet")
        return argparse.Namespace(output=[path])


def _plan(section: dict[str, Any]) -> Any:
    from samplewright.pipeline.plan import Plan
    from samplewright.store.layout import StoreLayout

    layout = StoreLayout(str(section.get("store", "samplewright-store")))
    plan = Plan(section, checkpoints=_Checkpoints(layout))
    if hasattr(plan, "enable_reports"):
        plan.enable_reports()  # the rules make reports: they are referenced
    return plan


def referenced_paths(plan: Any) -> tuple[set[str], set[str]]:
    """``(paths the plan references, datasets whose references are unknown)``.

    A produced dataset not fingerprinted yet has unknown references: none of its files is
    pruned.
    """
    from samplewright.pipeline.report_args import checks, joint_report_path

    paths: set[str] = set()
    unknown: set[str] = set()
    for name in plan.datasets:
        try:
            found = list(plan.dataset_targets(name))
            has_data = plan.has_data(name) if hasattr(plan, "has_data") else not plan.is_knots(name)
            if has_data:
                found.append(plan.snapshot_path(name))
            if has_data and checks(plan, name) and plan.check_path(name) not in found:
                found.append(plan.check_path(name))  # the report's input (table datasets too)
            found += plan.candidate_paths(name)
            for p in list(found):
                if p == plan.check_path(name) and p.endswith(".json"):
                    found.append(p[: -len(".json")] + ".md")
                if p.endswith(".html"):
                    found.append(p[: -len(".html")] + ".json")
        except ConfigError:
            unknown.add(name)
            continue
        paths.update(found)
    for name in getattr(plan, "joints", {}) or {}:
        paths.update(plan.joint_targets(name))
        if hasattr(plan, "joint_snapshot_path"):
            paths.add(plan.joint_snapshot_path(name))
        if getattr(plan, "reports_enabled", False):
            page = joint_report_path(plan, name)
            paths.update({page, page[: -len(".html")] + ".json"})
    return paths, unknown


def _store_root(args: argparse.Namespace, section: dict[str, Any] | None) -> str:
    if args.store:
        return str(args.store)
    if section is not None:
        return str(section.get("store", "samplewright-store"))
    raise ConfigError("--store: give the store folder, or --config with its 'store'")


def _entries(args: argparse.Namespace, *, need_config: bool) -> tuple[list[Any], str]:
    from dataclasses import replace

    from samplewright.store.listing import list_store

    section = _load_config(args.config, need_config)
    root = _store_root(args, section)
    if not Path(root).is_dir():
        raise ConfigError(f"store {root}: no such folder")
    if section is None:
        return list_store(root), root
    refs, unknown = referenced_paths(_plan(section))
    entries = list_store(root, referenced=refs)
    entries = [replace(e, referenced=None) if e.dataset in unknown else e for e in entries]
    return entries, root


def _yes(v: bool | None) -> str:
    return "?" if v is None else ("yes" if v else "no")


def run_list(args: argparse.Namespace) -> int:
    """List the store's files."""
    entries, _ = _entries(args, need_config=False)
    if args.dataset:
        entries = [e for e in entries if e.dataset == args.dataset]
    if args.json:
        emit(json.dumps([e.as_dict() for e in entries], indent=2))
        return 0
    rows = [
        [
            e.area,
            e.dataset,
            e.label or "",
            e.method or "",
            e.key[:12] + ("." + Path(e.path).suffix[1:] if e.kind == "document" else ""),
            (e.created or "")[:19].replace("T", " "),
            "" if e.n is None else str(e.n),
            _size(e.size),
            _yes(e.referenced),
        ]
        for e in entries
    ]
    head = ["area", "dataset", "label", "method", "key", "created", "n", "size", "in config"]
    emit(table(head, rows, right=[6, 7]) if rows else "the store holds no files")
    return 0


def run_current(args: argparse.Namespace) -> int:
    """Show the sampler dataset ``args.dataset`` gets now."""
    from samplewright.check.show_text import format_show
    from samplewright.store.artifacts import load_sampler

    section = _load_config(args.config, True)
    assert section is not None
    plan = _plan(section)
    if args.dataset not in plan.datasets:
        raise ConfigError(
            f"dataset {args.dataset!r} is not in the configuration (datasets: "
            f"{', '.join(sorted(plan.datasets))})"
        )
    path = plan.selected_path(args.dataset)
    if not Path(path).is_file():
        raise ConfigError(
            f"{path}: the current sampler of {args.dataset!r} is not made yet; run snakemake"
        )
    sampler = load_sampler(path)
    if args.json:
        emit(json.dumps({"path": path, "metadata": sampler.metadata}, indent=2, sort_keys=True))
    else:
        emit(format_show(path, sampler, sampler.metadata))
    return 0


def run_verify(args: argparse.Namespace) -> int:
    """Verify every artifact and column snapshot; exit 3 if any was altered, 2 if unreadable."""
    import sys

    from samplewright.store.listing import verify_store

    section = _load_config(args.config, False)
    root = _store_root(args, section)
    if not Path(root).is_dir():
        raise ConfigError(f"store {root}: no such folder")
    results = verify_store(root)
    status = 0
    for r in results:
        if not r.ok:
            status = EXIT_INTEGRITY if r.integrity else (status or EXIT_INPUT)
    if args.json:
        emit(json.dumps([r.__dict__ for r in results], indent=2))
    else:
        for r in results:
            emit(f"{'ok  ' if r.ok else 'FAIL'} {r.path}" + (f": {r.detail}" if r.ok else ""))
            if not r.ok:
                emit(f"     {r.detail}")
    bad = [r for r in results if not r.ok]
    if bad:
        print(
            f"samplewright: error: {len(bad)} of {len(results)} store file(s) failed; first: "
            f"{bad[0].detail}",
            file=sys.stderr,
        )
    return status


def run_compare(args: argparse.Namespace) -> int:
    """Compare two artifacts: parameters, key quantiles, mean, tail mean and KS distance."""
    from samplewright.check.drift import compare_samplers
    from samplewright.check.show_text import format_value
    from samplewright.store.artifacts import load_sampler

    a, b = load_sampler(args.first), load_sampler(args.second)
    r = compare_samplers(a, b, threshold=args.drift_threshold)
    if args.json:
        doc = {
            "first": {"path": args.first, "method": a.method, "params": a.params},
            "second": {"path": args.second, "method": b.method, "params": b.params},
            **r.as_dict(),
        }
        emit(json.dumps(doc, indent=2, default=str))
        return 0

    def params(s: Any) -> str:
        return ", ".join(f"{k} = {format_value(v)}" for k, v in s.params.items()) or "none"

    lines = [
        f"first   {args.first}: {a.method} ({params(a)})",
        f"second  {args.second}: {b.method} ({params(b)})",
        "",
    ]
    rows = [
        [f"quantile {100 * p:g}%", format_value(x, 5), format_value(y, 5), format_value(y - x, 4)]
        for p, (x, y) in r.quantiles.items()
    ]
    rows.append(
        ["mean", *(format_value(v, 5) for v in r.mean), format_value(r.mean[1] - r.mean[0], 4)]
    )
    t0, t1 = r.tail_mean
    rows.append(
        [
            f"tail mean {100 * (1 - r.tail_level):g}%",
            format_value(t0, 5),
            format_value(t1, 5),
            format_value(t1 - t0, 4),
        ]
    )
    lines.append(table(["figure", "first", "second", "change"], rows, right=[1, 2, 3]))
    flag = "above" if r.flagged else "not above"
    lines += [
        "",
        f"KS distance {format_value(r.ks_distance, 4)} (largest gap at {format_value(r.at, 5)}),"
        f" {flag} the threshold {r.threshold:g}",
    ]
    emit("\n".join(lines))
    return 0


def run_prune(args: argparse.Namespace) -> int:
    """Remove (with --apply) or list the versions the configuration no longer references."""
    from samplewright.store.listing import plan_prune, remove_versions

    if args.keep < 0:
        raise MethodError(f"--keep: expected an int >= 0, found {args.keep}")
    entries, root = _entries(args, need_config=True)
    doomed = plan_prune(entries, keep=args.keep)
    size = sum(e.size for e in doomed)
    removed = remove_versions(doomed)[0] if args.apply else 0
    if args.json:
        emit(
            json.dumps(
                {
                    "store": root,
                    "applied": bool(args.apply),
                    "keep": args.keep,
                    "files": [e.path for e in doomed],
                    "bytes": size,
                    "removed": removed,
                },
                indent=2,
            )
        )
        return 0
    verb = "removed" if args.apply else "would remove"
    for e in doomed:
        emit(f"{verb} {e.path} ({_size(e.size)})")
    summary = (
        f"{verb} {len(doomed)} file(s), {_size(size)}; kept the newest {args.keep} unused "
        "version(s) of each"
    )
    if not args.apply and doomed:
        summary += "; run again with --apply to delete"
    emit(summary)
    return 0


def run_clean(args: argparse.Namespace) -> int:
    """Remove stale temporary files of interrupted writes."""
    from samplewright.store.listing import clean_store

    section = _load_config(args.config, False)
    root = _store_root(args, section)
    if args.max_age_hours is not None and args.max_age_hours < 0:
        raise MethodError(f"--max-age-hours: expected a number >= 0, found {args.max_age_hours}")
    age = None if args.max_age_hours is None else args.max_age_hours * 3600.0
    removed = clean_store(root, max_age_s=age)
    if args.json:
        emit(json.dumps({"store": root, "removed": [str(p) for p in removed]}, indent=2))
    else:
        for p in removed:
            emit(f"removed {p}")
        emit(f"removed {len(removed)} stale temporary file(s)")
    return 0


def run_export(args: argparse.Namespace) -> int:
    """Write a dataset's current draws (or a draws file) as CSV or Parquet."""
    import pyarrow.parquet as pq

    out = Path(args.out)
    if out.suffix.lower() not in (".csv", ".parquet"):
        raise MethodError(f"--out: expected a .csv or .parquet file, found {out.name!r}")
    source = Path(args.target)
    if not (source.suffix.lower() == ".parquet" and source.is_file()):
        section = _load_config(args.config, True)
        assert section is not None
        plan = _plan(section)
        if args.target not in plan.datasets:
            raise ConfigError(
                f"{args.target!r} is neither a draws file nor a dataset of the configuration "
                f"(datasets: {', '.join(sorted(plan.datasets))})"
            )
        source = Path(plan.draws_path(args.target))
        if not source.is_file():
            raise ConfigError(f"{source}: the draws of {args.target!r} are not made yet")
    check_outputs({"--out": out}, [source])
    try:
        tab = pq.read_table(source)
    except Exception as exc:  # noqa: BLE001 - any reader error is one line
        raise MethodError(f"{source}: not a readable Parquet file ({exc})") from None
    from samplewright.store.atomic import atomic_write

    if out.suffix.lower() == ".csv":
        frame = tab.to_pandas()
        # 17 significant digits: every float64 reads back exactly
        atomic_write(out, lambda tmp: frame.to_csv(tmp, index=False, float_format="%.17g"))
    else:
        plain = tab.replace_schema_metadata(None)
        atomic_write(out, lambda tmp: pq.write_table(plain, tmp))
    if args.json:
        doc = {
            "source": str(source),
            "out": str(out),
            "format": out.suffix.lower()[1:],
            "rows": tab.num_rows,
            "columns": list(tab.column_names),
            "bytes": out.stat().st_size,
        }
        emit(json.dumps(doc, indent=2))
        return 0
    emit(f"{out}: {tab.num_rows} rows, columns {', '.join(tab.column_names)} (from {source})")
    return 0


def _common(p: argparse.ArgumentParser, *, store: bool = True) -> None:
    p.add_argument(
        "--config", help=f"workflow configuration (YAML; default: ./{_DEFAULT_CONFIG} if present)"
    )
    if store:
        p.add_argument("--store", help="store folder (default: the configuration's 'store')")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")


def add_commands(sub: Any) -> None:
    """Add ``store`` and its subcommands to the subcommand parsers ``sub``."""
    store = sub.add_parser(
        "store",
        help="list, verify, compare, prune, clean and export what a store holds",
        description=__doc__.split("\n\n")[0] if __doc__ else None,
    )
    ssub = store.add_subparsers(dest="store_command", required=True, metavar="ACTION")

    p = ssub.add_parser("list", help="every file of the store, and whether the config uses it")
    _common(p)
    p.add_argument("--dataset", help="only this dataset's files")
    p.set_defaults(func=run_list)

    p = ssub.add_parser("current", help="the sampler a dataset's downstream steps get now")
    p.add_argument("dataset")
    _common(p, store=False)
    p.set_defaults(func=run_current)

    p = ssub.add_parser("verify", help="verify every artifact and column snapshot")
    _common(p)
    p.set_defaults(func=run_verify)

    p = ssub.add_parser("compare", help="compare two artifacts (parameters, quantiles, KS)")
    p.add_argument("first")
    p.add_argument("second")
    p.add_argument(
        "--drift-threshold",
        type=float,
        default=0.05,
        help="KS distance called a notable change (default 0.05)",
    )
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.set_defaults(func=run_compare)

    p = ssub.add_parser(
        "prune", help="remove what the configuration no longer references (dry run by default)"
    )
    _common(p)
    p.add_argument(
        "--keep",
        type=int,
        default=1,
        help="unreferenced versions to keep per dataset and kind, newest first (default 1: the "
        "previous selection stays for the next drift check)",
    )
    p.add_argument("--apply", action="store_true", help="delete (default: only list)")
    p.set_defaults(func=run_prune)

    p = ssub.add_parser("clean", help="remove stale temporary files of interrupted writes")
    _common(p)
    p.add_argument(
        "--max-age-hours",
        type=float,
        help="also remove temporary files older than this (default 24; a dead writer's at once)",
    )
    p.set_defaults(func=run_clean)

    p = ssub.add_parser("export", help="a dataset's current draws (or a draws file) as CSV/Parquet")
    p.add_argument("target", help="a dataset name of the configuration, or a draws .parquet file")
    p.add_argument("--out", required=True, help="output file: .csv or .parquet")
    _common(p, store=False)
    p.set_defaults(func=run_export)
