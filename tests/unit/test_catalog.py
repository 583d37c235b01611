"""The method catalog is the one registry: every entry dispatches, and each option is real."""

from __future__ import annotations

import importlib
import pkgutil
import subprocess
import sys

import numpy as np
import pytest

from samplewright.core.errors import MethodError
from samplewright.distributions.base import SAMPLER_KINDS, Sampler
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.families import FAMILIES
from samplewright.fitting import api, catalog
from samplewright.fitting.api import fit, known_methods
from samplewright.fitting.catalog import CATALOG, KINDS, METHOD_OPTIONS, METHODS
from samplewright.fitting.mle import FAMILY_FITS
from samplewright.fitting.registry import load_object, load_sampler_kinds, sampler_class

# invented values every method accepts (positive whole numbers, spread out, 12 of them)
DATA = np.array([1.0, 2.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0, 11.0, 14.0])


def test_methods_and_options_are_derived_from_the_one_table() -> None:
    """METHODS, METHOD_OPTIONS and known_methods() all come from CATALOG, sorted by name."""
    assert METHODS == tuple(sorted(CATALOG)) and known_methods() == list(METHODS)
    assert METHOD_OPTIONS == {m: frozenset(o.name for o in CATALOG[m].options) for m in CATALOG}
    assert all(name == spec.name for name, spec in CATALOG.items())


def test_family_entries_match_the_families_and_their_fits() -> None:
    """The catalog's family methods are exactly the registered families, each with a fit."""
    families = {m for m, spec in CATALOG.items() if spec.group == "family"}
    assert families == set(FAMILIES) == set(FAMILY_FITS)
    for name in families:
        assert CATALOG[name].kind == "parametric"
        assert CATALOG[name].censoring == (
            not FAMILIES[name].discrete and name not in {"uniform", "triangular"}
        )


@pytest.mark.parametrize("method", METHODS)
def test_every_method_is_dispatchable(method: str) -> None:
    """The fitter, the diagnostics hook and the sampler kind of every entry load and fit."""
    spec = CATALOG[method]
    assert callable(load_object(spec.fitter))
    if spec.diagnostics is not None:
        assert callable(load_object(spec.diagnostics))
    options = {"n_trials": 20} if method == "binomial" else {}
    if method == "auto":
        options = {"n_resamples": 0}
    x = DATA / 15.0 if method == "beta" else DATA
    if method == "spliced":  # at least 10 values above the threshold
        x = np.linspace(1.0, 50.0, 200)
    if method == "student_t":  # heavy tails: a quick fit
        x = np.random.default_rng(0).standard_t(2.0, 40)
    sampler = fit(x, method, **options)
    assert isinstance(sampler, sampler_class(spec.kind))  # type: ignore[arg-type]
    assert sampler.kind == spec.kind and sampler.method == method


@pytest.mark.parametrize(
    ("method", "option"), [(m, o.name) for m in METHODS for o in CATALOG[m].options]
)
def test_every_listed_option_is_read_by_the_fitter(method: str, option: str) -> None:
    """A bad value of each listed option is refused by name: the fitter reads that option."""
    with pytest.raises(MethodError, match=f"option '{option}' of {method}: expected"):
        fit(DATA, method, **{option: "bogus"})


@pytest.mark.parametrize("method", METHODS)
def test_options_not_listed_are_refused(method: str) -> None:
    """An option the catalog does not list is refused, naming it and the allowed ones."""
    allowed = ", ".join(sorted(METHOD_OPTIONS[method])) or "none"
    with pytest.raises(MethodError, match=rf"^unknown option 'colour' for {method} \(allowed: "):
        fit(DATA, method, colour=1)
    with pytest.raises(MethodError) as info:
        fit(DATA, method, colour=1)
    assert str(info.value).endswith(f"(allowed: {allowed})")


@pytest.mark.parametrize("method", [m for m in METHODS if CATALOG[m].min_obs > 1])
def test_minimum_observations_are_enforced(method: str) -> None:
    """One value fewer than the catalog's minimum is refused, naming the method and the count."""
    n = CATALOG[method].min_obs
    with pytest.raises(MethodError, match=f"^{method} needs at least {n} values, found {n - 1}$"):
        fit(DATA[: n - 1], method)


@pytest.mark.parametrize("method", METHODS)
def test_censoring_support_is_what_the_catalog_says(
    method: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Methods without censoring support refuse censored values; the others reach their fitter."""
    reached = []

    def stand_in(sample: object, name: str, **options: object) -> EmpiricalSampler:
        reached.append(name)
        return EmpiricalSampler([1.0])

    monkeypatch.setattr(api, "fitter", lambda spec: stand_in)
    flags = np.zeros(DATA.size, dtype=bool)
    flags[-1] = True
    if CATALOG[method].censoring:
        fit(DATA, method, censored=flags)
        assert reached == [method]
    else:
        with pytest.raises(MethodError, match=f"^censored: method '{method}' does not handle"):
            fit(DATA, method, censored=flags)


def test_weights_support_is_what_the_catalog_says() -> None:
    """Only the methods listed without weights refuse them."""
    for method in METHODS:
        if not CATALOG[method].weights:
            with pytest.raises(MethodError, match=f"^weights: method '{method}' does not take"):
                fit(DATA, method, weights=np.ones(DATA.size))


def test_sampler_kinds_name_their_classes() -> None:
    """Each kind names the class that rebuilds it; every kind defined in distributions is listed."""
    package = importlib.import_module("samplewright.distributions")
    for info in pkgutil.walk_packages(package.__path__, "samplewright.distributions."):
        importlib.import_module(info.name)  # defines every kind there is
    loaded = load_sampler_kinds()
    assert set(loaded) == set(KINDS) == set(SAMPLER_KINDS)
    for kind, cls in loaded.items():
        assert cls.kind == kind and callable(cls.from_payload)
        assert issubclass(cls, Sampler) or kind == "joint"  # several inputs drawn together
    assert {spec.kind for spec in CATALOG.values()} <= set(KINDS)
    assert sampler_class("no_such_kind") is None


def test_help_texts_are_one_line_and_choices_are_literal_tuples() -> None:
    """Every method and option has a one-line summary; word choices are the Literal tuples."""
    for spec in CATALOG.values():
        assert spec.summary and "\n" not in spec.summary
        for option in spec.options:
            assert option.summary and "\n" not in option.summary
            assert option.types and set(option.types) <= {"number", "integer", "string", "array"}
            assert not option.choices or "string" in option.types
    assert catalog.CRITERIA == ("aic", "bic")
    assert CATALOG["kaplan_meier"].options[0].choices == ("at_last", "exponential")
    assert CATALOG["smoothed"].options[1].choices == catalog.POSITIVE_MODES


def test_catalog_and_planning_imports_stay_light() -> None:
    """Importing the catalog loads no numpy; planning loads no scipy, pandas or pyarrow."""
    code = (
        "import sys, samplewright.fitting.catalog; print('numpy' in sys.modules); "
        "import samplewright, samplewright.workflow, samplewright.pipeline.plan; "
        "print(sorted(m for m in ('scipy', 'pandas', 'pyarrow') if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split("\n")[:2] == ["False", "[]"]
