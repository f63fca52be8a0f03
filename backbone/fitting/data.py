"""Reading and validating measured relaxation data: decay series, rate tables and NMR-STAR relaxation lists.

Three inputs, as in the architecture notes:

* **Decay series** (:func:`read_decays`): long format, one row per point,
  ``residue,delay_s,intensity[,error][,series]``. ``delay_ms`` may replace ``delay_s`` (converted to seconds
  here, once). ``series`` separates several decay curves of one residue (for example two fields or an R1 and
  an R2 series); each (series, residue) pair is fitted on its own.
* **Rate tables** (:func:`read_rates`): ``residue,R1,R2[,NOE][,R1_err,R2_err,NOE_err][,field_mhz]`` with rates
  in s⁻¹. An optional ``field_mhz`` column (1H frequency in MHz) lets one file hold rates at several fields;
  values within 1 MHz of each other are one field (:func:`field_groups`).
* **Intensity tables** (:func:`read_intensities`): peak intensities of several recorded experiments, long
  format ``residue,experiment,intensity[,error]``, or one peak list ``residue,intensity[,error]`` per experiment
  (:func:`read_peak_lists`); used by the intensity-ratio fit of :mod:`backbone.fitting.ratio`.
* **NMR-STAR** (:func:`read_nmrstar`): saveframes of category ``heteronucl_T1_relaxation``,
  ``heteronucl_T2_relaxation`` and ``heteronucl_NOEs`` (NMR-STAR 3 dictionary, read with ``pynmrstar``);
  T1/T2 values in ``s``/``ms`` are converted to rates in s⁻¹.

Text tables may be comma-, tab-, semicolon- or whitespace-separated: the delimiter is taken from the header
line (tab, then semicolon, then comma; none of them means runs of whitespace). Blank lines and lines starting
with ``#`` are skipped; line numbers in messages count every line of the file, starting at 1. Column names
are matched case-insensitively.

Problems the user can fix in the file (an unknown or missing column, a cell that is not a number, a row with
the wrong number of fields, an empty file) raise :class:`~backbone.errors.BackboneError` naming the file,
line and column. Points that are well-formed but unusable are **kept** and flagged in the ``flag`` column
(empty string when the point is usable), so the fitting driver can exclude them and report them:

* ``delay missing``, ``negative delay``
* ``intensity missing``, ``non-positive intensity``
* ``error missing``, ``non-positive error`` (only when an error column is present)
* ``duplicate delay`` (every point of a series whose delay occurs more than once: which one to trust is not
  decidable from the file)

Residue identifiers are kept as given: if every identifier of a file is an integer the column holds ints,
otherwise the strings as written (``G12``).
"""

from __future__ import annotations

import csv
import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from backbone.errors import BackboneError

__all__ = [
    "FLAG_DELAY_MISSING",
    "FLAG_NEGATIVE_DELAY",
    "FLAG_INTENSITY_MISSING",
    "FLAG_NONPOSITIVE_INTENSITY",
    "FLAG_ERROR_MISSING",
    "FLAG_NONPOSITIVE_ERROR",
    "FLAG_DUPLICATE_DELAY",
    "DecayData",
    "IntensityTable",
    "field_groups",
    "read_intensities",
    "intensities_from_frame",
    "read_peak_lists",
    "RateTable",
    "read_decays",
    "decays_from_frame",
    "read_rates",
    "rates_from_frame",
    "read_nmrstar",
]

FLAG_DELAY_MISSING = "delay missing"
FLAG_NEGATIVE_DELAY = "negative delay"
FLAG_INTENSITY_MISSING = "intensity missing"
FLAG_NONPOSITIVE_INTENSITY = "non-positive intensity"
FLAG_ERROR_MISSING = "error missing"
FLAG_NONPOSITIVE_ERROR = "non-positive error"
FLAG_DUPLICATE_DELAY = "duplicate delay"

#: Cell texts read as a missing value (case-insensitive); anything else that is not a number is an error.
_MISSING_TEXT = frozenset({"", "nan", "na", "n/a", "none", "null"})
_INTEGER = re.compile(r"[+-]?\d+\Z")
_DECIMAL_COMMA = re.compile(r"[+-]?\d*,\d+\Z")

# Column vocabularies: lower-case name in the file → canonical name.
_DECAY_COLUMNS = {
    "residue": "residue",
    "delay_s": "delay_s",
    "delay_ms": "delay_ms",
    "intensity": "intensity",
    "error": "error",
    "series": "series",
}
_DECAY_ALLOWED = "residue, delay_s (or delay_ms), intensity, error, series"
_RATE_COLUMNS = {
    "residue": "residue",
    "r1": "R1",
    "r2": "R2",
    "noe": "NOE",
    "r1_err": "R1_err",
    "r2_err": "R2_err",
    "noe_err": "NOE_err",
    "field_mhz": "field_mhz",
}
_RATE_ALLOWED = "residue, R1, R2, NOE, R1_err, R2_err, NOE_err, field_mhz"
_INTENSITY_COLUMNS = {"residue": "residue", "experiment": "experiment", "intensity": "intensity", "error": "error"}
_INTENSITY_ALLOWED = "residue, experiment, intensity, error"
_PEAK_LIST_COLUMNS = {"residue": "residue", "intensity": "intensity", "error": "error"}
_PEAK_LIST_ALLOWED = "residue, intensity, error"
_RATE_QUANTITIES = ("R1", "R2", "NOE")


# ---------------------------------------------------------------------------------------------------------
# containers
# ---------------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class DecayData:
    """Validated decay points.

    Attributes
    ----------
    points : pandas.DataFrame
        One row per point, in file order: ``residue``, ``series`` (``""`` when the file has none),
        ``delay_s`` [s], ``intensity``, ``error`` (NaN without an error column), ``line`` (line number in
        the file, or row number of a table) and ``flag`` (``""`` if usable, else the reasons joined by
        ``"; "``).
    source : str
        File name (or ``"<table>"``) used in messages.
    has_errors, has_series : bool
        Whether the input had an error column / a series column.
    """

    points: pd.DataFrame
    source: str = "<table>"
    has_errors: bool = False
    has_series: bool = False

    def problems(self) -> list[str]:
        """One message per flagged point, naming the source, line, residue and the reasons."""
        flagged = self.points[self.points["flag"] != ""]
        out = []
        for row in flagged.itertuples(index=False):
            series = f", series {row.series}" if self.has_series else ""
            out.append(
                f"{self.source} line {row.line} (residue {row.residue}{series}, delay {row.delay_s:g} s): "
                f"{row.flag}; point kept, excluded from fits"
            )
        return out


@dataclass(frozen=True)
class RateTable:
    """Validated relaxation rates per residue.

    Attributes
    ----------
    table : pandas.DataFrame
        ``residue`` and the quantities present among ``R1``, ``R2`` [s⁻¹], ``NOE`` [1] with their
        ``_err`` columns, plus ``line`` and ``flag`` (as in :class:`DecayData`). NMR-STAR input adds
        ``residue_name`` (the residue type, e.g. ``GLY``).
    source : str
        File name used in messages.
    field_mhz : float or None
        1H frequency the rates were measured at, if the source says so and it is one field [MHz]. A table
        read with a ``field_mhz`` column keeps that column (NaN where missing, flagged ``field missing``).
    """

    table: pd.DataFrame
    source: str = "<table>"
    field_mhz: float | None = None

    @property
    def fields_mhz(self) -> tuple[float, ...]:
        """The distinct fields of a table with a ``field_mhz`` column (group means), else ``(field_mhz,)`` or
        ``()``."""
        if "field_mhz" not in self.table.columns:
            return () if self.field_mhz is None else (float(self.field_mhz),)
        values = self.table["field_mhz"].to_numpy(dtype=float)
        values = values[np.isfinite(values)]
        if values.size == 0:
            return ()
        groups = field_groups(values)
        return tuple(float(np.mean(values[groups == g])) for g in range(int(groups.max()) + 1))

    def problems(self) -> list[str]:
        """One message per flagged row."""
        flagged = self.table[self.table["flag"] != ""]
        return [
            f"{self.source} line {row.line} (residue {row.residue}): {row.flag}"
            for row in flagged.itertuples(index=False)
        ]


# ---------------------------------------------------------------------------------------------------------
# text tables
# ---------------------------------------------------------------------------------------------------------
def _read_text(path) -> tuple[str, list[tuple[int, str]]]:
    p = Path(path)
    source = str(path)
    if not p.is_file():
        raise BackboneError(f"{source}: no such file")
    try:
        text = p.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError as err:
        raise BackboneError(f"{source}: not a UTF-8 text file ({err.reason} at byte {err.start})") from err
    lines = [
        (number, line)
        for number, line in enumerate(text.splitlines(), start=1)
        if line.strip() and not line.lstrip().startswith("#")
    ]
    return source, lines


def _sniff_delimiter(header: str) -> str | None:
    for delimiter in ("\t", ";", ","):
        if delimiter in header:
            return delimiter
    return None


def _split(line: str, delimiter: str | None) -> list[str]:
    if delimiter is None:
        return line.split()
    return [cell.strip() for cell in next(csv.reader([line], delimiter=delimiter))]


def _tokenize(path, vocabulary: dict, allowed: str) -> tuple[str, list[str], pd.DataFrame]:
    """Split a text table into a frame of stripped strings (canonical column names) plus ``line``."""
    source, lines = _read_text(path)
    if not lines:
        raise BackboneError(f"{source}: the file is empty (expected a header line: {allowed})")
    header_line, header_text = lines[0]
    delimiter = _sniff_delimiter(header_text)
    names = [name.strip().strip('"').strip("'") for name in _split(header_text, delimiter)]
    if all(_is_number(name) for name in names):
        raise BackboneError(
            f"{source} line {header_line}: the first line must be a header naming the columns ({allowed}), "
            f"got {header_text.strip()!r}"
        )
    columns = []
    for name in names:
        canonical = vocabulary.get(name.lower())
        if canonical is None:
            raise BackboneError(
                f"{source} line {header_line}: unknown column {name!r}; allowed columns: {allowed}"
            )
        if canonical in columns:
            raise BackboneError(f"{source} line {header_line}: column {name!r} appears twice")
        columns.append(canonical)
    if len(lines) == 1:
        raise BackboneError(f"{source}: no data rows (the file has only a header, line {header_line})")
    rows, numbers = [], []
    for number, text in lines[1:]:
        cells = _split(text, delimiter)
        if len(cells) != len(columns):
            raise BackboneError(
                f"{source} line {number}: {len(cells)} fields but the header (line {header_line}) has "
                f"{len(columns)} columns ({', '.join(names)})"
            )
        rows.append(cells)
        numbers.append(number)
    frame = pd.DataFrame(rows, columns=columns, dtype=object)
    frame["line"] = numbers
    return source, columns, frame


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _numeric(frame: pd.DataFrame, column: str, source: str, where: str = "line") -> np.ndarray:
    """Column as float array; missing cells → NaN; any other non-number → BackboneError naming each cell."""
    values = frame[column]
    if pd.api.types.is_numeric_dtype(values) and not pd.api.types.is_bool_dtype(values):
        return values.to_numpy(dtype=float)
    text = values.map(
        lambda v: "" if v is None or (isinstance(v, float) and math.isnan(v)) else str(v).strip()
    )
    missing = text.str.lower().isin(_MISSING_TEXT).to_numpy()
    numbers = pd.to_numeric(text.where(~missing, "nan"), errors="coerce").to_numpy(dtype=float)
    bad = np.isnan(numbers) & ~missing
    if bad.any():
        cells = [
            f"{where} {line}, column {column!r}: {cell!r}"
            for line, cell in zip(frame["line"].to_numpy()[bad], text.to_numpy()[bad])
        ]
        more = f" (and {len(cells) - 5} more)" if len(cells) > 5 else ""
        hint = ""
        if any(_DECIMAL_COMMA.match(cell) for cell in text.to_numpy()[bad]):
            hint = " (write decimals with a point, e.g. 0.05)"
        raise BackboneError(f"{source}: not a number: {'; '.join(cells[:5])}{more}{hint}")
    return numbers


def _residues(frame: pd.DataFrame, source: str, where: str = "line") -> pd.Series:
    """Residue identifiers as given: from text, all-integer columns become ints, others stay strings; values
    of a DataFrame keep their type (integral floats, as pandas makes of integer columns with gaps, → int)."""

    def normalize(value):
        if value is None or (isinstance(value, float) and math.isnan(value)):
            return ""
        if isinstance(value, (bool, np.bool_)):
            return str(value)
        if isinstance(value, (int, np.integer)):
            return int(value)
        if isinstance(value, (float, np.floating)) and float(value).is_integer():
            return int(value)
        return str(value).strip()

    values = [normalize(v) for v in frame["residue"]]
    empty = [line for line, v in zip(frame["line"], values) if v == ""]
    if empty:
        lines = ", ".join(str(n) for n in empty[:5])
        raise BackboneError(f"{source}: empty residue identifier ({where} {lines})")
    if where == "line" and all(isinstance(v, str) and _INTEGER.match(v) for v in values):
        values = [int(v) for v in values]
    return pd.Series(values, dtype=object)


def _join_flags(*flag_arrays: tuple[np.ndarray, str]) -> np.ndarray:
    n = len(flag_arrays[0][0])
    out = np.array([""] * n, dtype=object)
    for mask, text in flag_arrays:
        for i in np.flatnonzero(mask):
            out[i] = text if not out[i] else f"{out[i]}; {text}"
    return out


# ---------------------------------------------------------------------------------------------------------
# decay series
# ---------------------------------------------------------------------------------------------------------
def read_decays(path) -> DecayData:
    """Read a long-format decay table ``residue,delay_s,intensity[,error][,series]``.

    Parameters
    ----------
    path : str or Path
        Comma-, tab-, semicolon- or whitespace-separated text file with a header line.

    Returns
    -------
    DecayData
        All rows, unusable points flagged (see the module docstring).

    Raises
    ------
    BackboneError
        Missing file, empty file, header only, unknown/missing/duplicate column, wrong field count, a cell
        that is not a number, an empty residue identifier.
    """
    source, _, frame = _tokenize(path, _DECAY_COLUMNS, _DECAY_ALLOWED)
    return _validate_decays(frame, source, "line")


def _canonical_frame(frame, columns: dict, allowed: str, source: str, what: str, *, keep=()) -> pd.DataFrame:
    """``frame`` with its columns renamed to their canonical names (case-insensitive), and a 1-based ``line``
    column when it has none; unknown or repeated columns and an empty table raise :class:`BackboneError`."""
    if not isinstance(frame, pd.DataFrame):
        raise BackboneError(f"{source}: expected a pandas DataFrame of {what}, got {type(frame).__name__}")
    renamed = {}
    for name in frame.columns:
        canonical = columns.get(str(name).strip().lower())
        if canonical is None and str(name) in keep:
            canonical = str(name)
        if canonical is None:
            raise BackboneError(f"{source}: unknown column {name!r}; allowed columns: {allowed}")
        if canonical in renamed.values():
            raise BackboneError(f"{source}: column {name!r} appears twice")
        renamed[name] = canonical
    if frame.empty:
        raise BackboneError(f"{source}: no data rows")
    table = frame.rename(columns=renamed).reset_index(drop=True)
    if "line" not in table.columns:
        table["line"] = np.arange(1, len(table) + 1)
    return table


def decays_from_frame(frame: pd.DataFrame, *, source: str = "<table>") -> DecayData:
    """Validate a DataFrame with the columns of :func:`read_decays` (names case-insensitive).

    Messages name ``row`` numbers starting at 1.
    """
    table = _canonical_frame(frame, _DECAY_COLUMNS, _DECAY_ALLOWED, source, "decay points")
    return _validate_decays(table, source, "row")


def _validate_decays(frame: pd.DataFrame, source: str, where: str) -> DecayData:
    columns = set(frame.columns)
    if "delay_s" in columns and "delay_ms" in columns:
        raise BackboneError(f"{source}: give the delay once, as delay_s or delay_ms, not both")
    for required in ("residue", "intensity"):
        if required not in columns:
            raise BackboneError(
                f"{source}: missing column {required!r}; required: residue, delay_s, intensity"
            )
    if "delay_s" not in columns and "delay_ms" not in columns:
        raise BackboneError(
            f"{source}: missing column 'delay_s' (or 'delay_ms'); required: residue, delay_s, intensity"
        )

    residue = _residues(frame, source, where)
    if "delay_s" in columns:
        delay = _numeric(frame, "delay_s", source, where)
    else:
        delay = _numeric(frame, "delay_ms", source, where) * 1e-3
    intensity = _numeric(frame, "intensity", source, where)
    has_errors = "error" in columns
    error = _numeric(frame, "error", source, where) if has_errors else np.full(len(frame), np.nan)
    has_series = "series" in columns
    if has_series:
        series = frame["series"].map(
            lambda v: "" if v is None or (isinstance(v, float) and math.isnan(v)) else str(v).strip()
        )
    else:
        series = pd.Series([""] * len(frame), dtype=object)

    delay_ok = np.isfinite(delay)
    points = pd.DataFrame(
        {
            "residue": residue.to_numpy(dtype=object) if residue.dtype == object else residue.to_numpy(),
            "series": series.to_numpy(dtype=object),
            "delay_s": delay,
            "intensity": intensity,
            "error": error,
            "line": frame["line"].to_numpy(dtype=int),
        }
    )
    duplicate = points.duplicated(subset=["series", "residue", "delay_s"], keep=False).to_numpy() & delay_ok
    flags = [
        (~delay_ok, FLAG_DELAY_MISSING),
        (delay_ok & (delay < 0), FLAG_NEGATIVE_DELAY),
        (~np.isfinite(intensity), FLAG_INTENSITY_MISSING),
        (np.isfinite(intensity) & (intensity <= 0), FLAG_NONPOSITIVE_INTENSITY),
        (duplicate, FLAG_DUPLICATE_DELAY),
    ]
    if has_errors:
        flags += [
            (~np.isfinite(error), FLAG_ERROR_MISSING),
            (np.isfinite(error) & (error <= 0), FLAG_NONPOSITIVE_ERROR),
        ]
    points["flag"] = _join_flags(*flags)
    return DecayData(points=points, source=source, has_errors=has_errors, has_series=has_series)


# ---------------------------------------------------------------------------------------------------------
# rate tables
# ---------------------------------------------------------------------------------------------------------
def read_rates(path) -> RateTable:
    """Read a rate table ``residue,R1,R2[,NOE][,R1_err,R2_err,NOE_err]`` (rates in s⁻¹).

    Empty cells are missing values (flagged ``R2 missing`` etc.); negative rates and non-positive errors are
    flagged; a residue listed twice is flagged on every line it appears. Raises
    :class:`~backbone.errors.BackboneError` for the structural problems listed in :func:`read_decays`, and
    for an ``_err`` column without its value column.
    """
    source, _, frame = _tokenize(path, _RATE_COLUMNS, _RATE_ALLOWED)
    return _validate_rates(frame, source, "line")


def rates_from_frame(
    frame: pd.DataFrame, *, source: str = "<table>", field_mhz: float | None = None
) -> RateTable:
    """Validate a DataFrame with the columns of :func:`read_rates` (names case-insensitive)."""
    table = _canonical_frame(
        frame, _RATE_COLUMNS, _RATE_ALLOWED, source, "rates", keep=("line", "flag", "residue_name")
    )
    return _validate_rates(table, source, "row", field_mhz=field_mhz)


def _validate_rates(frame: pd.DataFrame, source: str, where: str, field_mhz=None) -> RateTable:
    columns = set(frame.columns)
    for required in ("residue", "R1", "R2"):
        if required not in columns:
            raise BackboneError(f"{source}: missing column {required!r}; required: residue, R1, R2")
    for quantity in _RATE_QUANTITIES:
        if f"{quantity}_err" in columns and quantity not in columns:
            raise BackboneError(f"{source}: column '{quantity}_err' given without column '{quantity}'")
    out = pd.DataFrame({"residue": _residues(frame, source, where).to_numpy(dtype=object)})
    if "residue_name" in columns:
        out["residue_name"] = frame["residue_name"].to_numpy(dtype=object)
    flags = []
    for quantity in _RATE_QUANTITIES:
        if quantity not in columns:
            continue
        value = _numeric(frame, quantity, source, where)
        out[quantity] = value
        flags.append((~np.isfinite(value), f"{quantity} missing"))
        if quantity != "NOE":
            flags.append((np.isfinite(value) & (value < 0), f"negative {quantity}"))
        err_col = f"{quantity}_err"
        if err_col in columns:
            err = _numeric(frame, err_col, source, where)
            out[err_col] = err
            flags.append((np.isfinite(err) & (err <= 0), f"non-positive {err_col}"))
    out["line"] = frame["line"].to_numpy(dtype=int)
    keys = out["residue"].astype(str)
    if "field_mhz" in columns:
        from backbone.units import FIELD_MHZ

        fields = _numeric(frame, "field_mhz", source, where)
        finite = np.isfinite(fields)
        FIELD_MHZ.check(fields[finite], where=f"{source} column 'field_mhz'")
        if field_mhz is not None and np.any(np.abs(fields[finite] - float(field_mhz)) > 1.0):
            raise BackboneError(
                f"{source}: give the field once: a 'field_mhz' column or field_mhz = {field_mhz:g}, not both"
            )
        out["field_mhz"] = fields
        flags.append((~finite, "field missing"))
        group = np.full(len(out), -1)
        if finite.any():
            group[finite] = field_groups(fields[finite])
        keys = keys + "@" + pd.Series(group).astype(str)
        distinct = np.unique(group[finite])
        if field_mhz is None and distinct.size == 1:
            field_mhz = float(np.mean(fields[finite]))
    dup = keys.duplicated(keep=False).to_numpy()
    flags.append((dup, "residue listed more than once" + (" at this field" if "field_mhz" in columns else "")))
    out["flag"] = _join_flags(*flags)
    return RateTable(table=out, source=source, field_mhz=field_mhz)


def field_groups(values) -> np.ndarray:
    """Group index per value: sorted fields within 1 MHz of the lowest of a group are one field.

    Spectrometers differ slightly from their nominal frequency (600.13 for "600"), so values a fraction of a
    MHz apart name the same field. ``values`` : array [MHz], finite. Groups are numbered from 0 upwards in
    increasing field.
    """
    values = np.asarray(values, dtype=float)
    unique = np.unique(values)
    group = np.zeros(unique.size, dtype=int)
    first = unique[0] if unique.size else 0.0
    for k in range(1, unique.size):
        if unique[k] - first > 1.0:
            first = unique[k]
            group[k] = group[k - 1] + 1
        else:
            group[k] = group[k - 1]
    return group[np.searchsorted(unique, values)]


# ---------------------------------------------------------------------------------------------------------
# NMR-STAR
# ---------------------------------------------------------------------------------------------------------
# (saveframe category, loop category, value tag, error tag, quantity, units tag of the saveframe)
_STAR_LISTS = (
    ("heteronucl_T1_relaxation", "_T1", "Val", "Val_err", "R1", "T1_val_units"),
    ("heteronucl_T2_relaxation", "_T2", "T2_val", "T2_val_err", "R2", "T2_val_units"),
    ("heteronucl_NOEs", "_Heteronucl_NOE", "Val", "Val_err", "NOE", None),
)
_STAR_NULL = frozenset({".", "?", ""})
#: Units of T1/T2 lists in NMR-STAR 3 (dictionary enumeration: s, s-1, ms, ms-1)
#: → (the value is a time, factor to s or to s⁻¹).
_STAR_UNITS = {"s": (True, 1.0), "ms": (True, 1e-3), "s-1": (False, 1.0), "ms-1": (False, 1e3)}


def _star_value(text) -> float:
    if text is None or str(text).strip() in _STAR_NULL:
        return math.nan
    return float(text)


def read_nmrstar(path, *, atom: str = "N", field_mhz: float | None = None) -> RateTable:
    """Read heteronuclear T1/R1, T2/R2 and NOE lists of an NMR-STAR 3 file into a rate table.

    Parameters
    ----------
    path : str or Path
        NMR-STAR file (an entry, or saveframes only).
    atom : str
        Atom name whose relaxation is wanted (PDB name, default ``N``). For NOE lists the residue is taken
        from whichever of the two atoms has this name.
    field_mhz : float, optional [MHz]
        1H frequency to select when the file holds lists at several fields (within 1 MHz). Without it a file
        with several fields is an error that lists them.

    Returns
    -------
    RateTable
        One row per residue (``Comp_index_ID``; prefixed ``<entity assembly>:`` when the file has more than
        one entity assembly), ``residue_name`` from ``Comp_ID``, rates in s⁻¹ (T values inverted, errors
        propagated as σ_R = σ_T / T²).

    Raises
    ------
    BackboneError
        Unreadable file, no relaxation saveframes, unknown or missing units, several fields without
        ``field_mhz``, two lists of one quantity at one field, a value that is not a number.
    """
    import pynmrstar

    source = str(path)
    if not Path(path).is_file():
        raise BackboneError(f"{source}: no such file")
    text = Path(path).read_text(encoding="utf-8-sig")
    if not text.strip():
        raise BackboneError(f"{source}: the file is empty (expected NMR-STAR relaxation saveframes)")
    if not re.search(r"^\s*data_", text, flags=re.MULTILINE) and re.search(
        r"^\s*save_\S", text, re.MULTILINE
    ):
        text = "data_relaxation\n" + text  # saveframes without a data block: give them one
    try:
        entry = pynmrstar.Entry.from_string(text)
    except Exception as err:  # pynmrstar raises its own ParsingError as well as ValueError
        message = str(err).strip().splitlines()[0] if str(err).strip() else type(err).__name__
        raise BackboneError(f"{source}: not a readable NMR-STAR file ({message})") from err

    lists = []  # (saveframe name, quantity, field or None, frame of values)
    for sf_category, loop_category, value_tag, error_tag, quantity, units_tag in _STAR_LISTS:
        for frame in entry.get_saveframes_by_category(sf_category):
            lists.append(
                _star_list(frame, source, loop_category, value_tag, error_tag, quantity, units_tag, atom)
            )
    if not lists:
        raise BackboneError(
            f"{source}: no relaxation saveframes (categories heteronucl_T1_relaxation, "
            "heteronucl_T2_relaxation, heteronucl_NOEs)"
        )

    fields = sorted({f for _, _, f, _ in lists if f is not None})
    chosen = lists
    if field_mhz is not None:
        chosen = [item for item in lists if item[2] is None or abs(item[2] - field_mhz) <= 1.0]
        if not chosen:
            raise BackboneError(
                f"{source}: no relaxation list at {field_mhz:g} MHz; fields in the file: "
                f"{', '.join(f'{f:g}' for f in fields) or 'none given'}"
            )
    elif len(fields) > 1:
        raise BackboneError(
            f"{source}: relaxation lists at several fields ({', '.join(f'{f:g}' for f in fields)} MHz); "
            "choose one with field_mhz"
        )
    by_quantity: dict[str, tuple] = {}
    for item in chosen:
        if item[1] in by_quantity:
            raise BackboneError(
                f"{source}: two {item[1]} lists for the same field (saveframes {by_quantity[item[1]][0]!r} "
                f"and {item[0]!r}); choose one with field_mhz or split the file"
            )
        by_quantity[item[1]] = item
    for required in ("R1", "R2"):
        if required not in by_quantity:
            by_quantity[required] = (
                None,
                required,
                None,
                pd.DataFrame(columns=["key", "residue_name", "value", "error"]),
            )

    merged = None
    for quantity in _RATE_QUANTITIES:
        if quantity not in by_quantity:
            continue
        values = by_quantity[quantity][3].rename(columns={"value": quantity, "error": f"{quantity}_err"})
        if merged is None:
            merged = values
        else:
            merged = merged.merge(values, on=["key", "residue_name"], how="outer")
    assemblies = {key[0] for key in merged["key"]}
    order = sorted(range(len(merged)), key=lambda i: _star_sort_key(merged["key"].iloc[i]))
    merged = merged.iloc[order].reset_index(drop=True)
    if len(assemblies) > 1:
        residue = merged["key"].map(lambda k: f"{k[0]}:{k[1]}")
    else:
        residue = merged["key"].map(lambda k: k[1])
    table = pd.DataFrame({"residue": residue.to_numpy(dtype=object), "residue_name": merged["residue_name"]})
    for column in merged.columns:
        if column not in ("key", "residue_name"):
            table[column] = merged[column].to_numpy(dtype=float)
    table["line"] = np.arange(1, len(table) + 1)
    used_fields = sorted({item[2] for item in by_quantity.values() if item[2] is not None})
    rates = rates_from_frame(table, source=source, field_mhz=used_fields[0] if used_fields else field_mhz)
    return rates


def _star_sort_key(key):
    assembly, index = key
    return (assembly, 0, index, "") if isinstance(index, int) else (assembly, 1, 0, str(index))


def _star_list(frame, source, loop_category, value_tag, error_tag, quantity, units_tag, atom):
    name = frame.name
    prefix = frame.tag_prefix
    field_tags = frame.get_tag("Spectrometer_frequency_1H")
    field = _star_value(field_tags[0]) if field_tags else math.nan
    field = None if math.isnan(field) else field
    is_time, factor = False, 1.0
    if units_tag is not None:
        units = frame.get_tag(units_tag)
        unit = str(units[0]).strip() if units else "."
        if unit not in _STAR_UNITS:
            raise BackboneError(
                f"{source}: saveframe {name!r}: {prefix}.{units_tag} is {unit!r}; allowed: "
                f"{', '.join(_STAR_UNITS)}"
            )
        is_time, factor = _STAR_UNITS[unit]
    try:
        loop = frame.get_loop(loop_category)
    except KeyError as err:
        raise BackboneError(f"{source}: saveframe {name!r} has no {loop_category} loop") from err
    tags = set(t.lower() for t in loop.tags)
    if quantity == "NOE":
        atom_tags = [
            "Entity_assembly_ID_1",
            "Comp_index_ID_1",
            "Comp_ID_1",
            "Atom_ID_1",
            "Entity_assembly_ID_2",
            "Comp_index_ID_2",
            "Comp_ID_2",
            "Atom_ID_2",
        ]
    else:
        atom_tags = ["Entity_assembly_ID", "Comp_index_ID", "Comp_ID", "Atom_ID"]
    required = [t for t in atom_tags if not t.startswith("Entity_assembly_ID")] + [value_tag]
    for tag in required:
        if tag.lower() not in tags:
            raise BackboneError(
                f"{source}: saveframe {name!r}: loop {loop_category} lacks the tag {loop_category}.{tag}"
            )
    wanted = [t for t in atom_tags + [value_tag, error_tag] if t.lower() in tags]
    rows = loop.get_tag(wanted)
    records = []
    for number, row in enumerate(rows, start=1):
        cells = dict(zip(wanted, row))
        side = ""
        if quantity == "NOE":
            side = "_1" if str(cells.get("Atom_ID_1", "")).strip() == atom else "_2"
        if str(cells.get(f"Atom_ID{side}", "")).strip() != atom:
            continue
        try:
            value = _star_value(cells[value_tag])
            error = _star_value(cells.get(error_tag))
        except ValueError as err:
            raise BackboneError(
                f"{source}: saveframe {name!r}, loop {loop_category} row {number}: {err}"
            ) from err
        if is_time:
            seconds, sigma = value * factor, error * factor
            value = 1.0 / seconds if seconds > 0 else math.nan
            error = sigma / seconds**2 if seconds > 0 else math.nan
        else:
            value, error = value * factor, error * factor
        assembly = str(cells.get(f"Entity_assembly_ID{side}", "1")).strip()
        index_text = str(cells[f"Comp_index_ID{side}"]).strip()
        index = int(index_text) if _INTEGER.match(index_text) else index_text
        records.append(
            {
                "key": (assembly, index),
                "residue_name": str(cells[f"Comp_ID{side}"]).strip(),
                "value": value,
                "error": error,
            }
        )
    values = pd.DataFrame(records, columns=["key", "residue_name", "value", "error"])
    return name, quantity, field, values


# ---------------------------------------------------------------------------------------------------------
# intensity tables (several recorded experiments)
# ---------------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class IntensityTable:
    """Validated peak intensities of several recorded experiments.

    Attributes
    ----------
    points : pandas.DataFrame
        One row per (residue, experiment) in input order: ``residue``, ``experiment`` (as written),
        ``intensity``, ``error`` (NaN without an error column), ``source`` (file), ``line`` and ``flag`` (``""``
        if usable; else ``intensity missing``, ``non-positive intensity``, ``error missing``,
        ``non-positive error``, ``listed more than once``).
    source : str
        File name(s) used in messages.
    has_errors : bool
    experiments : tuple of str
        The experiment labels in order of first appearance.
    """

    points: pd.DataFrame
    source: str = "<table>"
    has_errors: bool = False
    experiments: tuple[str, ...] = ()

    def problems(self) -> list[str]:
        """One message per flagged row."""
        flagged = self.points[self.points["flag"] != ""]
        return [
            f"{row.source} line {row.line} (residue {row.residue}, {row.experiment}): {row.flag}"
            for row in flagged.itertuples(index=False)
        ]


def read_intensities(path) -> IntensityTable:
    """Read a long table ``residue,experiment,intensity[,error]`` of peak intensities.

    ``experiment`` labels the recording (an experiment name such as ``HSQC`` or ``TROSY``; matched
    case-insensitively by the ratio fit). Text format and errors as :func:`read_decays`.
    """
    source, _, frame = _tokenize(path, _INTENSITY_COLUMNS, _INTENSITY_ALLOWED)
    return _validate_intensities(frame, source, "line")


def intensities_from_frame(frame: pd.DataFrame, *, source: str = "<table>") -> IntensityTable:
    """Validate a DataFrame with the columns of :func:`read_intensities` (names case-insensitive)."""
    table = _canonical_frame(frame, _INTENSITY_COLUMNS, _INTENSITY_ALLOWED, source, "intensities")
    return _validate_intensities(table, source, "row")


def read_peak_lists(path_a, path_b, *, experiments) -> IntensityTable:
    """Read two peak lists ``residue,intensity[,error]``, one per recorded experiment.

    Parameters
    ----------
    path_a, path_b : str or Path
        The peak lists of the first and second experiment.
    experiments : pair of str
        Their labels (e.g. ``("TROSY", "HSQC")``).

    Both lists must agree on having an error column or not.
    """
    if isinstance(experiments, str) or len(experiments) != 2:
        raise BackboneError(f"read_peak_lists: experiments must name two experiments, got {experiments!r}")
    parts = []
    for path, label in zip((path_a, path_b), experiments):
        source, columns, frame = _tokenize(path, _PEAK_LIST_COLUMNS, _PEAK_LIST_ALLOWED)
        frame["experiment"] = str(label)
        parts.append((source, "error" in columns, frame))
    if parts[0][1] != parts[1][1]:
        with_err = parts[0][0] if parts[0][1] else parts[1][0]
        raise BackboneError(
            f"{with_err} has an error column but the other peak list has not; give errors in both or in neither"
        )
    if str(experiments[0]).strip().lower() == str(experiments[1]).strip().lower():
        raise BackboneError(f"read_peak_lists: the two experiments have the same label {experiments[0]!r}")
    tables = [_validate_intensities(frame, source, "line") for source, _, frame in parts]
    return IntensityTable(
        points=pd.concat([t.points for t in tables], ignore_index=True),
        source=f"{tables[0].source}, {tables[1].source}",
        has_errors=tables[0].has_errors,
        experiments=(str(experiments[0]).strip(), str(experiments[1]).strip()),
    )


def _validate_intensities(frame: pd.DataFrame, source: str, where: str) -> IntensityTable:
    columns = set(frame.columns)
    for required in ("residue", "experiment", "intensity"):
        if required not in columns:
            raise BackboneError(f"{source}: missing column {required!r}; required: residue, experiment, intensity")
    residue = _residues(frame, source, where)
    experiment = frame["experiment"].map(
        lambda v: "" if v is None or (isinstance(v, float) and math.isnan(v)) else str(v).strip()
    )
    empty = [str(n) for n, e in zip(frame["line"], experiment) if not e]
    if empty:
        raise BackboneError(f"{source}: empty experiment label ({where} {', '.join(empty[:5])})")
    intensity = _numeric(frame, "intensity", source, where)
    has_errors = "error" in columns
    error = _numeric(frame, "error", source, where) if has_errors else np.full(len(frame), np.nan)
    points = pd.DataFrame(
        {
            "residue": residue.to_numpy(dtype=object),
            "experiment": experiment.to_numpy(dtype=object),
            "intensity": intensity,
            "error": error,
            "source": source,
            "line": frame["line"].to_numpy(dtype=int),
        }
    )
    key = pd.Series(list(zip(points["residue"].astype(str), points["experiment"].str.lower())), dtype=object)
    flags = [
        (~np.isfinite(intensity), FLAG_INTENSITY_MISSING),
        (np.isfinite(intensity) & (intensity <= 0), FLAG_NONPOSITIVE_INTENSITY),
        (key.duplicated(keep=False).to_numpy(), "listed more than once"),
    ]
    if has_errors:
        flags += [
            (~np.isfinite(error), FLAG_ERROR_MISSING),
            (np.isfinite(error) & (error <= 0), FLAG_NONPOSITIVE_ERROR),
        ]
    points["flag"] = _join_flags(*flags)
    labels = tuple(dict.fromkeys(points["experiment"]))
    return IntensityTable(points=points, source=source, has_errors=has_errors, experiments=labels)
