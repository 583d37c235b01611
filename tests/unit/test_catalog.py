"""The static method catalog matches the implementations it stands in for."""

from __future__ import annotations

import subprocess
import sys

from samplewright.fitting import catalog
from samplewright.distributions.families import FAMILIES, FIT_OPTIONS
from samplewright.fitting.api import NONPARAMETRIC_METHODS
from samplewright.fitting.registry import load_extensions


def test_family_options_match_the_families_module() -> None:
    """Every family and its accepted options are listed exactly as families.py defines them."""
    assert set(catalog.FAMILY_OPTIONS) == set(FAMILIES)
    for name, options in catalog.FAMILY_OPTIONS.items():
        assert options == FIT_OPTIONS[name], name


def test_extension_methods_are_registered_by_their_modules() -> None:
    """Loading the extension modules registers exactly the catalogued extension methods."""
    assert set(load_extensions()) == set(catalog.EXTENSION_MODULES)
    assert set(catalog.NONPARAMETRIC) == set(NONPARAMETRIC_METHODS)


def test_extension_options_match_their_modules() -> None:
    """The catalogued options of each extension method are exactly those its fitter accepts."""
    import pytest

    from samplewright.check import auto as model_choice
    from samplewright.fitting import smoothed as smoothing
    from samplewright.fitting import spliced as tails
    from samplewright.core.errors import MethodError
    from samplewright.fitting.api import fit

    assert catalog.EXTENSION_OPTIONS["auto"] == set(model_choice._OPTIONS)
    assert catalog.EXTENSION_OPTIONS["spliced"] == set(tails._OPTIONS)
    assert catalog.EXTENSION_OPTIONS["smoothed"] == set(smoothing._OPTIONS)
    x = [1.0, 2.0, 2.5, 4.0, 7.0]
    assert fit(x, "kaplan_meier", tail="at_last").method == "kaplan_meier"
    for method in ("kaplan_meier", "empirical_pmf"):
        with pytest.raises(MethodError, match="unknown option 'colour'"):
            fit(x, method, colour=1)


def test_planning_imports_stay_light() -> None:
    """Importing samplewright.workflow (as every Snakemake parse does) loads no scipy or pandas."""
    code = (
        "import sys, samplewright, samplewright.workflow, samplewright.pipeline.plan; "
        "print(sorted(m for m in ('scipy', 'pandas', 'pyarrow') if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"
