"""CSV and TSV files: structure checked, numbers parsed once by Arrow's CSV reader.

Before any number is read the file is checked as a whole: it is text (no NUL byte) in the
declared encoding (UTF-8 unless a byte-order mark or the ``encoding`` option says otherwise), its
header names each wanted column once, and every quoted field is closed where a field may end.
Arrow's reader then parses only the wanted columns, straight to float64 (its parser rounds
correctly), refusing rows whose field count differs from the header's. Cells that Arrow cannot
take as plain numbers -- markers with spaces around them, ``NAN``, text, huge integers, overflow
-- send that column through :func:`samplewright.intake.cells.parse_text`, which applies the
documented rule and names the first bad row. Rows count from 1, the header and blank lines not
included; errors found in the raw bytes name the line instead.
"""

from __future__ import annotations

import csv
import io
import mmap
import re
from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.csv as pacsv

from samplewright.core.errors import InputDataError
from samplewright.intake.cells import EXACT_INT, parse_text, to_float_array
from samplewright.intake.files import check_file, check_names
from samplewright.intake.options import ReadOptions

__all__ = ["read_csv_numbers", "read_csv_text"]

_BOMS = (
    (b"\xff\xfe\x00\x00", "utf-32-le"),
    (b"\x00\x00\xfe\xff", "utf-32-be"),
    (b"\xef\xbb\xbf", "utf-8"),
    (b"\xff\xfe", "utf-16-le"),
    (b"\xfe\xff", "utf-16-be"),
)
HEADER_LIMIT = 1 << 20  # a header line longer than this is not a header
_SCAN_CHUNK = 1 << 22  # bytes per step of the quote scan (a slice that stays in cache)
_ENCODING_HINT = "pass the file's encoding, e.g. encoding='latin-1' (--encoding latin-1)"


@dataclass(frozen=True)
class _Text:
    """A CSV file's bytes as UTF-8: memory-mapped when they already are, else transcoded."""

    path: Path
    data: Any  # mmap.mmap or bytes
    start: int  # first byte after a UTF-8 byte-order mark

    def stream(self) -> pa.NativeFile:
        if isinstance(self.data, bytes):
            return pa.BufferReader(pa.py_buffer(self.data))
        return pa.memory_map(str(self.path))


def _open_text(path: Path, options: ReadOptions) -> _Text:
    """The file as UTF-8 bytes: mapped if it is UTF-8 (BOM skipped), else decoded, re-encoded."""
    size = check_file(path)
    if size == 0:
        raise InputDataError(f"{path}: file is empty (no header line)")
    with path.open("rb") as fh:
        head = fh.read(4)
        bom = next(((mark, enc) for mark, enc in _BOMS if head.startswith(mark)), None)
        declared = options.encoding
        if (declared is None and (bom is None or bom[1] == "utf-8")) or declared == "utf-8":
            data = mmap.mmap(fh.fileno(), 0, access=mmap.ACCESS_READ)
            start = 3 if head.startswith(b"\xef\xbb\xbf") else 0
            return _Text(path, data, start)
    encoding = declared or (bom[1] if bom else "utf-8")
    raw = path.read_bytes()
    try:
        text = raw.decode(encoding)
    except UnicodeDecodeError as exc:
        line = raw.count(b"\n", 0, exc.start) + 1
        raise InputDataError(
            f"{path}: not valid {encoding} text (byte 0x{raw[exc.start]:02x} on line {line}); "
            f"{_ENCODING_HINT}"
        ) from None
    return _Text(path, text.removeprefix("\ufeff").encode("utf-8"), 0)


def _line_of(data: Any, pos: int) -> int:
    """Line number (from 1) of byte ``pos`` (error paths only: copies the bytes before it)."""
    return bytes(data[:pos]).count(b"\n") + 1


def _check_text(text: _Text) -> None:
    """Refuse a file with NUL bytes (binary, or UTF-16 without a byte-order mark)."""
    pos = text.data.find(b"\x00")
    if pos < 0:
        return
    sample = bytes(text.data[:4096])
    for order, offset in (("le", 1), ("be", 0)):
        if sample[offset::2].count(0) > len(sample) // 4 and sample[1 - offset :: 2].count(0) == 0:
            raise InputDataError(
                f"{text.path}: looks like UTF-16 text without a byte-order mark; pass "
                f"encoding='utf-16-{order}' (--encoding utf-16-{order})"
            )
    raise InputDataError(
        f"{text.path}: holds a NUL byte (line {_line_of(text.data, pos)}, byte {pos}); "
        "this is not a text CSV file (if it is UTF-16 or UTF-32 text, pass its encoding, "
        "e.g. encoding='utf-16')"
    )


def _header(text: _Text, sep: str, path: Path) -> tuple[list[str], int]:
    """The header's field names and the byte offset where the data rows start."""
    window = bytes(text.data[text.start : text.start + HEADER_LIMIT])
    truncated = text.start + len(window) < len(text.data)
    i = 0
    while i < len(window) and window[i] in (10, 13):
        i += 1
    if i >= len(window):
        raise InputDataError(f"{path}: file is empty (no header line)")
    sepb = sep.encode()[0]
    plain = re.compile(b"[^" + re.escape(sep.encode()) + b"\r\n]*")
    fields: list[bytes] = []
    while True:
        if i < len(window) and window[i] == 34:  # a quoted name
            j, name = i + 1, bytearray()
            while True:
                k = window.find(b'"', j)
                if k < 0:
                    raise InputDataError(
                        f"{path}: the header line is too long"
                        if truncated
                        else f"{path}: unbalanced quote in the header line (a quoted name is never "
                        "closed)"
                    )
                name += window[j:k]
                if window[k + 1 : k + 2] == b'"':
                    name += b'"'
                    j = k + 2
                    continue
                i = k + 1
                break
            fields.append(bytes(name))
            if i < len(window) and window[i] not in (sepb, 10, 13):
                raise InputDataError(
                    f"{path}: text after a closing quote in the header line "
                    f"({window[max(0, i - 20) : i + 10]!r}); a quoted name must end at a separator"
                )
        else:
            m = plain.match(window, i)
            assert m is not None  # the pattern matches the empty string
            fields.append(m.group())
            i = m.end()
        if i >= len(window):
            if truncated:
                raise InputDataError(f"{path}: the header line is longer than 1 MiB")
            end = len(window)
            break
        if window[i] == sepb:
            i += 1
            continue
        i += 2 if window[i : i + 2] == b"\r\n" else 1
        end = i
        break
    names = []
    for raw in fields:
        try:
            names.append(raw.decode("utf-8"))
        except UnicodeDecodeError as exc:
            raise InputDataError(
                f"{path}: the header is not UTF-8 text (byte 0x{raw[exc.start]:02x} in "
                f"{raw[:40]!r}); {_ENCODING_HINT}"
            ) from None
    return names, text.start + end


def _data_has_quotes(text: _Text, sep: str, offset: int) -> bool:
    """Whether the data rows hold quotes; if so, check that every quoted field is closed."""
    data = text.data
    if data.find(b'"', offset) < 0:
        return False
    if not _quotes_alternate(np.frombuffer(data, dtype=np.uint8), sep, offset):
        _strict_scan(text, sep, offset)
    return True


def _quotes_alternate(view: np.ndarray, sep: str, offset: int) -> bool:
    """Fast test of the quoting from ``offset`` on, in cache-sized slices.

    With every quote inside a quoted field, quotes alternate open / close (a doubled quote
    closes and reopens): an opening quote follows a separator, a line end or a quote, and a
    closing one precedes a separator, a line end, a quote or the end of the file. False means
    "look closer" (a quote inside an unquoted field also fails this test, and is legal).
    """
    allowed = np.zeros(256, dtype=bool)
    allowed[[ord(sep), 10, 13, 34]] = True
    n, parity = view.size, 0
    scratch = np.empty(_SCAN_CHUNK, dtype=bool)
    for lo in range(offset, n, _SCAN_CHUNK):
        hi = min(lo + _SCAN_CHUNK, n)
        q = np.flatnonzero(np.equal(view[lo:hi], 34, out=scratch[: hi - lo]))
        if q.size == 0:
            continue
        q += lo
        if not allowed[view[q[parity::2] - 1]].all():
            return False
        after = q[1 - parity :: 2] + 1
        if after.size and after[-1] >= n:
            after = after[:-1]
        if not allowed[view[after]].all():
            return False
        parity = (parity + q.size) % 2
    return parity == 0


def _strict_scan(text: _Text, sep: str, offset: int) -> None:
    """Locate a quoting error with Python's strict CSV reader (unusual files only)."""
    before = _line_of(text.data, offset) - 1
    body = bytes(text.data[offset:]).decode("utf-8", errors="replace")
    reader = csv.reader(io.StringIO(body, newline=""), delimiter=sep, strict=True)
    started = 0
    try:
        for _ in reader:
            started = reader.line_num
    except csv.Error as exc:
        if "end of data" in str(exc) or "EOF" in str(exc):
            raise InputDataError(
                f"{text.path}: unbalanced quote: the row starting on line {before + started + 1} "
                "opens a quoted field that is never closed"
            ) from None
        raise InputDataError(
            f"{text.path}: line {before + reader.line_num}: {exc}; inside a quoted field a "
            'quote must be doubled (""), and a quoted field must end at a separator'
        ) from None


def _arrow_read(
    text: _Text,
    options: ReadOptions,
    types: dict[str, pa.DataType],
    *,
    multiline: bool,
    nulls: bool,
    handler: Any = None,
) -> pa.Table:
    """Arrow's CSV reader on the wanted columns only."""
    assert options.separator is not None
    parse = pacsv.ParseOptions(
        delimiter=options.separator,
        quote_char='"',
        double_quote=True,
        escape_char=False,
        newlines_in_values=multiline,
        ignore_empty_lines=True,
        invalid_row_handler=handler,
    )
    convert = pacsv.ConvertOptions(
        include_columns=list(types),
        column_types=types,
        null_values=list(options.markers) if nulls else [],
        strings_can_be_null=nulls,
        quoted_strings_can_be_null=nulls,
        decimal_point=options.decimal,
    )
    read = pacsv.ReadOptions(use_threads=handler is None)
    return pacsv.read_csv(text.stream(), read, parse, convert)


def _structure_error(
    text: _Text, options: ReadOptions, first: str, multiline: bool, exc: Exception
) -> InputDataError:
    """The one-line error for a row whose field count differs from the header's."""
    found: list[Any] = []

    def handler(row: Any) -> str:
        found.append(row)
        return "error"

    try:
        _arrow_read(
            text, options, {first: pa.binary()}, multiline=multiline, nulls=False, handler=handler
        )
    except (pa.ArrowInvalid, ValueError):
        pass
    if not found:
        detail = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        return InputDataError(f"{text.path}: cannot be read as CSV ({detail})")
    row = found[0]
    where = f"row {row.number - 1}" if row.number is not None else "a row"
    shown = row.text if len(row.text) <= 60 else row.text[:57] + "..."
    return InputDataError(
        f"{text.path}: {where} has {row.actual_columns} field(s) but the header has "
        f"{row.expected_columns} ({shown!r}); each row needs one field per header name: check "
        f"the separator (option separator, now {options.separator!r}) and the quoting"
    )


def _prepare(path: Path, options: ReadOptions, columns: list[str]) -> tuple[_Text, bool]:
    """Open and check the file; return its text and whether a quoted field may span lines
    (quotes in the data rows, or a header name holding a line break)."""
    assert options.separator is not None
    text = _open_text(path, options)
    _check_text(text)
    names, offset = _header(text, options.separator, path)
    check_names(path, columns, names, separator=options.separator)
    quoted = _data_has_quotes(text, options.separator, offset)
    return text, quoted or any("\n" in name or "\r" in name for name in names)


def _read(
    text: _Text, options: ReadOptions, types: dict[str, pa.DataType], multiline: bool, nulls: bool
) -> pa.Table | None:
    """Arrow's read, None when a cell does not convert, one-line error on a bad structure."""
    try:
        return _arrow_read(text, options, types, multiline=multiline, nulls=nulls)
    except pa.ArrowInvalid as exc:
        if "conversion error" in str(exc):
            return None
        raise _structure_error(text, options, next(iter(types)), multiline, exc) from None


def _is_plain(values: np.ndarray, n_null: int, options: ReadOptions) -> bool:
    """Whether Arrow's float column needs no second look at its text: no NaN spelled out, no
    infinity, no magnitude from 2**53 up, no cell equal to a numeric missing marker."""
    if values.size == 0:
        return True
    if n_null:
        nan = np.isnan(values)
        if int(nan.sum()) != n_null:
            return False
        finite = values[~nan]
    else:
        finite = values
    if finite.size and not (-EXACT_INT < finite.min() and finite.max() < EXACT_INT):
        return False
    return not any((values == m).any() for m in options.numeric_markers)


def read_csv_numbers(
    path: Path, columns: list[str], options: ReadOptions, flags: Iterable[str] = ()
) -> tuple[dict[str, np.ndarray], int]:
    """float64 values (NaN where missing) of the named columns of a CSV/TSV file, and the
    number of data rows. Columns named in ``flags`` also accept true/false."""
    flagged = set(flags)
    text, multiline = _prepare(path, options, columns)
    types = {c: pa.string() if c in flagged else pa.float64() for c in columns}
    table = _read(text, options, types, multiline, nulls=True)
    out: dict[str, np.ndarray] = {}
    redo = list(columns)
    n_rows = -1
    if table is not None:
        n_rows, redo = table.num_rows, []
        for c in columns:
            col = table.column(c)
            if c in flagged:
                out[c] = parse_text(col, where=path.name, column=c, options=options, flags=True)
                continue
            values = to_float_array(col)
            if _is_plain(values, col.null_count, options):
                out[c] = values
            else:
                redo.append(c)
        del table
    if redo:
        cells = _read(text, options, {c: pa.binary() for c in redo}, multiline, nulls=False)
        assert cells is not None  # binary cells always convert
        n_rows = cells.num_rows
        for c in redo:
            out[c] = parse_text(
                cells.column(c), where=path.name, column=c, options=options, flags=c in flagged
            )
    return {c: out[c] for c in columns}, n_rows


def read_csv_text(path: Path, columns: list[str], options: ReadOptions) -> dict[str, list[str]]:
    """The named columns' cells as text, exactly as written (quotes removed)."""
    text, multiline = _prepare(path, options, columns)
    cells = _read(text, options, {c: pa.binary() for c in columns}, multiline, nulls=False)
    assert cells is not None
    out: dict[str, list[str]] = {}
    for c in columns:
        col = cells.column(c)
        try:
            out[c] = col.cast(pa.string()).to_pylist()
        except (pa.ArrowInvalid, pa.ArrowTypeError):
            parse_text(col, where=path.name, column=c, options=options)  # names the bad row
            raise
    return out
