"""Numbers from cells: the one implementation of the missing-value and number rules.

Every text cell -- a CSV/TSV cell or a Parquet text value -- goes through :func:`parse_text`,
which applies the rule written in :mod:`samplewright.intake.options` and returns float64 values
with NaN for missing cells. Integer columns go through :func:`ints_to_float`, which refuses
integers that float64 cannot hold exactly. Both report problems with the column, the file and
the first row (rows count from 1, the header not included).
"""

from __future__ import annotations

import re

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from samplewright.core.errors import InputDataError
from samplewright.intake.options import (
    INF_PATTERN,
    INTEGER_PATTERN,
    ReadOptions,
    number_pattern,
)

__all__ = [
    "count_noun",
    "first_row",
    "ints_to_float",
    "parse_text",
    "policy_error",
    "to_float_array",
]

EXACT_INT = 2.0**53  # every integer of magnitude <= 2**53 is a float64


def count_noun(n: int, noun: str) -> str:
    """'1 missing value' / '3 missing values'."""
    return f"{n} {noun}" if n == 1 else f"{n} {noun}s"


def first_row(mask: np.ndarray) -> int:
    """Row number (from 1) of the first True in ``mask``."""
    return int(np.flatnonzero(mask)[0]) + 1


def policy_error(reason: str, column: str, where: str, mask: np.ndarray) -> InputDataError:
    """The error for missing / infinite values (``reason``) under the default 'error' policy."""
    noun = f"{reason} value"
    return InputDataError(
        f"column {column!r} in {where} has {count_noun(int(mask.sum()), noun)} "
        f"(first at row {first_row(mask)}); use {reason}='drop' (--{reason} drop) to drop them"
    )


def to_float_array(values: pa.ChunkedArray | pa.Array) -> np.ndarray:
    """float64 numbers of an Arrow float column, nulls as NaN, without a copy when possible."""
    if isinstance(values, pa.ChunkedArray):
        if values.num_chunks == 1:
            values = values.chunk(0)
        elif values.null_count == 0 and values.num_chunks > 1:
            out = np.empty(len(values), dtype=np.float64)
            pos = 0
            for chunk in values.chunks:
                out[pos : pos + len(chunk)] = chunk.to_numpy(zero_copy_only=True)
                pos += len(chunk)
            return out
    if values.null_count == 0 and isinstance(values, pa.Array):
        return values.to_numpy(zero_copy_only=True)
    return np.asarray(values.to_numpy(zero_copy_only=False), dtype=np.float64)


def _as_text(cells: pa.ChunkedArray, where: str, column: str) -> pa.ChunkedArray:
    """The cells as UTF-8 strings; a clear error at the first cell that is not UTF-8."""
    if pa.types.is_string(cells.type) or pa.types.is_large_string(cells.type):
        return cells
    try:
        return cells.cast(
            pa.large_string() if pa.types.is_large_binary(cells.type) else pa.string()
        )
    except (pa.ArrowInvalid, pa.ArrowTypeError):
        pass
    row = 0
    for chunk in cells.chunks:
        for raw in chunk.to_pylist():
            row += 1
            if raw is None:
                continue
            try:
                raw.decode("utf-8")
            except UnicodeDecodeError as exc:
                byte = raw[exc.start]
                raise InputDataError(
                    f"column {column!r} in {where}: row {row} is not UTF-8 text (byte "
                    f"0x{byte:02x} in {raw[:40]!r}); pass the file's encoding, e.g. "
                    "encoding='latin-1' (--encoding latin-1)"
                ) from None
    raise InputDataError(f"column {column!r} in {where}: cells are not UTF-8 text")  # unreachable


def _mask(arr: pa.ChunkedArray | pa.Array) -> np.ndarray:
    """A boolean Arrow result as a numpy mask (nulls as False)."""
    return np.asarray(pc.fill_null(arr, False).to_numpy(zero_copy_only=False), dtype=bool)


def parse_text(
    cells: pa.ChunkedArray | pa.Array,
    *,
    where: str,
    column: str,
    options: ReadOptions,
    flags: bool = False,
) -> np.ndarray:
    """float64 values of text cells, NaN where a cell is missing.

    Parameters
    ----------
    cells : string or binary cells (nulls are missing).
    where : the file name shown in messages.
    column : the column name shown in messages.
    options : reading options (missing markers, decimal mark).
    flags : also accept ``true`` / ``false`` in any case, as 1 / 0 (censoring flags).
    """
    if isinstance(cells, pa.Array):
        cells = pa.chunked_array([cells], type=cells.type)
    text = pc.utf8_trim_whitespace(_as_text(cells, where, column))
    missing_arrow = pc.or_kleene(pc.is_null(text), pc.is_in(text, pa.array(options.markers)))
    if flags:
        lower = pc.utf8_lower(text)
        text = pc.if_else(
            pc.equal(lower, "true"), "1", pc.if_else(pc.equal(lower, "false"), "0", text)
        )
    # Arrow's cast takes exactly the numbers of the rule plus spellings of NaN (refused below);
    # the rule's regular expression runs only to name the cells when the cast fails.
    candidate = pc.if_else(missing_arrow, "0", text)
    values = None
    if options.decimal == "." or not pc.any(pc.match_substring(candidate, ".")).as_py():
        if options.decimal == ",":
            candidate = pc.replace_substring(candidate, ",", ".")
        try:
            values = to_float_array(pc.cast(candidate, pa.float64()))
        except pa.ArrowInvalid:
            values = None
    missing = _mask(missing_arrow)
    if values is None:
        number = _mask(pc.match_substring_regex(text, number_pattern(options.decimal)))
        _refuse_text(~(missing | number), text, where, column, options)
        raise InputDataError(f"column {column!r} in {where}: cells could not be read as numbers")
    nan = np.isnan(values)
    if nan.any():  # NaN spelled in a way that is not a missing marker (NAN, -nan...)
        _refuse_text(nan & ~missing, text, where, column, options)
    if not values.flags.writeable:
        values = values.copy()
    values[missing] = np.nan
    _check_range(values, text, where, column)
    return values


def _refuse_text(
    bad: np.ndarray, text: pa.ChunkedArray, where: str, column: str, options: ReadOptions
) -> None:
    """The error for cells that are neither missing nor numbers (none: nothing happens)."""
    if not bad.any():
        return
    r = first_row(bad)
    shown = text[r - 1].as_py()
    hint = ""
    other = "," if options.decimal == "." else "."
    if re.fullmatch(number_pattern(other), shown):  # type: ignore[arg-type]
        hint = f"; is the decimal mark {other!r}? (option decimal, now {options.decimal!r})"
    raise InputDataError(
        f"column {column!r} in {where} has {count_noun(int(bad.sum()), 'non-numeric value')} "
        f"(first at row {r}: {shown!r}){hint}"
    )


def _check_range(values: np.ndarray, text: pa.ChunkedArray, where: str, column: str) -> None:
    """Refuse text that overflowed to inf, and integers that float64 cannot hold exactly."""
    with np.errstate(invalid="ignore"):
        suspect = np.abs(values) >= EXACT_INT
    if not suspect.any():
        return
    idx = np.flatnonzero(suspect)
    texts = text.take(pa.array(idx)).to_pylist()
    inf_re, int_re = re.compile(INF_PATTERN), re.compile(INTEGER_PATTERN)
    overflow = [
        (int(i), t)
        for i, t in zip(idx, texts, strict=True)
        if np.isinf(values[i]) and not inf_re.match(t)
    ]
    if overflow:
        raise InputDataError(
            f"column {column!r} in {where} has {count_noun(len(overflow), 'value')} beyond the "
            f"float64 range (first at row {overflow[0][0] + 1}: {overflow[0][1]!r}); "
            "float64 holds magnitudes up to about 1.8e308"
        )
    inexact = [
        (int(i), t)
        for i, t in zip(idx, texts, strict=True)
        if np.isfinite(values[i]) and int_re.match(t) and int(t) != int(values[i])
    ]
    if inexact:
        _refuse_integers(len(inexact), inexact[0][0] + 1, inexact[0][1].lstrip("+"), where, column)


def _refuse_integers(n: int, row: int, shown: str, where: str, column: str) -> None:
    raise InputDataError(
        f"column {column!r} in {where} has {count_noun(n, 'integer')} that float64 cannot "
        f"hold exactly (first at row {row}: {shown}); float64 holds every integer up to "
        "2**53 = 9007199254740992, so recode the column (e.g. subtract an offset or rescale)"
    )


def ints_to_float(ints: np.ndarray, *, where: str, column: str, offset: int = 0) -> np.ndarray:
    """float64 copy of an integer column, refusing integers that float64 cannot hold exactly
    (``offset``: rows before this part of the column, for the message)."""
    out = ints.astype(np.float64)
    if ints.dtype.kind == "u":
        big = ints > np.uint64(2**53)
        top = 2.0**64
    else:
        big = (ints > 2**53) | (ints < -(2**53))
        top = 2.0**63
    if big.any():
        idx = np.flatnonzero(big)
        sub, f = ints[idx], out[idx]
        inexact = f >= top  # rounded up past the type's largest value
        fits = ~inexact
        inexact[fits] = f[fits].astype(ints.dtype) != sub[fits]
        if inexact.any():
            i = int(idx[np.argmax(inexact)])
            _refuse_integers(int(inexact.sum()), offset + i + 1, str(int(ints[i])), where, column)
    return out
