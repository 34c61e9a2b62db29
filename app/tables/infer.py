"""Decide each column's kind (numeric, categorical, boolean, date) and convert it.

Works on Arrow columns from any reader; knows nothing of file formats or designs.

Rules (see docs/reading.md):
- A column whose present cells are all numbers is numeric, however few distinct values it has
  (0/1 and small integer codes stay numeric; a note names integer columns with 3-10 values).
- All cells true/false or yes/no (any case) -> boolean. 0/1 is not boolean unless declared.
- All cells ISO dates or date-times (YYYY-MM-DD[ HH:MM[:SS[.fff]]][Z|+hh:mm]) -> date.
- Other text -> categorical, categories sorted.
- Text in a column that is otherwise (at least 80%) numbers, or dates, is an error naming the
  first such cell, unless the column's kind is declared.
Missing-value markers (text.MISSING_MARKERS, spaces trimmed) are missing in text columns.
"""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.types as pat

from rankscope.tables.errors import InputError
from rankscope.tables.kinds import cells_error, convert, describe, plural
from rankscope.tables.raw import Raw, at, short
from rankscope.tables.text import Offending, TextColumn

MOSTLY = 0.8
FIX_TEXT = (
    "Correct those cells, write NA (or leave them empty) where a value is missing, "
    "or declare the column categorical if it is not a number"
)


def infer_column(raw: Raw, j: int, name: str, declared: str | None):
    """(values, kind, notes) for column j, or None (with a note) for a column that can't be used."""
    arr = raw.columns[j]
    if isinstance(arr, pa.Array):
        arr = pa.chunked_array([arr])
    t = arr.type
    if pat.is_dictionary(t) and (pat.is_string(t.value_type) or pat.is_large_string(t.value_type)):
        return _text(raw, j, name, arr, declared)  # TextColumn takes the codes as they are
    if pat.is_dictionary(t):
        arr = pa.chunked_array([c.dictionary_decode() for c in arr.chunks], t.value_type)
        t = arr.type
    if _is_view(t):
        arr, t = arr.cast(pa.large_string()), pa.large_string()
    if pat.is_string(t) or pat.is_large_string(t):
        return _text(raw, j, name, arr, declared)
    if pat.is_null(t):
        values, kind, notes = np.full(len(arr), np.nan), "numeric", []
    elif pat.is_integer(t) or pat.is_floating(t) or pat.is_decimal(t):
        values, kind, notes = _numbers(raw, j, name, arr), "numeric", []
    elif pat.is_boolean(t):
        import pandas as pd

        mask = arr.is_null().to_numpy(zero_copy_only=False)
        vals = pc.fill_null(arr, False).to_numpy(zero_copy_only=False)
        values, kind, notes = pd.arrays.BooleanArray(vals.astype(bool), mask), "boolean", []
    elif pat.is_date(t) or pat.is_timestamp(t):
        values, kind, notes = _dates(raw, j, name, arr), "date", []
        if pat.is_timestamp(t) and t.tz is not None:
            notes.append(f"Column '{name}': times with a zone were converted to UTC.")
    else:
        try:
            as_text = arr.cast(pa.string())
        except (pa.ArrowNotImplementedError, pa.ArrowInvalid):
            raw.notes.append(
                f"Column '{name}' holds values of type {t}, which cannot be used in a design; "
                "it was left out."
            )
            return None
        values, kind, notes = _text(raw, j, name, as_text, declared or "categorical")
        notes.append(f"Column '{name}' holds values of type {t}; they were read as categories.")
        return values, kind, notes
    if declared and declared != kind:
        values, more = convert(values, kind, declared, name=name, where=raw.where, index=raw.index)
        return values, declared, notes + more
    return values, kind, notes


def _is_view(t: pa.DataType) -> bool:
    is_view = getattr(pat, "is_string_view", None)  # pyarrow >= 16
    return bool(is_view and is_view(t))


def _numbers(raw: Raw, j: int, name: str, arr: pa.ChunkedArray) -> np.ndarray:
    values = float_values(pc.cast(arr, pa.float64(), safe=False))
    bad = np.isinf(values)
    if bad.any():
        pos = int(np.argmax(bad))
        text = raw.cell(pos, j) if raw.cell else None
        raise _infinite(raw, name, pos, text if text is not None else str(values[pos]))
    return values


def float_values(arr: pa.ChunkedArray) -> np.ndarray:
    """A float64 Arrow column as a float64 array, NaN where a value is missing: what its
    to_numpy() gives, read from the column's buffers (values, then the validity bitmap, least
    significant bit first: the Arrow columnar format), because pyarrow's own conversions
    import pandas (a quarter of a second of a small `check`). One chunk without missing
    values is handed over as a read-only view of Arrow's buffer, as to_numpy() does (a copy
    of every column cost 0.15 s of `check` at 20,000 × 1,000); otherwise a new array."""
    parts, missing = [], []
    for chunk in arr.chunks:
        n, off = len(chunk), chunk.offset
        if not n:
            continue  # an empty chunk may have no values buffer at all
        validity, data = chunk.buffers()
        parts.append(np.frombuffer(data, np.float64, count=off + n)[off:])
        if chunk.null_count:
            bits = np.unpackbits(np.frombuffer(validity, np.uint8), count=off + n,
                                 bitorder="little")[off:]
            missing.append(bits == 0)
        else:
            missing.append(np.zeros(n, dtype=bool))
    if not parts:
        return np.zeros(0)
    if len(parts) == 1 and not arr.null_count:
        view = parts[0]
        view.flags.writeable = False
        return view
    values = np.concatenate(parts)  # a copy: NaN is written into it
    if arr.null_count:
        values[np.concatenate(missing)] = np.nan
    return values


def _infinite(raw: Raw, name: str, pos: int, text: str) -> InputError:
    return InputError(
        f"Column '{name}' has a value that is infinite or too large for a number: {short(text)}",
        at(raw.where, raw.index, pos, name),
        "Replace it with a finite number (at most about 1.8e308), or leave the cell empty if "
        "the value is missing",
    )


def _dates(raw: Raw, j: int, name: str, arr: pa.ChunkedArray) -> np.ndarray:
    t = arr.type
    if pat.is_timestamp(t) and t.tz is not None:
        arr = arr.cast(pa.timestamp(t.unit))
    try:
        return arr.cast(pa.timestamp("ns")).to_numpy()
    except (pa.ArrowInvalid, OverflowError):
        import pandas as pd

        us = arr.cast(pa.timestamp("us")).cast(pa.int64()).to_numpy(zero_copy_only=False)
        lo, hi = pd.Timestamp.min.value // 1000, pd.Timestamp.max.value // 1000
        pos = int(np.argmax((us < lo) | (us > hi)))
        text = raw.cell(pos, j) if raw.cell else None
        raise InputError(
            f"Column '{name}' has a date outside the years 1678-2261: "
            f"{short(text or arr[pos].as_py())}",
            at(raw.where, raw.index, pos, name),
            "Correct the date, or leave the cell empty if it is missing",
        ) from None


def _text(raw: Raw, j: int, name: str, arr: pa.ChunkedArray, declared: str | None):
    tc = TextColumn.from_arrow(arr, markers=not raw.typed or declared is not None)
    try:
        if declared:
            return _as_declared(raw, name, tc, declared)
        return _guess(raw, name, tc)
    except Offending as off:
        if declared is None:
            raise cells_error(name, off, f"Column '{name}' holds dates, but", raw) from None
        raise cells_error(
            name, off, f"Column '{name}' cannot be read as {plural(declared)}:", raw
        ) from None


def _guess(raw: Raw, name: str, tc: TextColumn):
    present = tc.n_present()
    if not present:
        return np.full(len(tc.codes), np.nan), "numeric", []
    if raw.typed:
        return tc.to_categorical(), "categorical", []
    numbers = tc.is_number(raw.decimal)
    if tc.n_present(numbers) == present:
        values, notes = tc.to_numeric(raw.decimal)
        _check_finite(raw, name, tc, values)
        return values, "numeric", [f"Column '{name}': {n}." for n in notes]
    if tc.n_present(tc.is_bool()) == present:
        return tc.to_boolean(), "boolean", []
    dates = tc.is_date()
    if tc.n_present(dates) == present:
        values, notes = tc.to_date()
        return values, "date", [f"Column '{name}': {n}." for n in notes]
    if tc.n_present(numbers) >= MOSTLY * present:
        raise _mixed(raw, name, tc.offending(~numbers & ~tc.missing), "numbers")
    if tc.n_present(dates) >= MOSTLY * present:
        raise _mixed(raw, name, tc.offending(~dates & ~tc.missing), "dates")
    return tc.to_categorical(), "categorical", []


def _as_declared(raw: Raw, name: str, tc: TextColumn, declared: str):
    if declared == "numeric":
        values, notes = tc.to_numeric(_decimal(tc, raw.decimal))
        _check_finite(raw, name, tc, values)
        return values, "numeric", [f"Column '{name}': {n}." for n in notes]
    if declared == "boolean":
        return tc.to_boolean(loose=True), "boolean", []
    if declared == "date":
        values, notes = tc.to_date()
        return values, "date", [f"Column '{name}': {n}." for n in notes]
    return tc.to_categorical(), "categorical", []


def _decimal(tc: TextColumn, decimal: str) -> str:
    return decimal if decimal == "," else tc.guess_decimal()


def _check_finite(raw: Raw, name: str, tc: TextColumn, values: np.ndarray) -> None:
    bad = np.isinf(values)
    if bad.any():
        pos = int(np.argmax(bad))
        raise _infinite(raw, name, pos, tc.value(pos))


def _mixed(raw: Raw, name: str, off: Offending, what: str) -> InputError:
    return InputError(
        f"Column '{name}' holds {what}, but {describe(off, raw.index, 'other text')}",
        at(raw.where, raw.index, off.pos, name),
        FIX_TEXT if what == "numbers" else FIX_TEXT.replace("a number", "a date"),
    )
