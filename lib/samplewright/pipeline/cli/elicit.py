"""The ``elicit`` command: a sampler artifact from expert judgement, no data file.

::

    samplewright elicit --quantiles "0.1:40,0.5:55,0.9:90" --lower 0 --out cost.parquet
    samplewright elicit --three-points 40,55,90 --family pert --shape 4 --out lead.parquet

``--quantiles`` passes a metalog through every point (or fits a named ``--family`` by least
squares on the quantile function, reporting how far it misses each point);
``--three-points LOW,MODE,HIGH`` gives a beta-PERT (default shape 4) or a triangular
distribution. The artifact's fingerprint is taken of the points, so the same judgement always
gives the same artifact.
"""

from __future__ import annotations

import argparse
from typing import Any

from samplewright.core.errors import MethodError
from samplewright.pipeline.cli.common import check_outputs, notes

__all__ = ["add_commands", "run_elicit"]


def run_elicit(args: argparse.Namespace) -> int:
    """Write the artifact of elicited quantiles or of a three-point estimate."""
    from samplewright.pipeline.elicited import (
        fit_elicited,
        parse_quantile_points,
        parse_three_points,
    )

    if (args.quantiles is None) == (args.three_points is None):
        raise MethodError("elicit: give exactly one of --quantiles or --three-points")
    check_outputs({"--out": args.out}, [])
    section: dict[str, Any]
    if args.quantiles is not None:
        if args.shape is not None:
            raise MethodError("--shape: only --three-points with family pert takes a shape")
        ps, xs = parse_quantile_points(args.quantiles)
        section = {"probabilities": ps, "values": xs, "family": args.family or "metalog"}
        section |= {"lower": args.lower, "upper": args.upper, "n_terms": args.n_terms}
        points = ps + xs
        kind = "quantiles"
    else:
        for flag, value in (("--lower", args.lower), ("--upper", args.upper)):
            if value is not None:
                raise MethodError(f"{flag}: --three-points takes no {flag} (LOW and HIGH bound it)")
        if args.n_terms is not None:
            raise MethodError("--n-terms: only --quantiles with family metalog takes it")
        low, mode, high = parse_three_points(args.three_points)
        section = {"low": low, "mode": mode, "high": high, "family": args.family or "pert"}
        if args.shape is not None:
            section["shape"] = args.shape
        points = [low, mode, high]
        kind = "three_points"

    from samplewright.pipeline.cli.fitting import one_line
    from samplewright.store.artifacts import write_sampler
    from samplewright.store.fingerprints import fingerprint_arrays

    with notes():
        sampler = fit_elicited(kind, section)
    write_sampler(
        sampler,
        args.out,
        fingerprint=fingerprint_arrays(points),
        key=args.key,
        data={"n_obs": 0, "n_points": len(points) if kind == "three_points" else len(ps)},
        diagnostics=sampler.diagnostics,
        provenance={"source": f"--{kind.replace('_', '-')}", "elicited": section},
    )
    print(f"{args.out}: {one_line(sampler)}")
    misses = (sampler.diagnostics.get("elicited") or {}).get("max_abs_miss")
    if misses is not None:
        print(f"{args.out}: largest miss of an elicited point {float(misses):.6g}")
    return 0


def add_commands(sub: Any) -> None:
    """Add ``elicit`` to the subcommand parsers ``sub``."""
    from samplewright.pipeline.choices import QUANTILE_FAMILIES, THREE_POINT_FAMILIES

    p = sub.add_parser("elicit", help="write an artifact from elicited quantiles or three points")
    p.add_argument(
        "--quantiles", metavar="P:VALUE,...", help="elicited quantiles, e.g. 0.1:40,0.5:55,0.9:90"
    )
    p.add_argument(
        "--three-points", metavar="LOW,MODE,HIGH", help="minimum, most likely and maximum value"
    )
    p.add_argument(
        "--family",
        choices=(*QUANTILE_FAMILIES, *THREE_POINT_FAMILIES),
        help="quantiles: metalog (default) or a family fitted by least squares; "
        "three points: pert (default) or triangular",
    )
    p.add_argument("--lower", type=float, help="quantiles: lower bound (metalog) or location")
    p.add_argument("--upper", type=float, help="quantiles: upper bound (metalog; beta needs both)")
    p.add_argument("--n-terms", type=int, help="quantiles, metalog: number of terms")
    p.add_argument("--shape", type=float, help="three points, pert: weight of the mode (4)")
    p.add_argument("--out", required=True, help="artifact path (.parquet)")
    p.add_argument("--key", help="content key to record (set by the workflow rules)")
    p.set_defaults(func=run_elicit)
