"""Checks every reader makes before reading: the path is a readable file, the columns exist once."""

from __future__ import annotations

import difflib
from pathlib import Path

from samplewright.core.errors import InputDataError

__all__ = ["check_file", "check_names"]


def check_file(path: Path) -> int:
    """Size in bytes of ``path``, or a clear error if it is missing, a folder or unreadable."""
    try:
        if path.is_dir():
            raise InputDataError(f"{path}: is a folder, expected a data file")
        if not path.exists():
            raise InputDataError(f"{path}: data file not found")
        with path.open("rb"):
            pass
        return path.stat().st_size
    except OSError as exc:
        raise InputDataError(f"{path}: cannot be opened ({exc.strerror or exc})") from None


def check_names(
    path: Path, wanted: list[str], present: list[str], *, separator: str | None = None
) -> None:
    """Each wanted column must be present exactly once; suggest the nearest name otherwise."""
    for col in wanted:
        hits = [i for i, name in enumerate(present) if name == col]
        if len(hits) > 1:
            places = ", ".join(str(i + 1) for i in hits)
            raise InputDataError(
                f"{path}: column name {col!r} appears {len(hits)} times (columns {places}); "
                "rename the copies so that each name is unique"
            )
        if not hits:
            shown = ", ".join(repr(c) for c in present[:8]) + (" ..." if len(present) > 8 else "")
            raise InputDataError(
                f"{path}: no column {col!r} (columns: {shown}){_hint(col, present, separator)}"
            )


def _hint(col: str, present: list[str], separator: str | None) -> str:
    """A hint about the separator, or '; did you mean ...?', or ''."""
    if separator is not None and len(present) == 1:
        for sep in (";", "\t", ",", "|"):
            if sep != separator and col in present[0].split(sep):
                return f"; the header looks separated by {sep!r}: pass separator={sep!r}"
    folded = {name.strip().casefold(): name for name in present}
    if col.strip().casefold() in folded:
        return f"; did you mean {folded[col.strip().casefold()]!r}?"
    close = difflib.get_close_matches(col, present, n=1, cutoff=0.6)
    return f"; did you mean {close[0]!r}?" if close else ""
