"""The ``samplewright`` command line: :func:`main` parses and dispatches (see :mod:`.main`).

One module per command group: :mod:`.fitting` (fit, knots), :mod:`.joint` (fit-joint),
:mod:`.elicit` (elicit), :mod:`.draws` (draw), :mod:`.resample` (interval, replicate, spread,
mc-error), :mod:`.inspect` (show, verify), :mod:`.data` (fingerprint, snapshot), :mod:`.tables`
(snapshot-table) and :mod:`.workflow` (select, check); :mod:`.common` holds what they share.
"""

from __future__ import annotations

from samplewright.pipeline.cli.main import build_parser, main

__all__ = ["build_parser", "main"]
