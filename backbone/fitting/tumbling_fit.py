"""Overall tumbling from 15N relaxation rates: per-residue closed form, screening, global τc fit and a verdict.

Four pieces, used in this order by :func:`fit_tau_c`:

1. :func:`tau_c_from_ratio` — the closed form τc = √(6 R2/R1 − 7) / (4π ν_N) for rigid isotropic tumbling
   (Kay, Torchia & Bax, Biochemistry 28, 8972, 1989), with ν_N the 15N Larmor frequency in Hz. It follows
   from the R1 and R2 expressions when the terms at the high frequencies ω_H, ω_H ± ω_N are dropped, and is
   independent of S² for fast internal motion (τe → 0), since S² then scales R1 and R2 alike. Errors are
   propagated to first order from the R1 and R2 errors. A ratio R2/R1 ≤ 7/6 has no solution.
2. :func:`screen_residues` — which residues report on overall tumbling (rule below).
3. :func:`fit_tau_c` — one τc (and optionally one common S²) fitted to R1, R2 and, where present, the NOE of
   the screened residues at one or several fields jointly, through the package's own relaxation engine
   (:func:`backbone.relaxation.relaxation_rates`, rates of the N nucleus with all the dipolar partners of the
   labeling scheme and the 15N CSA), so the closed form's approximations do not enter the result.
4. :func:`tumbling_verdict` — the fitted τc against the τc expected from the sequence (mass, temperature,
   solvent: :func:`backbone.relaxation.tumbling.estimate_tau_c`), in words and numbers.

Screening rule (as implemented; sources from memory)
----------------------------------------------------
Per row (a residue at one field), in order:

a. ``bad-data``: R1 or R2 missing, negative or zero, a non-positive error, a residue listed twice at one field
   (the reader's flags) — left out.
b. R2/R1 ≤ 7/6: the closed form has no solution; no rigid isotropic tumbling gives such a ratio at the fields
   in use (fast internal motion or a wrong rate) — left out.
c. Flexibility: with an NOE column, NOE < ``noe_min`` (0.65) marks large-amplitude internal motion on the
   ps–ns time scale and the residue is left out; so is a residue whose NOE is missing (its flexibility cannot
   be judged). The 0.65 threshold is the one of Tjandra, Feller, Pastor & Bax, J. Am. Chem. Soc. 117, 12562
   (1995) (from memory), in the spirit of Kay, Torchia & Bax (1989). Without an NOE column this step is skipped
   and the screening notes say so.
d. R2/R1 outliers: among the rows that pass a–c at the same field (at least three of them), the mean m and
   sample standard deviation s (n − 1) of R2/R1 are taken once (no iteration). A ratio above m + k·s
   (k = ``ratio_sd``, default 1, after Tjandra et al. 1995, from memory) is left out: chemical exchange (Rex)
   raises R2, and the NOE cannot reveal it. A ratio below m − k·s is left out as internal motion, **unless**
   ``noe_rigid`` is set and the row's NOE is at least that value: then the NOE shows the residue rigid, the
   low ratio points to rotational anisotropy rather than motion, and it is kept (an isotropic fit averages
   over orientations). ``noe_rigid`` is off by default. ``ratio_sd=None`` skips step d.
e. A residue left out at one field by b–d is left out at every field, so each field sees the same residues;
   ``bad-data`` rows drop only themselves.

With k = 1 a normally scattered set loses about a third of its rows to step d: that costs precision, not
accuracy. Step d uses the spread of the data themselves, so it adapts to the noise and to the anisotropy.

Statuses and the fit contract
-----------------------------
Every input row appears in ``residues`` of :meth:`TauCFit.as_dict` with a ``status`` that describes that
residue's own closed-form estimate (``tau_c_ratio_ns`` ± ``tau_c_ratio_ns_err``): ``ok``;
``poorly-determined`` (relative error above 50 %); ``failed`` (R2/R1 ≤ 7/6: no solution); ``bad-data``
(unusable rates). Whether the row entered the global fit is the separate boolean ``used``, and ``reason``
says why not (the screening step) or what was noted. Screening out is not a failure of the residue's data,
so it gets no status of its own. The rows also carry the engine's R1, R2, NOE at the fitted τc
(``R1_fit``, …) so deviations can be read off.

Weighting and errors of the global fit
--------------------------------------
With R1_err and R2_err for every used row the residuals are weighted by 1/σ and the errors taken as absolute
(τc error from (JᵀWJ)⁻¹); the NOE enters where it has an error (rows without NOE_err contribute R1 and R2
only). Otherwise every quantity is weighted by 1/|value| (equal relative errors assumed; NOE values below 0.1
in magnitude are then not fitted) and the covariance is scaled by χ²/(n − p), the noise estimated from the
scatter. The reduced χ² and its p-value are reported; a fit whose scatter exceeds the given errors
(p < 0.001) gets a note, and the verdict then uses the error scaled by √χ²_red. τc is fitted as ln τc (its
error is τc·σ(ln τc), the same to first order) within the engine's range 0.1–500 ns; S² (when free) within
[0.001, 1], with τe = 0 (fast internal motion; S² then scales R1 and R2 and leaves the NOE unchanged). With S²
fixed (default 1) a protein with S² ≈ 0.85 gives a τc a few per cent off from R1 and R2 (their ratio
dominates) and a χ² far above its degrees of freedom: free S² when the absolute rates matter.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
from scipy import stats

from backbone.constants import Constant, larmor_hz
from backbone.errors import BackboneError
from backbone.fitting.data import RateTable, field_groups, rates_from_frame, read_rates
from backbone.fitting._shared import MAX_RELATIVE_ERROR, STATUSES, json_value
from backbone.units import FIELD_MHZ, TAU_C_NS

__all__ = [
    "MODEL_ID",
    "NOE_MIN",
    "RATIO_SD",
    "EXPECTED_REL_UNCERTAINTY",
    "VERDICT_Z",
    "VERDICTS",
    "RATE_OPTIONS",
    "Screening",
    "TauCFit",
    "TumblingVerdict",
    "tau_c_from_ratio",
    "screen_residues",
    "fit_tau_c",
    "tumbling_verdict",
    "expected_estimate",
]

#: Model id of global τc fits (``model`` of the ``backbone fit --json`` output).
MODEL_ID = "tau-c"

NOE_MIN = Constant(
    "heteronuclear {1H}-15N NOE below which a residue counts as flexible",
    0.65,
    "1",
    "Tjandra, Feller, Pastor & Bax, J. Am. Chem. Soc. 117, 12562 (1995) (from memory)",
)
RATIO_SD = Constant(
    "R2/R1 deviation from the mean, in standard deviations, beyond which a residue is screened out",
    1.0,
    "1",
    "Tjandra, Feller, Pastor & Bax 1995; Kay, Torchia & Bax 1989 (from memory)",
)
EXPECTED_REL_UNCERTAINTY = Constant(
    "relative standard uncertainty of a tau_c estimated from the mass of a globular monomer",
    0.2,
    "1",
    "spread of the 0.5-0.6 ns/kDa rule of thumb plus shape and hydration differences, 20-30 % (common practice)",
)
VERDICT_Z = Constant(
    "combined standard uncertainties beyond which fitted and expected tau_c disagree",
    1.96,
    "1",
    "two-sided 95 % level of a normal distribution (common practice)",
)
#: Minimum rows at one field for the R2/R1 outlier step (a standard deviation of fewer means little).
_MIN_ROWS_FOR_SD = 3
#: Verdict categories and their plain wording.
VERDICTS = {
    "consistent": "consistent with a monomer",
    "slower": "slower than expected: oligomer or aggregation",
    "faster": "faster than expected: flexible regions or a smaller folded core",
}
#: Keyword arguments of :func:`backbone.relaxation.relaxation_rates` that ``fit_tau_c`` passes on.
RATE_OPTIONS = ("environment", "nh_distance", "n_csa", "h_csa")

_TAU_BOUNDS_NS = (TAU_C_NS.low, TAU_C_NS.high)
_S2_BOUNDS = (1e-3, 1.0)
_P_VALUE_NOTE = 1e-3
# Without errors, NOE values smaller than this in magnitude are not fitted (a relative error of ~0 is meaningless).
_NOE_RELATIVE_FLOOR = 0.1
_NOE_FLAGS = frozenset({"NOE missing", "non-positive NOE_err"})


# ---------------------------------------------------------------------------------------------------------
# closed form
# ---------------------------------------------------------------------------------------------------------
def _as_array(name, value, unit):
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError) as err:
        raise BackboneError(f"{name} must be a number or an array of numbers [{unit}], got {value!r}") from err
    return arr


def _out(x):
    return float(x) if np.ndim(x) == 0 else x


def tau_c_from_ratio(r1, r2, proton_mhz, *, r1_err=None, r2_err=None):
    """Per-residue τc from R2/R1, τc = √(6 R2/R1 − 7) / (4π ν_N) (Kay, Torchia & Bax 1989).

    Parameters
    ----------
    r1, r2 : float or array [s⁻¹]
        15N longitudinal and transverse rates.
    proton_mhz : float or array [MHz]
        Field as the 1H frequency (100–1500 MHz); ν_N = |γN| B0 / 2π.
    r1_err, r2_err : float or array [s⁻¹], optional
        Standard errors; the τc error is propagated to first order,
        σ_τ = 3 σ_ρ / (4π ν_N √(6ρ − 7)) with ρ = R2/R1 and σ_ρ = ρ √((σ1/R1)² + (σ2/R2)²).

    Returns
    -------
    (tau_c, tau_c_err) : floats or arrays [s], broadcast over the inputs
        NaN where there is no solution (R1 ≤ 0, R2 < 0 or R2/R1 ≤ 7/6, so 6ρ − 7 ≤ 0) or a NaN input; the error
        is NaN without both errors.

    Raises
    ------
    BackboneError
        Non-numeric input, a field outside 100–1500 MHz.
    """
    r1 = _as_array("r1", r1, "s^-1")
    r2 = _as_array("r2", r2, "s^-1")
    mhz = _as_array("proton_mhz", proton_mhz, "MHz")
    FIELD_MHZ.check(mhz, where="tau_c_from_ratio")
    nu_n = np.abs(larmor_hz("15N", proton_mhz=mhz))
    with np.errstate(divide="ignore", invalid="ignore"):
        rho = np.where((r1 > 0) & (r2 >= 0), r2 / np.where(r1 > 0, r1, 1.0), np.nan)
        arg = 6.0 * rho - 7.0
        root = np.sqrt(np.where(arg > 0, arg, np.nan))
        tau = root / (4.0 * np.pi * nu_n)
        if r1_err is None or r2_err is None:
            err = np.full(np.shape(tau), np.nan)
        else:
            e1 = _as_array("r1_err", r1_err, "s^-1")
            e2 = _as_array("r2_err", r2_err, "s^-1")
            sigma_rho = rho * np.sqrt((e1 / r1) ** 2 + (e2 / r2) ** 2)
            err = 3.0 * sigma_rho / (4.0 * np.pi * nu_n * root)
    return _out(tau), _out(np.broadcast_to(err, np.shape(tau)).copy())


# ---------------------------------------------------------------------------------------------------------
# input tables
# ---------------------------------------------------------------------------------------------------------
_QUANTITIES = ("R1", "R2", "NOE")


@dataclass(frozen=True)
class _Rows:
    """Every input row at its field: residue, field_mhz, R1, R2, NOE, *_err (NaN if absent), line, source,
    flag; plus the fields whose table has an NOE column and the sources, in input order."""

    frame: pd.DataFrame
    noe_fields: frozenset
    sources: tuple[str, ...]
    problems: tuple[str, ...]


def _check_field(value, where):
    try:
        f = float(value)
    except (TypeError, ValueError) as err:
        raise BackboneError(f"{where}: the field must be a number of MHz (1H frequency), got {value!r}") from err
    FIELD_MHZ.check(f, where=where)
    return f


def _parts(table, proton_mhz):
    """(RateTable, field) pairs of the input."""
    if isinstance(table, (str, Path)):
        table = read_rates(table)
    if isinstance(table, RateTable):
        if "field_mhz" in table.table.columns:
            return _split_by_field(table, proton_mhz)
        return [(table, _field_of(table, proton_mhz))]
    if isinstance(table, pd.DataFrame):
        return _frame_parts(table, proton_mhz)
    if isinstance(table, Sequence) and table and all(isinstance(t, RateTable) for t in table):
        if proton_mhz is None or np.ndim(proton_mhz) == 0:
            fields = [proton_mhz] * len(table)
        else:
            fields = list(proton_mhz)
            if len(fields) != len(table):
                raise BackboneError(
                    f"proton_mhz: {len(fields)} fields for {len(table)} rate tables; give one per table"
                )
        return [(t, _field_of(t, f)) for t, f in zip(table, fields)]
    if isinstance(table, Sequence) and not table:
        raise BackboneError("no rate tables given (an empty list)")
    raise BackboneError(
        "expected a RateTable, a pandas DataFrame, a file path or a list of RateTables (one per field), "
        f"got {type(table).__name__}"
    )


def _split_by_field(rates: RateTable, proton_mhz):
    """(RateTable, field) pairs of a table with a ``field_mhz`` column (rows without a field are dropped and
    reported by the reader's flag)."""
    if proton_mhz is not None:
        raise BackboneError(f"{rates.source}: give the field once: a 'field_mhz' column or proton_mhz, not both")
    frame = rates.table
    fields = frame["field_mhz"].to_numpy(dtype=float)
    finite = np.isfinite(fields)
    if not finite.any():
        raise BackboneError(f"{rates.source}: the 'field_mhz' column has no value")
    if not finite.all():
        lines = ", ".join(str(n) for n in frame["line"].to_numpy()[~finite][:5])
        raise BackboneError(f"{rates.source}: 'field_mhz' is missing (line {lines})")
    groups = field_groups(fields)
    parts = []
    for g in range(int(groups.max()) + 1):
        mask = groups == g
        f = float(np.mean(fields[mask]))
        sub = frame[mask].drop(columns=["field_mhz"]).reset_index(drop=True)
        source = rates.source if groups.max() == 0 else f"{rates.source} at {f:g} MHz"
        parts.append((RateTable(table=sub, source=source, field_mhz=f), _check_field(f, source)))
    return parts


def _field_of(rates: RateTable, proton_mhz):
    where = f"{rates.source}"
    if proton_mhz is None:
        if rates.field_mhz is None:
            raise BackboneError(
                f"{where}: the field of these rates is not known; give proton_mhz (1H frequency in MHz)"
            )
        return _check_field(rates.field_mhz, where)
    f = _check_field(proton_mhz, where)
    if rates.field_mhz is not None and abs(rates.field_mhz - f) > 1.0:
        raise BackboneError(
            f"{where}: proton_mhz = {f:g} MHz but the rates were measured at {rates.field_mhz:g} MHz"
        )
    return f


def _frame_parts(frame: pd.DataFrame, proton_mhz):
    source = "<table>"
    if frame.empty:
        raise BackboneError(f"{source}: no data rows")
    field_cols = [c for c in frame.columns if str(c).strip().lower() == "field_mhz"]
    if not field_cols:
        if proton_mhz is None:
            raise BackboneError(
                f"{source}: the field of these rates is not known; give proton_mhz or a 'field_mhz' column"
            )
        if np.ndim(proton_mhz) != 0:
            raise BackboneError("proton_mhz: give one value, or a 'field_mhz' column for several fields")
        f = _check_field(proton_mhz, source)
        return [(rates_from_frame(frame, source=source, field_mhz=f), f)]
    if proton_mhz is not None:
        raise BackboneError(f"{source}: give the field once: a 'field_mhz' column or proton_mhz, not both")
    if len(field_cols) > 1:
        raise BackboneError(f"{source}: column 'field_mhz' appears twice")
    column = field_cols[0]
    values = pd.to_numeric(frame[column], errors="coerce").to_numpy(dtype=float)
    bad = np.flatnonzero(~np.isfinite(values))
    if bad.size:
        rows = ", ".join(str(i + 1) for i in bad[:5])
        raise BackboneError(f"{source}: 'field_mhz' is missing or not a number (row {rows})")
    FIELD_MHZ.check(values, where=f"{source} column 'field_mhz'")
    body = frame.drop(columns=[column]).reset_index(drop=True)
    body["line"] = np.arange(1, len(body) + 1)
    # Values within 1 MHz of the lowest of a group are one field (data.field_groups); the group's mean is used.
    row_group = field_groups(values)
    parts = []
    for g in range(int(row_group.max()) + 1):
        mask = row_group == g
        f = float(np.mean(values[mask]))
        sub = body[mask].reset_index(drop=True)
        parts.append((rates_from_frame(sub, source=f"{source} at {f:g} MHz", field_mhz=f), f))
    return parts


def _collect(table, proton_mhz) -> _Rows:
    parts = _parts(table, proton_mhz)
    frames = []
    noe_fields = set()
    problems = []
    for rates, f in parts:
        t = rates.table
        n = len(t)
        columns = {"residue": t["residue"].to_numpy(dtype=object), "field_mhz": np.full(n, f)}
        for q in _QUANTITIES:
            columns[q] = t[q].to_numpy(dtype=float) if q in t.columns else np.full(n, np.nan)
            err = f"{q}_err"
            columns[err] = t[err].to_numpy(dtype=float) if err in t.columns else np.full(n, np.nan)
        if "NOE" in t.columns:
            noe_fields.add(f)
        columns["line"] = t["line"].to_numpy(dtype=int)
        columns["source"] = np.full(n, rates.source, dtype=object)
        columns["flag"] = t["flag"].to_numpy(dtype=object)
        frames.append(pd.DataFrame(columns))
        problems.extend(rates.problems())
    frame = pd.concat(frames, ignore_index=True)
    # Several tables at one field: a residue in two of them is as ambiguous as a residue listed twice in one.
    keys = pd.Series(list(zip(frame["residue"].astype(str), frame["field_mhz"])), dtype=object)
    twice = keys.duplicated(keep=False).to_numpy()
    flags = frame["flag"].to_numpy(dtype=object).copy()
    for i in np.flatnonzero(twice):
        if "residue listed more than once" not in flags[i]:
            note = "residue listed more than once at this field"
            flags[i] = note if not flags[i] else f"{flags[i]}; {note}"
    frame["flag"] = flags
    return _Rows(
        frame=frame,
        noe_fields=frozenset(noe_fields),
        sources=tuple(dict.fromkeys(r.source for r, _ in parts)),
        problems=tuple(problems),
    )


# ---------------------------------------------------------------------------------------------------------
# screening
# ---------------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Screening:
    """Which rows report on overall tumbling, and why the others do not.

    Attributes
    ----------
    table : pandas.DataFrame
        One row per input row: ``residue``, ``field_mhz``, ``R1``, ``R2``, ``NOE`` (NaN if absent), their
        ``_err`` columns, ``ratio`` (R2/R1), ``tau_c_ratio_ns`` and ``tau_c_ratio_ns_err`` (closed form),
        ``status`` (module docstring), ``used`` (bool), ``reason``, ``line``, ``source``.
    rule : str
        The rule applied, in words with the thresholds.
    per_field : dict
        Per field [MHz]: ``n_rows``, ``n_core`` (rows passing steps a–c), ``mean_ratio``, ``sd_ratio`` (NaN
        when step d did not run), ``mean_noe``.
    notes : tuple of str
        Steps skipped and why.
    problems : tuple of str
        The reader's messages for flagged rows; ``sources`` the input names.
    noe_min, ratio_sd, noe_rigid
        The thresholds applied.
    """

    table: pd.DataFrame
    rule: str
    per_field: dict
    notes: tuple[str, ...] = ()
    problems: tuple[str, ...] = ()
    sources: tuple[str, ...] = ()
    noe_min: float = NOE_MIN.value
    ratio_sd: float | None = RATIO_SD.value
    noe_rigid: float | None = None

    @property
    def used(self) -> np.ndarray:
        """Boolean mask of the rows used."""
        return self.table["used"].to_numpy(dtype=bool)

    @property
    def n_used(self) -> int:
        """Number of distinct residues used (at any field)."""
        return int(self.table.loc[self.used, "residue"].astype(str).nunique())

    def excluded_counts(self) -> dict:
        """Rows left out, by screening step."""
        steps = self.table.loc[~self.used, "step"]
        return {str(k): int(v) for k, v in steps.value_counts().items()}

    def as_dict(self) -> dict:
        """JSON-ready summary (the rows themselves are in the fit's ``residues``)."""
        return json_value(
            {
                "rule": self.rule,
                "noe_min": self.noe_min,
                "ratio_sd": self.ratio_sd,
                "noe_rigid": self.noe_rigid,
                "n_rows": int(len(self.table)),
                "n_rows_used": int(self.used.sum()),
                "n_residues_used": self.n_used,
                "excluded": self.excluded_counts(),
                "per_field": {f"{k:g}": v for k, v in self.per_field.items()},
                "notes": list(self.notes),
            }
        )


def _check_threshold(name, value, *, low, high, allow_none=False):
    if value is None and allow_none:
        return None
    if isinstance(value, bool):
        raise BackboneError(f"{name} must be a number, got {value!r}")
    try:
        x = float(value)
    except (TypeError, ValueError) as err:
        raise BackboneError(f"{name} must be a number, got {value!r}") from err
    if not (math.isfinite(x) and low <= x <= high):
        raise BackboneError(f"{name} = {value!r} is outside the allowed range [{low:g}, {high:g}]")
    return x


def _rule_text(noe_min, ratio_sd, noe_rigid):
    parts = [
        "bad-data rows out",
        "R2/R1 <= 7/6 out (no rigid-tumbling solution)",
        f"NOE < {noe_min:g} or missing out (flexible)",
    ]
    if ratio_sd is None:
        parts.append("no R2/R1 outlier step")
    else:
        low = f"below mean - {ratio_sd:g} SD out"
        if noe_rigid is not None:
            low += f" unless NOE >= {noe_rigid:g}"
        parts.append(
            f"per field, R2/R1 above mean + {ratio_sd:g} SD out (exchange), {low} "
            f"(motion), mean and SD over the rows passing the steps before (at least {_MIN_ROWS_FOR_SD})"
        )
    parts.append("a residue left out at one field is left out at every field")
    return "; ".join(parts)


def screen_residues(table, *, proton_mhz=None, noe_min=NOE_MIN.value, ratio_sd=RATIO_SD.value, noe_rigid=None):
    """Screen rate rows for the estimate of overall tumbling (rule in the module docstring).

    Parameters
    ----------
    table : RateTable, pandas.DataFrame, path, or list of RateTables
        Rates ``residue,R1,R2[,NOE][,R1_err,R2_err,NOE_err]`` in s⁻¹. A DataFrame may carry a ``field_mhz``
        column (several fields in one table); a list holds one RateTable per field.
    proton_mhz : float or list of float [MHz], optional
        Field of the rates when the input does not say (one per table for a list).
    noe_min : float
        NOE below which a residue is flexible, in [-5, 1] (default 0.65).
    ratio_sd : float or None
        Outlier threshold k in standard deviations of R2/R1, in (0, 10]; None skips the outlier step.
    noe_rigid : float or None
        NOE at or above which a low-R2/R1 outlier is kept as rigid (off by default).

    Returns
    -------
    Screening

    Raises
    ------
    BackboneError
        Unreadable or empty input, unknown columns, a field that is not known or out of range, thresholds out
        of range.
    """
    noe_min = _check_threshold("noe_min", noe_min, low=-5.0, high=1.0)
    ratio_sd = _check_threshold("ratio_sd", ratio_sd, low=1e-3, high=10.0, allow_none=True)
    noe_rigid = _check_threshold("noe_rigid", noe_rigid, low=-5.0, high=1.0, allow_none=True)
    rows = _collect(table, proton_mhz)
    return _screen(rows, noe_min, ratio_sd, noe_rigid)


def _screen(rows: _Rows, noe_min, ratio_sd, noe_rigid) -> Screening:
    frame = rows.frame
    n = len(frame)
    r1 = frame["R1"].to_numpy(dtype=float)
    r2 = frame["R2"].to_numpy(dtype=float)
    noe = frame["NOE"].to_numpy(dtype=float)
    fields = frame["field_mhz"].to_numpy(dtype=float)
    flags = frame["flag"].to_numpy(dtype=object)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(r1 > 0, r2 / np.where(r1 > 0, r1, 1.0), np.nan)
    have_err = np.isfinite(frame["R1_err"].to_numpy(dtype=float)) & np.isfinite(frame["R2_err"].to_numpy(dtype=float))
    tau, tau_err = tau_c_from_ratio(
        r1, r2, fields, r1_err=frame["R1_err"].to_numpy(dtype=float), r2_err=frame["R2_err"].to_numpy(dtype=float)
    )
    tau = np.atleast_1d(tau)
    tau_err = np.where(have_err, np.atleast_1d(tau_err), np.nan)

    status = np.array(["ok"] * n, dtype=object)
    used = np.ones(n, dtype=bool)
    step = np.array([""] * n, dtype=object)
    reasons: list[list[str]] = [[] for _ in range(n)]

    # a. unusable rates
    for i in range(n):
        rate_flags = [f for f in (flags[i].split("; ") if flags[i] else []) if f not in _NOE_FLAGS]
        if not (np.isfinite(r1[i]) and r1[i] > 0) and not rate_flags:
            rate_flags.append("R1 is zero" if r1[i] == 0 else "R1 is not usable")
        if rate_flags:
            status[i], used[i], step[i] = "bad-data", False, "bad-data"
            reasons[i].append("; ".join(rate_flags))
    # b. no closed-form solution
    for i in np.flatnonzero(used & ~np.isfinite(tau)):
        status[i], used[i], step[i] = "failed", False, "no-solution"
        reasons[i].append(
            f"R2/R1 = {ratio[i]:.4g} <= 7/6: the closed form has no solution (no rigid isotropic tumbling gives "
            "it: fast internal motion or a wrong rate)"
        )
    # Closed-form quality of the others.
    for i in np.flatnonzero(status == "ok"):
        if np.isfinite(tau_err[i]) and tau_err[i] > MAX_RELATIVE_ERROR * tau[i]:
            status[i] = "poorly-determined"
            reasons[i].append(
                f"closed-form tau_c relative error {100 * tau_err[i] / tau[i]:.0f}% "
                f"(> {100 * MAX_RELATIVE_ERROR:.0f}%)"
            )
    # c. flexibility from the NOE
    notes = []
    for f in sorted(set(fields.tolist())):
        if f not in rows.noe_fields:
            notes.append(f"no NOE at {f:g} MHz: flexibility not screened there")
    for i in np.flatnonzero(used):
        if fields[i] not in rows.noe_fields:
            continue
        if not np.isfinite(noe[i]):
            used[i], step[i] = False, "no-noe"
            reasons[i].append("no NOE value: its flexibility cannot be judged")
        elif noe[i] < noe_min:
            used[i], step[i] = False, "flexible"
            reasons[i].append(f"flexible: NOE {noe[i]:.3g} < {noe_min:g}")
    # d. R2/R1 outliers per field
    per_field = {}
    outlier = np.zeros(n, dtype=bool)
    for f in sorted(set(fields.tolist())):
        at = fields == f
        core = at & used
        info = {
            "n_rows": int(at.sum()),
            "n_core": int(core.sum()),
            "mean_ratio": float(np.mean(ratio[core])) if core.any() else math.nan,
            "sd_ratio": math.nan,
            "mean_noe": float(np.nanmean(noe[core])) if core.any() and np.isfinite(noe[core]).any() else math.nan,
        }
        if ratio_sd is not None:
            if core.sum() < _MIN_ROWS_FOR_SD:
                notes.append(
                    f"R2/R1 outlier step skipped at {f:g} MHz: {int(core.sum())} rows pass the earlier steps "
                    f"(needs {_MIN_ROWS_FOR_SD})"
                )
            else:
                m = float(np.mean(ratio[core]))
                s = float(np.std(ratio[core], ddof=1))
                info["sd_ratio"] = s
                hi, lo = m + ratio_sd * s, m - ratio_sd * s
                for i in np.flatnonzero(core):
                    if ratio[i] > hi:
                        outlier[i], step[i] = True, "ratio-high"
                        reasons[i].append(
                            f"R2/R1 = {ratio[i]:.4g} above mean + {ratio_sd:g} SD ({hi:.4g}) at {f:g} MHz: "
                            "chemical exchange (Rex) suspected"
                        )
                    elif ratio[i] < lo:
                        if noe_rigid is not None and np.isfinite(noe[i]) and noe[i] >= noe_rigid:
                            reasons[i].append(
                                f"R2/R1 = {ratio[i]:.4g} below mean - {ratio_sd:g} SD ({lo:.4g}) at {f:g} MHz "
                                f"but NOE {noe[i]:.3g} >= {noe_rigid:g}: kept as rigid (anisotropy)"
                            )
                        else:
                            outlier[i], step[i] = True, "ratio-low"
                            reasons[i].append(
                                f"R2/R1 = {ratio[i]:.4g} below mean - {ratio_sd:g} SD ({lo:.4g}) at {f:g} MHz: "
                                "internal motion suspected"
                            )
        per_field[f] = info
    used &= ~outlier
    # e. a residue screened out at one field is screened out at every field
    keys = frame["residue"].astype(str).to_numpy()
    screened = (step != "") & (step != "bad-data")
    out_keys = {}
    for i in np.flatnonzero(screened):
        out_keys.setdefault(keys[i], f"{fields[i]:g} MHz")
    for i in np.flatnonzero(used):
        if keys[i] in out_keys:
            used[i], step[i] = False, "other-field"
            reasons[i].append(f"screened out at {out_keys[keys[i]]}")

    frame = frame.assign(
        ratio=ratio,
        tau_c_ratio_ns=tau * 1e9,
        tau_c_ratio_ns_err=tau_err * 1e9,
        status=status,
        used=used,
        step=step,
        reason=["; ".join(r) for r in reasons],
    )
    return Screening(
        table=frame,
        rule=_rule_text(noe_min, ratio_sd, noe_rigid),
        per_field=per_field,
        notes=tuple(notes),
        problems=rows.problems,
        sources=rows.sources,
        noe_min=noe_min,
        ratio_sd=ratio_sd,
        noe_rigid=noe_rigid,
    )


# ---------------------------------------------------------------------------------------------------------
# verdict
# ---------------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class TumblingVerdict:
    """Fitted against expected τc, judged in ln τc against the combined uncertainty.

    Attributes
    ----------
    category : str
        ``consistent``, ``slower`` or ``faster`` (keys of :data:`VERDICTS`).
    verdict : str
        The plain wording of :data:`VERDICTS`.
    message : str
        One sentence with the numbers.
    ratio : float
        Fitted / expected τc.
    sigma_ln : float
        Combined standard uncertainty of ln(ratio): √((σ_fit/τ_fit)² + u²), u the estimate's relative
        uncertainty.
    z : float
        ln(ratio) / sigma_ln.
    n_mer : float or None
        For ``slower``: the ratio, read as the number of monomers (τc scales with volume, so with mass).
    tau_c_ns, tau_c_err_ns, expected_tau_c_ns, expected_rel_uncertainty : float
    """

    category: str
    verdict: str
    message: str
    ratio: float
    sigma_ln: float
    z: float
    n_mer: float | None
    tau_c_ns: float
    tau_c_err_ns: float
    expected_tau_c_ns: float
    expected_rel_uncertainty: float

    def as_dict(self) -> dict:
        """Plain-data record."""
        return json_value(dict(self.__dict__))


def tumbling_verdict(
    tau_c_fit, tau_c_err, expected_tau_c, *, expected_rel_uncertainty=EXPECTED_REL_UNCERTAINTY.value
) -> TumblingVerdict:
    """Does the protein tumble as its size predicts?

    The disagreement is judged on ln(τ_fit/τ_expected) against the combined standard uncertainty
    σ = √((σ_fit/τ_fit)² + u²), u = ``expected_rel_uncertainty`` (default 0.2: the 0.5–0.6 ns/kDa rule of
    thumb and differences of shape and hydration, common practice): beyond :data:`VERDICT_Z` (1.96, two-sided
    95 %) σ the protein tumbles slower (oligomer or aggregation; τc scales with volume, so the ratio estimates the
    number of monomers) or faster (flexible regions, or a folded core smaller than the whole chain) than
    expected; otherwise it is consistent with a monomer. A log scale treats a factor of two up or down alike.

    Parameters
    ----------
    tau_c_fit : float [s]
        Fitted τc (> 0).
    tau_c_err : float [s]
        Its standard error (≥ 0).
    expected_tau_c : float [s]
        τc expected from the sequence (:func:`backbone.relaxation.tumbling.estimate_tau_c`), > 0.
    expected_rel_uncertainty : float
        Relative standard uncertainty of the expected value, in (0, 1].

    Returns
    -------
    TumblingVerdict

    Raises
    ------
    BackboneError
        A non-finite or non-positive τc, a negative or non-finite error, an uncertainty outside (0, 1].
    """
    tau = _check_threshold("tau_c_fit", tau_c_fit, low=0.0, high=math.inf)
    err = _check_threshold("tau_c_err", tau_c_err, low=0.0, high=math.inf)
    expected = _check_threshold("expected_tau_c", expected_tau_c, low=0.0, high=math.inf)
    u = _check_threshold("expected_rel_uncertainty", expected_rel_uncertainty, low=0.0, high=1.0)
    for name, value in (("tau_c_fit", tau), ("expected_tau_c", expected), ("expected_rel_uncertainty", u)):
        if value == 0.0:
            raise BackboneError(f"{name} must be positive, got 0")
    ratio = tau / expected
    sigma = math.sqrt((err / tau) ** 2 + u**2)
    z = math.log(ratio) / sigma
    numbers = (
        f"tau_c {tau * 1e9:.2f} +/- {err * 1e9:.2f} ns against {expected * 1e9:.2f} ns expected from the sequence "
        f"(+/- {100 * u:.0f}% model uncertainty): ratio {ratio:.2f}, {abs(z):.1f} combined standard "
        f"uncertainties {'above' if z > 0 else 'below'} (threshold {VERDICT_Z.value:g})"
    )
    n_mer = None
    if z > VERDICT_Z.value:
        category = "slower"
        n_mer = ratio
        detail = f"n-mer estimate ~{ratio:.1f}, since tau_c scales with volume"
    elif z < -VERDICT_Z.value:
        category = "faster"
        detail = f"the part that tumbles as one body is ~{ratio:.2f} of the chain by volume"
    else:
        category = "consistent"
        detail = "no sign of oligomers, aggregation or large flexible regions"
    message = f"{VERDICTS[category]} ({detail}); {numbers}"
    return TumblingVerdict(
        category=category,
        verdict=VERDICTS[category],
        message=message,
        ratio=ratio,
        sigma_ln=sigma,
        z=z,
        n_mer=n_mer,
        tau_c_ns=tau * 1e9,
        tau_c_err_ns=err * 1e9,
        expected_tau_c_ns=expected * 1e9,
        expected_rel_uncertainty=u,
    )


# ---------------------------------------------------------------------------------------------------------
# global fit
# ---------------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class TauCFit:
    """Result of :func:`fit_tau_c`.

    Attributes
    ----------
    tau_c, tau_c_err : float [s]
        Fitted τc and its standard error (covariance; see the module docstring for the weighting).
    s2, s2_err : float
        Common order parameter (fixed value and NaN error unless fitted).
    s2_free : bool
    chi2, reduced_chi2, p_value : float
        Weighted χ², χ²/(n − p) and, for absolute errors, P(χ² ≥ observed) (NaN otherwise).
    n_used : int
        Residues used; ``n_rates`` the rates fitted.
    fields_mhz : tuple of float
    table : pandas.DataFrame
        One row per input row (:class:`Screening` columns plus ``R1_fit``, ``R2_fit``, ``NOE_fit``).
    screening : Screening
    expected : TumblingEstimate or None
    verdict : TumblingVerdict or None
    global_info : dict
        The ``global`` object of the JSON output.
    """

    tau_c: float
    tau_c_err: float
    s2: float
    s2_err: float
    s2_free: bool
    chi2: float
    reduced_chi2: float
    p_value: float
    n_used: int
    n_rates: int
    fields_mhz: tuple
    table: pd.DataFrame
    screening: Screening
    expected: object = None
    verdict: TumblingVerdict | None = None
    global_info: dict = field(default_factory=dict)
    problems: tuple[str, ...] = ()

    #: Columns of each ``residues`` entry of the JSON output, in order.
    ROW_KEYS = (
        "residue",
        "field_mhz",
        "status",
        "used",
        "reason",
        "R1",
        "R1_err",
        "R2",
        "R2_err",
        "NOE",
        "NOE_err",
        "ratio",
        "tau_c_ratio_ns",
        "tau_c_ratio_ns_err",
        "R1_fit",
        "R2_fit",
        "NOE_fit",
        "line",
        "source",
    )

    def as_dict(self) -> dict:
        """JSON-ready ``{"model": "tau-c", "residues": [...], "global": {...}}`` (NaN written as ``None``)."""
        keys = [k for k in self.ROW_KEYS if k in self.table.columns]
        residues = [
            {k: json_value(v) for k, v in row.items()} for row in self.table[keys].to_dict(orient="records")
        ]
        return {"model": MODEL_ID, "residues": residues, "global": json_value(self.global_info)}


def _labeling(labeling):
    if isinstance(labeling, (str, Path)):
        from backbone.labeling import load_scheme

        return load_scheme(labeling)
    return labeling


def _rate_options(options):
    if options is None:
        return {}
    if not isinstance(options, Mapping):
        raise BackboneError(f"rate_options: expected a mapping, got {type(options).__name__}")
    unknown = [k for k in options if k not in RATE_OPTIONS]
    if unknown:
        raise BackboneError(f"rate_options: unknown option {unknown[0]!r}; allowed: {', '.join(RATE_OPTIONS)}")
    return dict(options)


class _Model:
    """Engine predictions of the fitted rates for many parameter vectors at once (one engine call)."""

    def __init__(self, fields, field_index, kinds, labeling, s2_fixed, s2_free, options):
        from backbone.relaxation import relaxation_rates

        self._rates = relaxation_rates
        self.fields = np.asarray(fields, dtype=float)
        self.field_index = field_index
        self.kinds = kinds  # 0: R1, 1: R2, 2: NOE per data point
        self.labeling = labeling
        self.s2_fixed = s2_fixed
        self.s2_free = s2_free
        self.options = options

    def rates(self, tau_c_s, s2):
        """(R1, R2, NOE) arrays of shape (K, n_fields) for τc [s] and S² arrays of shape (K,)."""
        rs = self._rates(
            np.asarray(tau_c_s)[:, None],
            proton_mhz=self.fields[None, :],
            labeling=self.labeling,
            s2=np.asarray(s2)[:, None],
            **self.options,
        )
        n = rs["N"]
        return np.stack([n["R1"], n["R2"], n["NOE"]])  # (3, K, F)

    def params(self, x):
        x = np.atleast_2d(x)
        tau = np.exp(np.clip(x[:, 0], *np.log(_TAU_BOUNDS_NS))) * 1e-9
        s2 = np.clip(x[:, 1], *_S2_BOUNDS) if self.s2_free else np.full(x.shape[0], self.s2_fixed)
        return tau, s2

    def evaluate(self, x):
        """Engine rates (3, K, n_fields) and predicted data (K, n_data) for parameter vectors x (K, p):
        x = (ln(τc / 1 ns)[, S²])."""
        tau, s2 = self.params(x)
        table = self.rates(tau, s2)
        return table, table[self.kinds, :, self.field_index].T


@dataclass(frozen=True)
class _Solution:
    x: np.ndarray
    chi2: float
    jacobian: np.ndarray  # d(weighted model)/dx at x, (n_data, p), central differences
    rates: np.ndarray  # engine (R1, R2, NOE) at x per field, (3, n_fields)
    converged: bool
    n_iter: int


def _least_squares(model, values, weights, x0, lo, hi, *, step=1e-5, max_iter=60):
    """Levenberg–Marquardt for the one or two global parameters, bounds by projection.

    Each iteration is one vectorized engine call at x and at x ± step·e_j (central differences for the
    Jacobian, accurate to about step² ≈ 1e-10), which keeps the number of engine calls to a handful.
    Converged when the undamped (Gauss–Newton) step still to go is below 1e-6 of every parameter's standard
    error (from (JᵀJ)⁻¹, times √χ²_red when that exceeds 1), or zero after projection onto the bounds; a
    damping that grows past 1e12 without an accepted step stops it unconverged.
    """
    p = x0.size
    offsets = np.vstack([np.zeros(p), step * np.eye(p), -step * np.eye(p)])
    dof = max(values.size - p, 1)

    def state(x):
        table, pred = model.evaluate(x[None] + offsets)
        r = weights * (values - pred[0])
        jac = weights[:, None] * (pred[1 : p + 1] - pred[p + 1 :]).T / (2.0 * step)
        return r, jac, table[:, 0, :]

    x = np.asarray(x0, dtype=float)
    r, jac, rates = state(x)
    chi2 = float(r @ r)
    lam = 0.0
    converged = False
    n_iter = 0
    for n_iter in range(1, max_iter + 1):
        a = jac.T @ jac
        g = jac.T @ r
        d = np.diag(np.where(np.diag(a) > 0, np.diag(a), 1.0))
        delta = np.linalg.lstsq(a + lam * d, g, rcond=None)[0]
        x_new = np.clip(x + delta, lo, hi)
        moved = np.abs(x_new - x)
        # Done when the step left is below 1e-6 of each parameter's standard error, or is zero (pushed against
        # a bound): further steps change nothing a result could show.
        with np.errstate(divide="ignore", invalid="ignore"):
            sigma = np.sqrt(np.abs(np.diag(np.linalg.pinv(a))) * max(1.0, chi2 / dof))
        if lam == 0.0 and np.all(moved <= 1e-6 * sigma):
            converged = True
            break
        r_new, jac_new, rates_new = state(x_new)
        chi2_new = float(r_new @ r_new)
        if np.isfinite(chi2_new) and chi2_new <= chi2:
            x, r, jac, rates, chi2 = x_new, r_new, jac_new, rates_new, chi2_new
            lam = 0.0 if lam <= 1e-6 else lam * 0.1
        else:
            lam = 1e-3 if lam == 0.0 else lam * 10.0
            if lam > 1e12:
                break
    return _Solution(x=x, chi2=chi2, jacobian=jac, rates=rates, converged=converged, n_iter=n_iter)


def expected_estimate(expected_tau_c=None, sequence=None, mass_da=None, temperature_k=None, solvent="H2O"):
    """The expected τc as a TumblingEstimate, from one of: a given value [s] (or estimate), a sequence, a mass.

    ``sequence`` (one-letter or FASTA) or ``mass_da`` [Da] need ``temperature_k`` [K] and ``solvent``
    (:func:`backbone.relaxation.tumbling.estimate_tau_c`). Returns None when none of the three is given.

    Raises
    ------
    BackboneError
        More than one of the three given, or a sequence/mass without a temperature.
    """
    candidates = (("expected_tau_c", expected_tau_c), ("sequence", sequence), ("mass_da", mass_da))
    given = [name for name, value in candidates if value is not None]
    if not given:
        return None
    if len(given) > 1:
        raise BackboneError(f"give the expected tau_c one way only; got {' and '.join(given)}")
    from backbone.relaxation import tumbling

    if expected_tau_c is not None:
        if hasattr(expected_tau_c, "tau_c_s"):
            value = expected_tau_c.tau_c_s
            if np.ndim(value) != 0:
                raise BackboneError("expected_tau_c: the estimate must hold one tau_c, not an array")
            return expected_tau_c
        return tumbling.given_tau_c(expected_tau_c, temperature_k=temperature_k, solvent=solvent)
    if temperature_k is None:
        raise BackboneError(
            "temperature_k is needed to estimate the expected tau_c from the "
            f"{'sequence' if sequence is not None else 'mass'} (viscosity and kT depend on it)"
        )
    if sequence is not None:
        from backbone.graph import residue_mass_da

        mass_da = residue_mass_da(sequence)
    return tumbling.estimate_tau_c(float(mass_da), float(temperature_k), solvent=solvent)


def fit_tau_c(
    table,
    *,
    proton_mhz=None,
    labeling="15n",
    s2_free: bool = False,
    s2: float = 1.0,
    use_noe: bool = True,
    noe_min: float = NOE_MIN.value,
    ratio_sd: float | None = RATIO_SD.value,
    noe_rigid: float | None = None,
    expected_tau_c=None,
    sequence: str | None = None,
    mass_da: float | None = None,
    temperature_k: float | None = None,
    solvent: str = "H2O",
    expected_rel_uncertainty: float = EXPECTED_REL_UNCERTAINTY.value,
    rate_options: Mapping | None = None,
) -> TauCFit:
    """Global fit of one τc (and optionally one S²) to the screened residues' 15N R1, R2 and NOE.

    Parameters
    ----------
    table : RateTable, pandas.DataFrame, path, or list of RateTables
        Rates ``residue,R1,R2[,NOE][,R1_err,R2_err,NOE_err]`` [s⁻¹]; a DataFrame may hold a ``field_mhz``
        column for several fields jointly, a list one RateTable per field.
    proton_mhz : float or list of float [MHz], optional
        Field of the rates when the input does not say it.
    labeling : str or labeling scheme
        Scheme id (``"15n"``, ``"2h13c15n"``, …), a scheme file, or a scheme object; sets the dipolar partners.
    s2_free : bool
        Fit a common S² (τe = 0) as well; otherwise S² is fixed at ``s2``.
    s2 : float
        Fixed S² (or, with ``s2_free``, ignored: the start comes from the data), in (0, 1].
    use_noe : bool
        Fit the NOE where the table has it (it always enters the screening).
    noe_min, ratio_sd, noe_rigid
        Screening (:func:`screen_residues`).
    expected_tau_c : float [s] or TumblingEstimate, optional
        Expected τc for the verdict, or give ``sequence`` (one-letter or FASTA) or ``mass_da`` [Da] with
        ``temperature_k`` [K] and ``solvent`` (``H2O``/``D2O``) to estimate it
        (:func:`backbone.relaxation.tumbling.estimate_tau_c`).
    expected_rel_uncertainty : float
        Relative uncertainty of the expected τc (:func:`tumbling_verdict`).
    rate_options : mapping, optional
        Passed to :func:`backbone.relaxation.relaxation_rates`: ``environment``, ``nh_distance``, ``n_csa``,
        ``h_csa``.

    Returns
    -------
    TauCFit

    Raises
    ------
    BackboneError
        Unreadable, empty or ambiguous input (unknown columns, unknown field), no residue left after screening,
        fewer rates than parameters + 1, options out of range, an expected τc given two ways or without a
        temperature.
    """
    if not isinstance(s2_free, (bool, np.bool_)):
        raise BackboneError(f"s2_free must be True or False, got {s2_free!r}")
    s2_value = _check_threshold("s2", s2, low=_S2_BOUNDS[0], high=1.0)
    u = _check_threshold("expected_rel_uncertainty", expected_rel_uncertainty, low=1e-6, high=1.0)
    options = _rate_options(rate_options)
    scheme = _labeling(labeling)
    expected = expected_estimate(expected_tau_c, sequence, mass_da, temperature_k, solvent)
    screening = screen_residues(table, proton_mhz=proton_mhz, noe_min=noe_min, ratio_sd=ratio_sd, noe_rigid=noe_rigid)
    frame = screening.table.copy()
    used = frame["used"].to_numpy(dtype=bool)
    if not used.any():
        counts = screening.excluded_counts()
        text = ", ".join(f"{k}: {v}" for k, v in counts.items())
        raise BackboneError(
            f"no residues left after screening ({len(frame)} rows; left out by step: {text}); relax noe_min or "
            "ratio_sd, or check the rates"
        )

    # Data vector: R1, R2 of every used row, the NOE where present (and, with absolute errors, where it has one).
    u_rows = np.flatnonzero(used)
    r1_err = frame["R1_err"].to_numpy(dtype=float)
    r2_err = frame["R2_err"].to_numpy(dtype=float)
    noe = frame["NOE"].to_numpy(dtype=float)
    noe_err = frame["NOE_err"].to_numpy(dtype=float)
    weighted = bool(np.all(np.isfinite(r1_err[u_rows]) & np.isfinite(r2_err[u_rows])))
    notes = list(screening.notes)
    noe_rows = u_rows[np.isfinite(noe[u_rows])] if use_noe else u_rows[:0]
    if not weighted:
        # Equal relative errors mean nothing for an NOE near zero; such values are left out of this mode.
        small = noe_rows[np.abs(noe[noe_rows]) < _NOE_RELATIVE_FLOOR]
        if small.size:
            notes.append(f"NOE of {small.size} used rows not fitted: |NOE| < {_NOE_RELATIVE_FLOOR:g} without errors")
        noe_rows = np.setdiff1d(noe_rows, small)
    if weighted:
        lacking = noe_rows[~(np.isfinite(noe_err[noe_rows]) & (noe_err[noe_rows] > 0))]
        if lacking.size:
            notes.append(f"NOE of {lacking.size} used rows not fitted: no NOE_err")
        noe_rows = np.setdiff1d(noe_rows, lacking)
    else:
        missing = [q for q, e in (("R1", r1_err), ("R2", r2_err)) if not np.all(np.isfinite(e[u_rows]))]
        notes.append(
            f"no {' or '.join(q + '_err' for q in missing)} for every used row: all rates weighted by 1/|value| "
            "(equal relative errors) and the covariance scaled by the reduced chi-square"
        )
    data_rows = np.concatenate([u_rows, u_rows, noe_rows])
    kinds = np.concatenate([np.zeros(u_rows.size, int), np.ones(u_rows.size, int), np.full(noe_rows.size, 2)])
    values = np.concatenate([frame["R1"].to_numpy(float)[u_rows], frame["R2"].to_numpy(float)[u_rows], noe[noe_rows]])
    if weighted:
        sigma = np.concatenate([r1_err[u_rows], r2_err[u_rows], noe_err[noe_rows]])
    else:
        sigma = np.abs(values)
    weights = 1.0 / sigma
    n_par = 2 if s2_free else 1
    if values.size < n_par + 1:
        raise BackboneError(f"{values.size} rates for {n_par} parameters: the fit needs at least {n_par + 1}")

    fields_all = frame["field_mhz"].to_numpy(dtype=float)
    fields = np.unique(fields_all)
    field_index = np.searchsorted(fields, fields_all[data_rows])
    model = _Model(fields, field_index, kinds, scheme, s2_value, bool(s2_free), options)

    lo = np.array([math.log(_TAU_BOUNDS_NS[0])] + ([_S2_BOUNDS[0]] if s2_free else []))
    hi = np.array([math.log(_TAU_BOUNDS_NS[1])] + ([_S2_BOUNDS[1]] if s2_free else []))
    # Start: the median closed-form tau_c of the used rows (every used row has one: step b); with a free S2,
    # its linear least-squares value from R1 and R2 at that tau_c and S2 = 1.
    closed = frame["tau_c_ratio_ns"].to_numpy(dtype=float)[u_rows]
    ln_tau0 = np.array([math.log(float(np.median(closed)))])
    x0 = ln_tau0
    if s2_free:
        rigid = _Model(fields, field_index, kinds, scheme, 1.0, False, options).evaluate(ln_tau0[None])[1][0]
        rel = kinds < 2
        w2 = weights[rel] ** 2
        s2_0 = np.sum(w2 * rigid[rel] * values[rel]) / np.sum(w2 * rigid[rel] ** 2)
        x0 = np.array([ln_tau0[0], s2_0])
    x0 = np.clip(x0, lo, hi)
    solution = _least_squares(model, values, weights, x0, lo, hi)
    x, chi2, jmat = solution.x, solution.chi2, solution.jacobian
    dof = values.size - n_par
    reduced = chi2 / dof if dof > 0 else math.nan
    a_mat = jmat.T @ jmat
    if not (np.all(np.isfinite(a_mat)) and np.linalg.cond(a_mat) < 1e14):
        raise BackboneError("the tau_c fit is degenerate (singular covariance); check the rates")
    cov = np.linalg.inv(a_mat)
    if not weighted:
        cov = cov * (reduced if dof > 0 else math.nan)
    tau_c = float(math.exp(x[0]) * 1e-9)
    tau_err = float(tau_c * math.sqrt(cov[0, 0]))
    s2_fit = float(x[1]) if s2_free else s2_value
    s2_err = float(math.sqrt(cov[1, 1])) if s2_free else math.nan
    p_value = float(stats.chi2.sf(chi2, dof)) if weighted and dof > 0 else math.nan
    if not solution.converged:
        notes.append(f"least squares stopped after {solution.n_iter} iterations without meeting its tolerance")
    if s2_free and s2_fit >= _S2_BOUNDS[1]:
        notes.append("S2 reached its upper bound 1")
    if x[0] <= lo[0] or x[0] >= hi[0]:
        notes.append(f"tau_c reached the limit of the engine's range ({_TAU_BOUNDS_NS[0]:g}-{_TAU_BOUNDS_NS[1]:g} ns)")
    err_for_verdict = tau_err
    if weighted and np.isfinite(p_value) and p_value < _P_VALUE_NOTE:
        notes.append(
            f"the rates scatter more than their errors allow (reduced chi2 {reduced:.3g}, p = {p_value:.2g}): "
            "anisotropic tumbling, exchange or internal motion among the used residues, or under-estimated "
            "errors; the verdict uses the error scaled by sqrt(reduced chi2)"
            + ("" if s2_free else "; with S2 fixed, try s2_free=True")
        )
        err_for_verdict = tau_err * math.sqrt(reduced)

    # Engine rates at the fit for every row.
    fit_rates = solution.rates  # (3, F)
    idx_all = np.searchsorted(fields, fields_all)
    for k, q in enumerate(_QUANTITIES):
        frame[f"{q}_fit"] = fit_rates[k, idx_all]

    verdict = None
    if expected is not None:
        verdict = tumbling_verdict(
            tau_c, err_for_verdict, float(expected.tau_c_s), expected_rel_uncertainty=u
        )
    status = frame["status"].to_numpy(dtype=object)
    fitted = ["R1", "R2"] + (["NOE"] if noe_rows.size else [])
    global_info = {
        "source": ", ".join(screening.sources),
        "tau_c_ns": tau_c * 1e9,
        "tau_c_err_ns": tau_err * 1e9,
        "s2": s2_fit,
        "s2_err": s2_err,
        "s2_free": bool(s2_free),
        "chi2": chi2,
        "dof": int(dof),
        "reduced_chi2": reduced,
        "p_value": p_value,
        "weighting": "given errors, absolute" if weighted else "equal relative errors (1/|value|), covariance scaled",
        "fitted": fitted,
        "n_rates": int(values.size),
        "n_used": screening.n_used,
        "n_rows_used": int(used.sum()),
        "n_residues": int(frame["residue"].astype(str).nunique()),
        "fields_mhz": [float(f) for f in fields],
        "labeling": str(getattr(scheme, "id", type(scheme).__name__)),
        "method": (
            "Levenberg-Marquardt least squares of one tau_c"
            + (" and one S2" if s2_free else f" (S2 fixed at {s2_value:g})")
            + " through backbone.relaxation.relaxation_rates (15N R1, R2, NOE; tau_e = 0)"
        ),
        "tau_c_ratio_median_ns": float(np.nanmedian(frame["tau_c_ratio_ns"].to_numpy(float)[used])),
        "expected_tau_c_ns": None if expected is None else float(expected.tau_c_s) * 1e9,
        "expected_rel_uncertainty": u,
        "expected": None if expected is None else expected.as_dict(),
        "expected_description": None if expected is None else expected.describe(),
        "verdict": None if verdict is None else verdict.verdict,
        "verdict_category": None if verdict is None else verdict.category,
        "verdict_message": (
            "no expected tau_c: give the sequence or mass with the temperature" if verdict is None else verdict.message
        ),
        "screening": screening.as_dict(),
        "status_counts": {s: int(np.sum(status == s)) for s in STATUSES},
        "notes": notes,
        "problems": list(screening.problems),
    }
    frame = frame.drop(columns=["step", "flag"])
    return TauCFit(
        tau_c=tau_c,
        tau_c_err=tau_err,
        s2=s2_fit,
        s2_err=s2_err,
        s2_free=bool(s2_free),
        chi2=chi2,
        reduced_chi2=reduced,
        p_value=p_value,
        n_used=screening.n_used,
        n_rates=int(values.size),
        fields_mhz=tuple(float(f) for f in fields),
        table=frame,
        screening=screening,
        expected=expected,
        verdict=verdict,
        global_info=global_info,
        problems=screening.problems,
    )
