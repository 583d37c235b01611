"""``fit``'s help and name checks, made from the method catalog; its warnings on stderr.

* :func:`methods_epilog`: every method with its one-line summary and its options (the
  catalog's :class:`~samplewright.fitting.catalog.OptionSpec` summaries), for ``fit --help``;
* :func:`check_method_name`: an unknown method or option name is refused with the nearest known
  name (``difflib``), not the whole list;
* :func:`print_recorded_warnings`: the warnings a fit recorded, one ``samplewright: warning:``
  line each on stderr (the command still succeeds).

Nothing here imports numpy, so ``samplewright fit --help`` stays fast.
"""

from __future__ import annotations

import difflib
import textwrap
from collections.abc import Mapping
from typing import Any

from samplewright.core.errors import MethodError
from samplewright.fitting.catalog import CATALOG, METHODS

__all__ = [
    "FIT_USAGE",
    "check_method_name",
    "methods_epilog",
    "nearest",
    "print_recorded_warnings",
]

FIT_USAGE = (
    "samplewright fit DATA (--column COLUMN | --lower COLUMN --upper COLUMN) --method METHOD "
    "--out OUT.parquet [options]\n"
    "       (--column is required for a data file; a snapshot made by 'samplewright snapshot' "
    "names its own)"
)
_GROUPS = (
    ("nonparametric", "the data's own distribution"),
    ("family", "parametric families (maximum likelihood)"),
    ("extension", "composite, nonparametric-incomplete and automatic methods"),
)


def methods_epilog(width: int = 100) -> str:
    """Every method of the catalog with its summary and options, grouped, as help text."""
    lines = ["methods (--method) and their options (--option KEY=VALUE):"]
    for group, title in _GROUPS:
        lines += ["", f"  {title}:"]
        for name in METHODS:
            spec = CATALOG[name]
            if spec.group != group:
                continue
            head = f"    {name:<20}{spec.summary}" + (" [censoring]" if spec.censoring else "")
            lines += textwrap.wrap(head, width, subsequent_indent=" " * 24)
            for opt in spec.options:
                lines += textwrap.wrap(
                    f"      {opt.name}: {opt.summary}", width, subsequent_indent=" " * 10
                )
    lines += [
        "",
        "  [censoring]: takes right-censored values (--censor).",
        "  Options are JSON values: -o loc=free, -o threshold_quantile=0.95, "
        '-o \'candidates=["gamma","weibull"]\'.',
    ]
    return "\n".join(lines)


def nearest(name: str, choices: Any) -> str | None:
    """The known name closest to ``name`` (difflib ratio >= 0.6), or None.

    >>> nearest("gama", ["gamma", "normal"]), nearest("zzz", ["gamma"])
    ('gamma', None)
    """
    found = difflib.get_close_matches(str(name), list(choices), n=1, cutoff=0.6)
    return found[0] if found else None


def check_method_name(method: str, options: Mapping[str, Any]) -> None:
    """Refuse an unknown method or option name, suggesting the nearest known one.

    >>> check_method_name("lognormall", {})
    Traceback (most recent call last):
    ...
    samplewright.core.errors.MethodError: --method: unknown method 'lognormall'; did you mean \
'lognormal'? ('samplewright fit --help' lists every method)
    """
    if method not in CATALOG:
        near = nearest(method, METHODS)
        hint = f"; did you mean {near!r}?" if near else ""
        raise MethodError(
            f"--method: unknown method {method!r}{hint} ('samplewright fit --help' lists every "
            "method)"
        )
    allowed = CATALOG[method].option_names
    for key in options:
        if key not in allowed:
            near = nearest(key, sorted(allowed))
            hint = f"; did you mean {near!r}?" if near else ""
            takes = ", ".join(sorted(allowed)) or "no options"
            raise MethodError(f"--option: {method} has no option {key!r}{hint} (it takes: {takes})")


def print_recorded_warnings(sampler: Any) -> int:
    """Print the warnings the fit recorded (one stderr line each); how many there were."""
    from samplewright.check.recorded import artifact_warnings
    from samplewright.pipeline.cli.output import warn

    meta = {"sampler": sampler.describe(), "diagnostics": getattr(sampler, "diagnostics", {})}
    return warn(artifact_warnings(meta))
