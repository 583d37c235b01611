"""Canonical JSON: the one text form that every hash and content key of samplewright is taken of.

The form is the standard library's JSON with keys sorted, separators ``,`` and ``:`` (no
spaces), non-ASCII characters escaped (``\\uXXXX``) and floats written as Python's ``repr`` (the
shortest text that reads back to the same double). Artifact content hashes, fingerprint-cache
keys and the workflow's content keys all hash this text, so one value always hashes one way.

Rules, each explicit:

* Non-finite floats (NaN, inf, -inf) have no JSON form: :func:`canonical_json` refuses them with
  a :class:`ValueError` naming where they sit (``sampler.params.shape``). Callers that want an
  infinite value in metadata write the strings ``"inf"`` / ``"-inf"``, as sampler supports do.
* numpy scalars are written as the Python number they equal (``np.float32(0.5)`` as ``0.5``);
  booleans stay booleans; tuples are written as lists (as ``json`` does).
* Documents of more than :data:`MAX_DEPTH` nested containers are refused in both directions,
  with a :class:`ValueError` rather than a RecursionError.

>>> canonical_json({"b": 1.0, "a": [1, 0.1, None, "é"]})
'{"a":[1,0.1,null,"\\\\u00e9"],"b":1.0}'
"""

from __future__ import annotations

import json
import math
import numbers
from typing import Any

__all__ = ["MAX_DEPTH", "canonical_bytes", "canonical_json", "parse_json"]

MAX_DEPTH = 64


def _plain(obj: Any) -> Any:
    """``json``'s fallback for numpy scalars and other number-like objects."""
    if getattr(getattr(obj, "dtype", None), "kind", None) == "b":
        return bool(obj)
    if isinstance(obj, numbers.Integral):
        return int(obj)
    if isinstance(obj, numbers.Real):
        return float(obj)
    raise TypeError(f"canonical JSON: cannot write a {type(obj).__name__}")


def _where(path: list[str | int]) -> str:
    out = ""
    for part in path:
        out += f"[{part}]" if isinstance(part, int) else (f".{part}" if out else str(part))
    return out or "the top level"


def _walk(obj: Any) -> None:
    """Refuse non-finite floats and nesting deeper than MAX_DEPTH, naming the place."""
    stack: list[tuple[Any, list[str | int]]] = [(obj, [])]
    while stack:
        item, path = stack.pop()
        if isinstance(item, dict | list | tuple) and len(path) >= MAX_DEPTH:
            raise ValueError(
                f"canonical JSON: nested deeper than {MAX_DEPTH} levels at {_where(path[:3])}..."
            )
        if isinstance(item, dict):
            stack.extend((v, [*path, str(k)]) for k, v in item.items())
        elif isinstance(item, list | tuple):
            stack.extend((v, [*path, i]) for i, v in enumerate(item))
        elif isinstance(item, numbers.Real) and not isinstance(item, numbers.Integral):
            if not math.isfinite(float(item)):
                raise ValueError(
                    f"canonical JSON: non-finite number {float(item)!r} at {_where(path)} "
                    "(JSON has no form for it; write 'inf'/'-inf' as text or leave it out)"
                )


def canonical_json(obj: Any) -> str:
    """The canonical JSON text of ``obj`` (see the module docstring).

    >>> canonical_json({"x": float("nan")})
    Traceback (most recent call last):
    ...
    ValueError: canonical JSON: non-finite number nan at x (JSON has no form for it; write \
'inf'/'-inf' as text or leave it out)
    """
    _walk(obj)
    return json.dumps(
        obj,
        sort_keys=True,
        separators=(",", ":"),
        ensure_ascii=True,
        allow_nan=False,
        default=_plain,
    )


def canonical_bytes(obj: Any) -> bytes:
    """:func:`canonical_json` as bytes (ASCII, so also UTF-8), ready for a hash."""
    return canonical_json(obj).encode("ascii")


def _depth(obj: Any) -> int:
    """The number of nested containers (``[]`` is 1, ``[[]]`` is 2), counted without recursion."""
    deepest = 0
    stack: list[tuple[Any, int]] = [(obj, 0)]
    while stack and deepest <= MAX_DEPTH:
        item, above = stack.pop()
        if isinstance(item, dict | list):
            deepest = max(deepest, above + 1)
            children = item.values() if isinstance(item, dict) else item
            stack.extend((v, above + 1) for v in children)
    return deepest


def parse_json(raw: str | bytes) -> Any:
    """Read a JSON document, refusing invalid text and documents nested deeper than MAX_DEPTH.

    Raises :class:`ValueError` with a one-line reason (never a RecursionError).

    >>> parse_json('{"a": [1, 2]}')
    {'a': [1, 2]}
    >>> parse_json("[" * 100 + "]" * 100)
    Traceback (most recent call last):
    ...
    ValueError: JSON nested deeper than 64 levels
    """
    try:
        doc = json.loads(raw)
    except RecursionError:
        raise ValueError(f"JSON nested deeper than {MAX_DEPTH} levels") from None
    except UnicodeDecodeError as exc:
        raise ValueError(f"JSON is not UTF-8 text ({exc.reason})") from None
    except json.JSONDecodeError as exc:
        where = f"line {exc.lineno} column {exc.colno}"
        raise ValueError(f"not valid JSON ({exc.msg} at {where})") from None
    if _depth(doc) > MAX_DEPTH:
        raise ValueError(f"JSON nested deeper than {MAX_DEPTH} levels")
    return doc
