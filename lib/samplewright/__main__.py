"""``python -m samplewright`` runs the command line."""

import sys

from samplewright.pipeline.cli import main

sys.exit(main())
