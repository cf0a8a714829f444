"""Shared pieces of the JSON-based readers and writers.

JSON is RFC 8259.  Python's :mod:`json` module also accepts the non-standard
literals ``NaN``, ``Infinity`` and ``-Infinity`` (and turns ``1e999`` into
infinity); RFC 8259 section 6 has no such numbers, so the readers look for
non-finite values and reject them, naming the place they were found.
"""

from __future__ import annotations

import json
import math
import os
from collections.abc import Callable, Iterable, Mapping
from pathlib import Path
from typing import Any

from core.errors import InputError

Fail = Callable[[str], InputError]
"""Makes the error for a message, with the source (and feature) filled in."""


def source_label(path: str | os.PathLike[str]) -> str:
    """The file name used in error messages."""
    return Path(path).name or str(path)


def read_text(path: str | os.PathLike[str]) -> str:
    """Read a UTF-8 text file, with errors for people.

    A UTF-8 byte order mark is dropped (RFC 8259 section 8.1 lets parsers
    ignore it).  Missing files, folders, unreadable files and bytes that are
    not UTF-8 raise :class:`~core.errors.InputError`.
    """
    source = source_label(path)
    try:
        data = Path(path).read_bytes()
    except FileNotFoundError:
        raise InputError(f"the file {str(path)!r} does not exist", source=source) from None
    except IsADirectoryError:
        raise InputError(f"{str(path)!r} is a folder, not a file", source=source) from None
    except PermissionError:
        raise InputError(
            f"the file {str(path)!r} cannot be read (permission denied)", source=source
        ) from None
    except OSError as exc:
        raise InputError(
            f"the file {str(path)!r} cannot be read: {exc.strerror or exc}", source=source
        ) from None
    return decode_text(data, source=source)


def decode_text(data: bytes, *, source: str | None = None) -> str:
    """Decode UTF-8 bytes (an initial byte order mark is dropped)."""
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise InputError(
            f"the file is not UTF-8 text (byte 0x{data[exc.start]:02x} cannot be decoded); "
            "save it with UTF-8 encoding",
            source=source,
            line=line,
        ) from None


def load_json(text: str, *, source: str | None = None) -> Any:
    """Parse JSON text; syntax errors name the line and column."""
    if not text.strip():
        raise InputError("the file is empty", source=source)
    try:
        return json.loads(text.removeprefix("\ufeff"))
    except json.JSONDecodeError as exc:
        raise InputError(
            f"this is not valid JSON: {exc.msg} (column {exc.colno})",
            source=source,
            line=exc.lineno,
        ) from None
    except RecursionError:
        raise InputError("the JSON is nested too deeply to read", source=source) from None


def find_nonfinite(value: Any, path: str = "") -> str | None:
    """The path (``"properties.width"``, ``"[3][1]"``) of the first number in
    ``value`` that is NaN or infinite, or ``None`` when there is none."""
    if isinstance(value, float):
        return None if math.isfinite(value) else (path or "value")
    if isinstance(value, Mapping):
        for key, item in value.items():
            found = find_nonfinite(item, f"{path}.{key}" if path else str(key))
            if found is not None:
                return found
    elif isinstance(value, list | tuple):
        for i, item in enumerate(value):
            found = find_nonfinite(item, f"{path}[{i}]")
            if found is not None:
                return found
    return None


NONFINITE_HINT = "JSON has no NaN or Infinity (RFC 8259 section 6)"


def is_number(value: Any) -> bool:
    """A JSON number (``bool`` is not one, though Python treats it as ``int``)."""
    return isinstance(value, int | float) and not isinstance(value, bool)


def dump_records(head: Mapping[str, Any], lists: Mapping[str, Iterable[Any]]) -> str:
    """JSON text with one record of each list per line.

    ``json.dumps(indent=...)`` would put every coordinate on a line of its
    own, and without indentation a whole district is one line; a record per
    line keeps files compact, readable and friendly to line-based diffs.
    Raises ``ValueError`` for NaN/infinity (``allow_nan=False``) and
    ``TypeError`` for values JSON cannot hold.
    """

    def enc(value: Any) -> str:
        return json.dumps(value, ensure_ascii=False, allow_nan=False)

    parts = [f"  {enc(key)}: {enc(value)}" for key, value in head.items()]
    for key, records in lists.items():
        body = ",\n".join(f"    {enc(r)}" for r in records)
        parts.append(f"  {enc(key)}: [\n{body}\n  ]" if body else f"  {enc(key)}: []")
    return "{\n" + ",\n".join(parts) + "\n}\n"
