"""Unit tests for samplewright.core.randomness: seeds, named streams and stable integers."""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest

from samplewright.core.randomness import make_rng, stable_int, stream_rng


def test_make_rng_returns_the_same_generator_object() -> None:
    """A Generator passed in is used as is, not copied or reseeded."""
    gen = np.random.default_rng(5)
    assert make_rng(gen) is gen


@pytest.mark.parametrize(
    "seed", [7, np.int64(7), np.random.SeedSequence(7)], ids=["int", "np.int64", "SeedSequence"]
)
def test_make_rng_accepts_seed_like_values(seed: object) -> None:
    """Ints, numpy ints and SeedSequences give the stream numpy.random.default_rng(7) gives."""
    expected = np.random.default_rng(7).random(5)  # source: numpy.random.default_rng
    np.testing.assert_array_equal(make_rng(seed).random(5), expected)


def test_make_rng_none_gives_fresh_entropy() -> None:
    """None gives a new, unseeded Generator (two of them practically never agree)."""
    a, b = make_rng(None), make_rng(None)
    assert isinstance(a, np.random.Generator)
    assert not np.array_equal(a.random(4), b.random(4))  # common practice, no source


@pytest.mark.parametrize("bad", [True, False, 1.5, "7", [1, 2], np.random.RandomState(1)])
def test_make_rng_rejects_bad_types(bad: object) -> None:
    """Booleans, floats, text, lists and the legacy RandomState are refused with a TypeError."""
    with pytest.raises(TypeError, match="rng: expected None, an int, a SeedSequence"):
        make_rng(bad)  # type: ignore[arg-type]


def test_make_rng_message_names_the_type_found() -> None:
    """The TypeError says what type was passed."""
    with pytest.raises(TypeError, match="found float"):
        make_rng(0.5)  # type: ignore[arg-type]


def test_stream_rng_does_not_depend_on_call_order() -> None:
    """Streams made in any order, interleaved with draws, give the same numbers."""
    first_a = stream_rng(2026, "repair_hours").random(6)
    first_b = stream_rng(2026, "claims", 3).random(6)
    b = stream_rng(2026, "claims", 3)
    b_part = b.random(3)
    a = stream_rng(2026, "repair_hours")
    np.testing.assert_array_equal(a.random(6), first_a)
    np.testing.assert_array_equal(np.concatenate([b_part, b.random(3)]), first_b)


def test_stream_rng_streams_differ_by_name_and_root_seed() -> None:
    """A different name, name part or root seed gives a different stream."""
    ref = stream_rng(1, "a", "b").random(4)
    for other in (stream_rng(1, "a", "c"), stream_rng(1, "a"), stream_rng(2, "a", "b")):
        assert not np.array_equal(other.random(4), ref)


def test_stream_rng_is_the_documented_seed_sequence() -> None:
    """stream_rng(root, name...) is default_rng(SeedSequence([stable_int(name...), root]))."""
    expected = np.random.default_rng(np.random.SeedSequence([stable_int("x", 2), 11]))
    # source: README "Reproducibility of draws" (the documented construction)
    np.testing.assert_array_equal(stream_rng(11, "x", 2).random(8), expected.random(8))


@pytest.mark.parametrize("bad", [True, 1.0, "3", None])
def test_stream_rng_rejects_non_int_root_seed(bad: object) -> None:
    """The root seed must be an int; bool, float, text and None raise TypeError."""
    with pytest.raises(TypeError, match="root_seed: expected an int"):
        stream_rng(bad, "x")  # type: ignore[arg-type]


def test_stream_rng_rejects_negative_root_seed() -> None:
    """A negative root seed raises a ValueError that shows it."""
    with pytest.raises(ValueError, match="found -1"):
        stream_rng(-1, "x")


def test_stable_int_is_stable_across_processes() -> None:
    """stable_int gives the same number in a new interpreter (unlike hash(), which is salted)."""
    code = (
        "from samplewright.core.randomness import stable_int; print(stable_int('repair_hours', 4))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert int(out.stdout) == stable_int("repair_hours", 4)
    assert 0 <= stable_int("repair_hours", 4) < 2**64  # 64-bit, as documented


def test_stable_int_separates_parts() -> None:
    """Splitting the same text differently into parts gives different integers."""
    assert stable_int("ab", "c") != stable_int("a", "bc")
    assert stable_int("a") != stable_int("b")


def test_no_global_numpy_state_is_touched() -> None:
    """Drawing through make_rng and stream_rng leaves numpy's legacy global state untouched."""
    # Reading (never seeding) the legacy global state is the point of this test.
    _, key_before, pos_before, *_ = np.random.get_state()  # noqa: NPY002
    make_rng(3).random(10)
    stream_rng(3, "s").random(10)
    _, key_after, pos_after, *_ = np.random.get_state()  # noqa: NPY002
    np.testing.assert_array_equal(key_after, key_before)
    assert pos_after == pos_before
