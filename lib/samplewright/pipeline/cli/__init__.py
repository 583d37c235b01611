"""The ``samplewright`` command line: :func:`main` parses and dispatches (see :mod:`.main`).

One module per command group: :mod:`.fitting` (fit, knots), :mod:`.draws` (draw),
:mod:`.inspect` (show, verify), :mod:`.data` (fingerprint, snapshot) and :mod:`.workflow`
(select, check); :mod:`.common` holds what they share.
"""

from __future__ import annotations

from samplewright.pipeline.cli.main import build_parser, main

__all__ = ["build_parser", "main"]
