"""Text cells -> numbers, booleans, dates or categories; shared by inference and overrides.

No files and no wording here: cells that do not fit are raised as Offending for callers to word.

A text column is held as its distinct values plus one code per row (-1 = empty in the file), so
every test runs once per distinct value, not once per row.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

if TYPE_CHECKING:
    import pandas as pd

# Cells read as missing (after trimming spaces): pandas' defaults plus "-", "." and "?".
MISSING_MARKERS = (
    "", "NA", "N/A", "n/a", "NaN", "nan", "-NaN", "-nan", "NULL", "null", "None", "<NA>",
    "#N/A", "#N/A N/A", "#NA", "-1.#IND", "-1.#QNAN", "1.#IND", "1.#QNAN", "-", ".", "?",
)  # fmt: skip
TRUE_WORDS = ("true", "yes")
FALSE_WORDS = ("false", "no")
# Accepted only when a user declares a column boolean.
TRUE_LOOSE = (*TRUE_WORDS, "t", "y", "1", "1.0")
FALSE_LOOSE = (*FALSE_WORDS, "f", "n", "0", "0.0")

NUM_POINT = r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$"
NUM_COMMA = r"^[+-]?(\d+|\d{1,3}(\.\d{3})+)(,\d*)?([eE][+-]?\d+)?$|^[+-]?,\d+$"
INFINITE = r"^[+-]?(inf|infinity)$"
ISO_DATE = (
    r"^\d{4}-\d{2}-\d{2}([T ]\d{2}:\d{2}(:\d{2}(\.\d+)?)?)?"
    r"(Z|[+-]\d{2}(:?\d{2})?)?$"
)
HAS_ZONE = r"(Z|[+-]\d{2}(:?\d{2})?)$"
#: The years of the first and last instants datetime64[ns] holds (pandas.Timestamp.min and
#: .max: int64 nanoseconds either side of 1970), found by numpy without loading pandas.
NS_MIN_YEAR, NS_MAX_YEAR = (
    int(np.datetime64(t, "ns").astype("datetime64[Y]").astype(np.int64)) + 1970
    for t in (np.iinfo(np.int64).min + 1, np.iinfo(np.int64).max))


class Offending(Exception):
    """Cells that do not fit: first row position, how many rows, and a few distinct values."""

    def __init__(self, pos: int, count: int, examples: list[str], reason: str = "") -> None:
        super().__init__(reason)
        self.pos, self.count, self.examples, self.reason = pos, count, examples, reason


class TextColumn:
    """Distinct values (uniques) and per-row codes of a text column."""

    def __init__(self, uniques: pa.Array, codes: np.ndarray, markers: bool = True,
                 counts: np.ndarray | None = None) -> None:
        self.uniques = (
            uniques.cast(pa.large_string()) if len(uniques) else pa.array([], pa.string())
        )
        self.codes = codes
        self.trimmed = pc.utf8_trim_whitespace(self.uniques)
        self.lower = pc.utf8_lower(self.trimmed)
        if markers:
            miss = pc.or_(
                pc.is_in(self.trimmed, pa.array(MISSING_MARKERS)), pc.equal(self.trimmed, "")
            )
        else:
            miss = pa.array(np.zeros(len(self.uniques), bool))
        self.missing = _np(miss)
        if counts is None:
            counts = np.bincount(codes + 1, minlength=len(self.uniques) + 1)[1:]
        self.counts = counts

    @classmethod
    def from_arrow(cls, arr: pa.ChunkedArray, markers: bool = True) -> TextColumn:
        if isinstance(arr, pa.Array):
            arr = pa.chunked_array([arr])
        if arr.num_chunks == 0 or len(arr) == 0:
            return cls(pa.array([], pa.string()), np.zeros(len(arr), np.int32), markers)
        # A reader may hand over text already dictionary-encoded (the CSV reader encodes while
        # it parses, on all cores); its dictionaries are unified, not encoded again.
        given = pa.types.is_dictionary(arr.type)
        enc = (arr if given else pc.dictionary_encode(arr)).unify_dictionaries()
        uniques = enc.chunk(0).dictionary
        if given and len(pc.unique(uniques)) < len(uniques):  # a value listed twice
            return cls.from_arrow(arr.cast(arr.type.value_type), markers)
        indices = (enc.chunk(0).indices if enc.num_chunks == 1 else
                   pa.chunked_array([c.indices for c in enc.chunks],
                                    enc.type.index_type).combine_chunks())
        if indices.null_count:
            codes = pc.fill_null(indices, -1).to_numpy()
            counts = np.bincount(codes + 1, minlength=len(uniques) + 1)[1:]
        else:  # no copy, and no shift of the codes to count them
            codes = indices.to_numpy()
            counts = np.bincount(codes, minlength=len(uniques))
        if given:
            uniques, codes, counts = _used(uniques, codes, counts)
        return cls(uniques, codes, markers, counts)

    @classmethod
    def from_categorical(cls, values: pd.Categorical) -> TextColumn:
        cats = pa.array([str(c) for c in values.categories], pa.string())
        return cls(cats, np.asarray(values.codes, dtype=np.int64))

    # ---- facts over rows ----------------------------------------------------------------------

    def n_present(self, mask_u: np.ndarray | None = None) -> int:
        keep = ~self.missing if mask_u is None else (mask_u & ~self.missing)
        return int(self.counts[keep].sum())

    def value(self, pos: int) -> str:
        return self.uniques[int(self.codes[pos])].as_py()

    def offending(self, bad_u: np.ndarray, reason: str = "") -> Offending:
        """Offending for the rows whose value is marked in bad_u (one flag per distinct value)."""
        rows = np.flatnonzero(np.append(bad_u, False)[self.codes])
        examples: list[str] = []
        for code in dict.fromkeys(self.codes[rows[:1000]].tolist()):
            examples.append(self.uniques[code].as_py())
            if len(examples) == 3:
                break
        return Offending(int(rows[0]), len(rows), examples, reason)

    def spread(self, values_u: np.ndarray, fill) -> np.ndarray:
        """Per-row values from per-distinct-value ones (missing rows get fill)."""
        # take, not [codes]: indexing converts int32 codes to intp first, twice the time.
        return np.take(np.append(values_u, np.array([fill], dtype=values_u.dtype)), self.codes)

    # ---- what the values look like --------------------------------------------------------------

    def is_number(self, decimal: str = ".") -> np.ndarray:
        pattern = NUM_COMMA if decimal == "," else NUM_POINT
        num = pc.match_substring_regex(self.trimmed, pattern)
        return _np(num) | self.is_infinite()

    def is_infinite(self) -> np.ndarray:
        return _np(pc.match_substring_regex(self.lower, INFINITE))

    def is_bool(self, loose: bool = False) -> np.ndarray:
        words = (TRUE_LOOSE + FALSE_LOOSE) if loose else (TRUE_WORDS + FALSE_WORDS)
        return _np(pc.is_in(self.lower, pa.array(words)))

    def is_date(self) -> np.ndarray:
        return _np(pc.match_substring_regex(self.trimmed, ISO_DATE))

    def guess_decimal(self) -> str:
        """'.' unless every number-looking value parses only with a decimal comma."""
        present = ~self.missing
        if (self.is_number(".") | ~present).all():
            return "."
        if (self.is_number(",") | ~present).all():
            return ","
        return "."

    # ---- conversions (raise Offending when a value does not fit) ---------------------------------

    def to_numeric(self, decimal: str = ".") -> tuple[np.ndarray, list[str]]:
        ok = self.is_number(decimal)
        bad = ~ok & ~self.missing
        if bad.any():
            raise self.offending(bad, "text that is not a number")
        notes = []
        text = self.trimmed
        if decimal == ",":
            if _np(pc.match_substring_regex(text, r"\.\d{3}")).any():
                notes.append("'.' was read as a thousands separator (e.g. '1.234,5' = 1234.5)")
            text = pc.replace_substring(pc.replace_substring(text, ".", ""), ",", ".")
        text = pc.if_else(pa.array(ok), text, pa.scalar(None, text.type))
        values_u = pc.cast(text, pa.float64(), safe=False).to_numpy(zero_copy_only=False)
        return self.spread(values_u.astype(np.float64), np.nan), notes

    def to_boolean(self, loose: bool = False) -> pd.arrays.BooleanArray:
        ok = self.is_bool(loose)
        bad = ~ok & ~self.missing
        if bad.any():
            raise self.offending(bad, "text that is not yes/no, true/false or 1/0")
        truth = _np(pc.is_in(self.lower, pa.array(TRUE_LOOSE if loose else TRUE_WORDS)))
        values = self.spread(truth, False)
        mask = self.spread(~ok, True)
        import pandas as pd

        return pd.arrays.BooleanArray(values, mask)

    def to_date(self) -> tuple[np.ndarray, list[str]]:
        ok = self.is_date()
        bad = ~ok & ~self.missing
        if bad.any():
            raise self.offending(bad, "text that is not a date written YYYY-MM-DD")
        texts = [t if k else None for t, k in zip(self.trimmed.to_pylist(), ok, strict=True)]
        early_late = np.array([_out_of_range(t) for t in texts], dtype=bool)
        if early_late.any():
            raise self.offending(early_late, "a date before 1678 or after 2261")
        zoned = ok & _np(pc.match_substring_regex(self.trimmed, HAS_ZONE))
        import pandas as pd

        stamps = pd.to_datetime(
            pd.Series(texts, dtype=object), format="ISO8601", utc=bool(zoned.any()), errors="coerce"
        )
        invalid = ok & stamps.isna().to_numpy()
        if invalid.any():
            raise self.offending(invalid, "a date that does not exist in the calendar")
        notes = []
        if zoned.any():
            stamps = stamps.dt.tz_convert(None)
            notes.append("times with a zone offset were converted to UTC")
        values_u = stamps.to_numpy(dtype="datetime64[ns]")
        return self.spread(values_u, np.datetime64("NaT", "ns")), notes

    def to_categorical(self) -> pd.Categorical:
        texts = self.uniques.to_pylist()
        keep = [i for i in range(len(texts)) if not self.missing[i]]
        keep.sort(key=texts.__getitem__)
        # Codes in the type pandas keeps them in (its rule: the narrowest whose maximum exceeds
        # the number of categories), and valid by construction (-1 or a category's position):
        # pandas neither converts nor checks them again.
        small = (t for t in (np.int8, np.int16, np.int32) if len(keep) < np.iinfo(t).max)
        code_type = next(small, np.int64)
        import pandas as pd

        cats = pd.Index([texts[i] for i in keep], dtype="str")
        if keep == list(range(len(texts))) and len(self.codes) and self.codes.min() >= 0:
            # Distinct values already in order (the plain-CSV reader sorts them), none missing:
            # the codes are kept, in the narrower type, without a lookup per row.
            codes = self.codes.astype(code_type, copy=False)
        else:
            new_code = np.full(len(texts) + 1, -1, dtype=code_type)
            new_code[keep] = np.arange(len(keep))
            codes = np.take(new_code, self.codes)
        return pd.Categorical.from_codes(codes, categories=cats, validate=False)


def _used(uniques: pa.Array, codes: np.ndarray, counts: np.ndarray):
    """A given dictionary cut to the values some row uses, a null entry read as a missing
    cell: what encoding the plain text would have given (a file's dictionary may hold more).
    Returns (uniques, codes, counts)."""
    seen = counts > 0
    if uniques.null_count:
        seen &= ~np.asarray(uniques.is_null().to_numpy(zero_copy_only=False), dtype=bool)
    if seen.all():
        return uniques, codes, counts
    new_code = np.full(len(uniques) + 1, -1, dtype=np.int64)
    new_code[np.flatnonzero(seen)] = np.arange(int(seen.sum()))
    return uniques.filter(pa.array(seen)), new_code[codes], counts[seen]


def _np(arr) -> np.ndarray:
    if isinstance(arr, pa.ChunkedArray):
        arr = arr.combine_chunks()
    return np.asarray(pc.fill_null(arr, False).to_numpy(zero_copy_only=False), dtype=bool)


def _out_of_range(text: str | None) -> bool:
    if text is None:
        return False
    try:
        year = int(text[:4])
    except ValueError:
        return False
    return not (NS_MIN_YEAR < year < NS_MAX_YEAR)
