"""Global τc from intensity ratios of two recorded experiments, through the planner's forward model.

Two experiments recorded on one sample lose different amounts of signal to relaxation, and the difference grows
with τc: a TROSY keeps more of the amide signal than an HSQC in a large deuterated protein (Pervushin, Riek,
Wider & Wüthrich, Proc. Natl. Acad. Sci. USA 94, 12366, 1997); an HNCO loses more than an HSQC during its
N–C′ transfers. The ratio of the two intensities per residue therefore measures τc. This module

1. predicts the ratio of the two peaks' throughputs as a function of τc (:func:`predicted_ratio`): the
   planner's walk of each experiment model (:func:`backbone.plan.plan`, :func:`backbone.experiments.walk`) on a
   τc grid, vectorized, at the given field, labeling and order parameter, on the planner's typical residue;
2. fits one global τc to the measured per-residue ratios (:func:`fit_ratio`), with the τc expected from the
   sequence beside it and the plain verdict of :func:`backbone.fitting.tumbling_fit.tumbling_verdict`.

Input
-----
* a long table ``residue,experiment,intensity[,error]`` (:func:`backbone.fitting.data.read_intensities`;
  ``experiment`` values name the experiment models, e.g. ``TROSY`` and ``HSQC``, case-insensitive), or
* two peak lists ``residue,intensity[,error]``, one per experiment, given as a pair of paths
  (:func:`backbone.fitting.data.read_peak_lists`) with ``experiments=(A, B)``.
The ratio is A / B: the first experiment of ``experiments`` (default: the two labels of the file in order of
first appearance) over the second.

What the intensities must be, and the scale
-------------------------------------------
The forward model predicts the ratio of per-peak throughputs (:mod:`backbone.experiments.walk`: signal per
scan after matched-filter sampling, with the models' own sampling of the indirect dimensions). One ratio of two
experiments at one τc is one number, so **a free scale factor would leave τc undetermined**: the measured
ratio's absolute level must be known. Give ``scale``, the factor by which recording and processing alone make
the A intensities larger than the B intensities at equal throughput: ``scale=1`` when both were recorded on the
same sample with the same number of scans, receiver gain and processing, and the intensities are comparable
quantities (both peak heights, or both volumes, read the same way); otherwise the product of the known ratios
(e.g. 2 for twice the scans of A with heights that add linearly). Its relative uncertainty ``scale_rel_err``
(default 0) enters the τc error. There is no default for ``scale``: without it the fit is refused.

Delays: by default each experiment is predicted at the planner's optimal delays *at each trial τc*
(``delays=None``, what a spectroscopist who optimized them would have recorded). Give the delays actually
recorded with ``delays={"HNCO": {"T_NC": 0.024}, ...}`` [s]; delays not named keep their optimal values. The
global information says which was used.

The fit
-------
Per residue ``y = ln(I_A / I_B / scale)``. Residues whose ``y`` lies more than ``outlier_sd`` (default 3)
robust standard deviations (1.4826 × median absolute deviation) from the median are left out (overlapped
peaks, exchange broadening), with at least three residues to judge. The global τc solves
``m(τc) = ȳ`` with ``m = ln|T_A/T_B|`` the predicted log ratio and ``ȳ`` the mean over the used residues; its
standard error is the residue scatter (standard deviation / √n, or the propagated intensity errors for a single
residue) with the scale's uncertainty added in quadrature, carried through the slope: σ(ln τc) = σ_ȳ /
|dm/d ln τc|. The grid (``tau_c_range_ns``, default 1–100 ns, log-spaced) is refined around the solution by a
second vectorized evaluation. If the mean ratio is outside what the model gives on the grid, no τc is reported
(NaN) and the global ``note`` says so.

Statuses (per residue, of its own τc from its own ratio)
--------------------------------------------------------
``bad-data``: a missing or non-positive intensity or error, or a residue listed twice for one experiment;
``too-few-points``: one of the two intensities absent; ``failed``: its ratio is outside what the model gives on
the grid (no τc); ``poorly-determined``: its τc error (from the intensity errors) above 50 %, or the ratio's τc
ambiguous (the model is not monotonic there); ``ok`` otherwise. Whether a residue entered the global mean is the
separate boolean ``used``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from backbone.errors import BackboneError
from backbone.fitting._shared import MAX_RELATIVE_ERROR, STATUSES, json_value
from backbone.fitting.data import IntensityTable, intensities_from_frame, read_intensities, read_peak_lists
from backbone.fitting.tumbling_fit import (
    EXPECTED_REL_UNCERTAINTY,
    TumblingVerdict,
    expected_estimate,
    tumbling_verdict,
)

__all__ = [
    "MODEL_ID",
    "OUTLIER_SD",
    "RatioPrediction",
    "RatioFit",
    "read_ratio_data",
    "predicted_ratio",
    "fit_ratio",
]

#: Model id of intensity-ratio fits (``model`` of the ``backbone fit --json`` output).
MODEL_ID = "ratio"
#: Robust standard deviations from the median beyond which a residue's log ratio is left out (common practice).
OUTLIER_SD = 3.0
# 1 / Φ⁻¹(3/4): the median absolute deviation of a normal sample times this is its standard deviation.
_MAD_TO_SD = 1.482602218505602
_MIN_FOR_OUTLIERS = 3
_REFINE_POINTS = 25


# ---------------------------------------------------------------------------------------------------------
# input
# ---------------------------------------------------------------------------------------------------------
def read_ratio_data(data, *, experiments=None) -> IntensityTable:
    """IntensityTable from a table, a DataFrame, a path of a long table, or a pair of peak-list paths."""
    if isinstance(data, IntensityTable):
        return data
    if isinstance(data, pd.DataFrame):
        return intensities_from_frame(data)
    if isinstance(data, (str, Path)):
        return read_intensities(data)
    if isinstance(data, Sequence) and len(data) == 2 and all(isinstance(p, (str, Path)) for p in data):
        if experiments is None:
            raise BackboneError("two peak lists need experiments=(A, B) naming the experiment of each list")
        return read_peak_lists(data[0], data[1], experiments=experiments)
    raise BackboneError(
        "the ratio fit needs an intensity table (path, DataFrame or IntensityTable) or a pair of peak-list "
        f"paths, got {type(data).__name__}"
    )


# ---------------------------------------------------------------------------------------------------------
# forward model
# ---------------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class RatioPrediction:
    """Predicted throughputs of two experiments' peaks on a τc grid.

    Attributes
    ----------
    tau_c_ns : array (K,) [ns]
    throughput_a, throughput_b : arrays (K,)
        |throughput| of the chosen peak of each experiment (:mod:`backbone.experiments.walk` normalization).
    ratio : array (K,)
        throughput_a / throughput_b.
    experiments, peaks, trosy : pairs
    delays : str
        How the delays were chosen, in words.
    """

    tau_c_ns: np.ndarray
    throughput_a: np.ndarray
    throughput_b: np.ndarray
    ratio: np.ndarray
    experiments: tuple
    peaks: tuple
    trosy: tuple
    delays: str


def _pair(value, name):
    if isinstance(value, (bool, np.bool_)) or value is None:
        return (value, value)
    if isinstance(value, str) or not isinstance(value, Sequence) or len(value) != 2:
        raise BackboneError(f"{name} must be one value or a pair (one per experiment), got {value!r}")
    return tuple(value)


def predicted_ratio(
    tau_c_ns,
    *,
    field_mhz,
    labeling,
    experiments,
    trosy=False,
    peaks=None,
    delays=None,
    s2=1.0,
    deuteration=None,
) -> RatioPrediction:
    """Predicted peak-throughput ratio of two experiments against τc, vectorized over a τc array.

    Parameters
    ----------
    tau_c_ns : array [ns]
        τc values (1-D).
    field_mhz : float [MHz]
        1H frequency.
    labeling : str, path or LabelingScheme
        Labeling scheme; ``deuteration`` overrides its level.
    experiments : pair of str
        Experiment model names or paths (A, B); the ratio is A / B.
    trosy : bool or pair of bool
        Walk the TROSY version (models that have one; the TROSY model always is).
    peaks : pair of str, optional
        Peak label of each experiment; default its only peak (required for experiments with several).
    delays : mapping, optional
        Recorded delays per experiment name, ``{name: {delay name: seconds}}``; missing ones are the planner's
        optimal delays at each τc (the default for every delay).
    s2 : float
        Order parameter of the rates (default 1).

    Returns
    -------
    RatioPrediction

    Raises
    ------
    BackboneError
        Unknown experiment, peak or delay names, an infeasible peak, bad options (from the planner).
    """
    from backbone.experiments import load_experiment, typical_chain, walk
    from backbone.experiments.walk import TYPICAL_RESIDUE
    from backbone.labeling import LabelingScheme, load_scheme
    from backbone.plan import plan
    from backbone.relaxation import relaxation_rates

    tau = np.atleast_1d(np.asarray(tau_c_ns, dtype=float))
    if tau.ndim != 1 or not np.all(np.isfinite(tau) & (tau > 0)):
        raise BackboneError(f"tau_c_ns must be a 1-D array of positive values [ns], got {tau_c_ns!r}")
    exps = _pair(experiments, "experiments")
    if exps[0] is None or any(not isinstance(e, (str, Path)) for e in exps):
        raise BackboneError(f"experiments must name two experiments, got {experiments!r}")
    trosys = _pair(trosy, "trosy")
    peak_labels = _pair(peaks, "peaks")
    delays = {} if delays is None else delays
    if not isinstance(delays, Mapping):
        raise BackboneError(f"delays must map experiment names to {{delay name: seconds}}, got {delays!r}")
    scheme = labeling if isinstance(labeling, LabelingScheme) else load_scheme(labeling, deuteration=deuteration)
    rates = None
    outputs, labels, modes, descriptions = [], [], [], []
    for name, t_mode, label in zip(exps, trosys, peak_labels):
        model = load_experiment(name)
        if label is None:
            if len(model.peaks) != 1:
                raise BackboneError(
                    f"{model.name} has several peaks ({', '.join(p.label for p in model.peaks)}); choose one with peaks"
                )
            label = model.peaks[0].label
        elif label not in [p.label for p in model.peaks]:
            raise BackboneError(
                f"{model.name} has no peak {label!r}; its peaks are {', '.join(p.label for p in model.peaks)}"
            )
        result = plan(
            tau_c_ns=tau, field_mhz=float(field_mhz), labeling=scheme, s2=s2, experiments=[name], trosy=bool(t_mode)
        )
        ep = result.experiments[0]
        peak = next(p for p in ep.peaks if p.label == label)
        if not peak.feasible:
            raise BackboneError(f"{model.name} peak {label} is not observable here: {peak.reason}")
        recorded = _recorded_delays(delays, model)
        if recorded:
            unknown = [d for d in recorded if d not in model.delay_names]
            if unknown:
                raise BackboneError(
                    f"delays for {model.name}: unknown delay {unknown[0]!r}; its delays are "
                    f"{', '.join(model.delay_names)}"
                )
            if rates is None:
                rates = relaxation_rates(tau * 1e-9, proton_mhz=float(field_mhz), labeling=scheme, s2=s2)
            merged = {k: np.asarray(v, dtype=float) for k, v in ep.delays.items() if v is not None}
            merged.update({k: float(v) for k, v in recorded.items()})
            w = walk(model, typical_chain(), TYPICAL_RESIDUE, scheme, rates, delays=merged, trosy=bool(ep.trosy))
            throughput = np.abs(np.broadcast_to(w.throughput(label), tau.shape))
            given = ", ".join(f"{k} = {1e3 * float(v):g} ms" for k, v in recorded.items())
            descriptions.append(f"{model.name}: recorded ({given}), others optimal at each tau_c")
        else:
            throughput = np.abs(np.broadcast_to(peak.throughput, tau.shape))
            descriptions.append(f"{model.name}: the planner's optimal delays at each tau_c")
        outputs.append(np.array(throughput, dtype=float))
        labels.append(label)
        modes.append(bool(np.all(ep.trosy)))
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(outputs[1] > 0, outputs[0] / outputs[1], np.nan)
    return RatioPrediction(
        tau_c_ns=tau,
        throughput_a=outputs[0],
        throughput_b=outputs[1],
        ratio=ratio,
        experiments=tuple(str(e) for e in exps),
        peaks=tuple(labels),
        trosy=tuple(modes),
        delays="; ".join(descriptions),
    )


def _recorded_delays(delays, model):
    for key, value in delays.items():
        if str(key).lower() == model.name.lower():
            if not isinstance(value, Mapping):
                raise BackboneError(f"delays[{key!r}] must map delay names to seconds, got {value!r}")
            for k, v in value.items():
                if isinstance(v, bool) or not isinstance(v, (int, float, np.floating, np.integer)) or not v >= 0:
                    raise BackboneError(f"delays[{key!r}][{k!r}] must be a non-negative number of seconds, got {v!r}")
            return dict(value)
    unknown = [k for k in delays if not isinstance(k, str)]
    if unknown:
        raise BackboneError(f"delays: keys must be experiment names, got {unknown[0]!r}")
    return {}


def _crossings(m, x, y):
    """Solutions of m(x) = y by linear interpolation on a grid: (first solution or NaN, number of solutions)."""
    d = m - y
    sign = np.sign(d)
    idx = np.flatnonzero((sign[:-1] * sign[1:] <= 0) & np.isfinite(d[:-1]) & np.isfinite(d[1:]) & (sign[:-1] != 0))
    exact = np.flatnonzero(sign == 0)
    n = idx.size + (1 if exact.size and idx.size == 0 else 0)
    if idx.size == 0:
        return (float(x[exact[0]]) if exact.size else math.nan), n
    k = idx[0]
    frac = d[k] / (d[k] - d[k + 1])
    return float(x[k] + frac * (x[k + 1] - x[k])), n


def _slope(m, x, at):
    """dm/dx at ``at`` by central differences of the grid."""
    g = np.gradient(m, x)
    return float(np.interp(at, x, g))


# ---------------------------------------------------------------------------------------------------------
# fit
# ---------------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class RatioFit:
    """Result of :func:`fit_ratio`.

    Attributes
    ----------
    tau_c, tau_c_err : float [s]
        Global τc and its standard error (NaN when the mean ratio has no solution on the grid).
    table : pandas.DataFrame
        One row per residue: ``residue``, ``status``, ``used``, ``reason``, ``numerator``, ``numerator_err``,
        ``denominator``, ``denominator_err`` (intensities of A and B), ``ratio``, ``ratio_err`` (A/B as
        measured), ``log_ratio`` (ln(ratio/scale)), ``tau_c_ns``, ``tau_c_ns_err`` (the residue's own τc).
    prediction : RatioPrediction
        The forward model on the grid.
    expected, verdict
        The expected τc estimate and the verdict (None without sequence/mass/expected τc).
    global_info : dict
        The ``global`` object of the JSON output.
    """

    tau_c: float
    tau_c_err: float
    table: pd.DataFrame
    prediction: RatioPrediction
    expected: object = None
    verdict: TumblingVerdict | None = None
    global_info: dict = field(default_factory=dict)
    problems: tuple[str, ...] = ()

    model = MODEL_ID

    def as_dict(self) -> dict:
        """JSON-ready ``{"model": "ratio", "residues": [...], "global": {...}}`` (NaN written as ``None``)."""
        residues = [{k: json_value(v) for k, v in row.items()} for row in self.table.to_dict(orient="records")]
        return {"model": MODEL_ID, "residues": residues, "global": json_value(self.global_info)}


def _positive(name, value, *, allow_zero=False):
    if isinstance(value, bool):
        raise BackboneError(f"{name} must be a number, got {value!r}")
    try:
        x = float(value)
    except (TypeError, ValueError) as err:
        raise BackboneError(f"{name} must be a number, got {value!r}") from err
    if not math.isfinite(x) or x < 0 or (x == 0 and not allow_zero):
        raise BackboneError(f"{name} must be a finite {'non-negative' if allow_zero else 'positive'} number, got {value!r}")
    return x


def fit_ratio(
    data,
    *,
    field_mhz,
    labeling,
    scale=None,
    scale_rel_err: float = 0.0,
    experiments=None,
    trosy=False,
    peaks=None,
    delays=None,
    s2: float = 1.0,
    deuteration=None,
    tau_c_range_ns=(1.0, 100.0),
    n_grid: int = 81,
    outlier_sd: float | None = OUTLIER_SD,
    expected_tau_c=None,
    sequence: str | None = None,
    mass_da: float | None = None,
    temperature_k: float | None = None,
    solvent: str = "H2O",
    expected_rel_uncertainty: float = EXPECTED_REL_UNCERTAINTY.value,
) -> RatioFit:
    """Fit one global τc to per-residue intensity ratios of two experiments (module docstring).

    Parameters
    ----------
    data : path, DataFrame, IntensityTable, or pair of peak-list paths
        Intensities (module docstring).
    field_mhz : float [MHz]
        1H frequency of the recordings.
    labeling : str, path or LabelingScheme
        Labeling of the sample; ``deuteration`` overrides its level.
    scale : float
        Known factor (A over B) from recording and processing alone; 1 for the same sample, scans, receiver
        gain and processing. Required.
    scale_rel_err : float
        Relative standard uncertainty of ``scale`` (default 0).
    experiments : pair of str, optional
        (A, B) as labelled in the data and named as experiment models; default the data's two labels in order.
    trosy, peaks, delays, s2
        As :func:`predicted_ratio`.
    tau_c_range_ns : pair of float [ns]
        Grid range (within 0.1–500 ns); ``n_grid`` log-spaced points (11–1001).
    outlier_sd : float or None
        Robust outlier threshold (None: keep every usable residue).
    expected_tau_c, sequence, mass_da, temperature_k, solvent, expected_rel_uncertainty
        The expected τc and its uncertainty for the verdict (:func:`~backbone.fitting.tumbling_fit.fit_tau_c`).

    Returns
    -------
    RatioFit

    Raises
    ------
    BackboneError
        No ``scale``; data not readable or without exactly two experiments to compare; experiments not in the
        data; no residue with both intensities usable; bad options or model names.
    """
    if scale is None:
        raise BackboneError(
            "the intensity ratio carries tau_c only if its absolute level is known: give scale (1 for the same "
            "sample, number of scans, receiver gain and processing; else the known factor A/B)"
        )
    scale = _positive("scale", scale)
    scale_rel_err = _positive("scale_rel_err", scale_rel_err, allow_zero=True)
    if outlier_sd is not None:
        outlier_sd = _positive("outlier_sd", outlier_sd)
    u = _positive("expected_rel_uncertainty", expected_rel_uncertainty)
    lo, hi = _grid_range(tau_c_range_ns)
    if isinstance(n_grid, bool) or not isinstance(n_grid, (int, np.integer)) or not 11 <= n_grid <= 1001:
        raise BackboneError(f"n_grid must be an integer in [11, 1001], got {n_grid!r}")
    table = read_ratio_data(data, experiments=experiments)
    labels = _choose_experiments(table, experiments)
    expected = expected_estimate(expected_tau_c, sequence, mass_da, temperature_k, solvent)

    grid = np.geomspace(lo, hi, int(n_grid))
    opts = dict(
        field_mhz=field_mhz, labeling=labeling, experiments=labels, trosy=trosy, peaks=peaks, delays=delays, s2=s2,
        deuteration=deuteration,
    )
    pred = predicted_ratio(grid, **opts)
    x = np.log(grid)
    with np.errstate(divide="ignore", invalid="ignore"):
        m = np.log(pred.ratio)

    rows, notes = _residue_rows(table, labels, scale)
    y = rows["log_ratio"].to_numpy(dtype=float)
    sy = rows["log_ratio_err"].to_numpy(dtype=float)
    status = rows["status"].to_numpy(dtype=object)
    reasons = [list(r) for r in rows["reasons"]]
    tau_i = np.full(len(rows), np.nan)
    tau_i_err = np.full(len(rows), np.nan)
    usable = np.isfinite(y)
    for i in np.flatnonzero(usable):
        root, n_roots = _crossings(m, x, y[i])
        if not np.isfinite(root):
            status[i] = "failed"
            reasons[i].append(
                f"ratio/scale {math.exp(y[i]):.4g} is outside what the model gives for tau_c {lo:g}-{hi:g} ns "
                f"({np.nanmin(pred.ratio):.4g}-{np.nanmax(pred.ratio):.4g})"
            )
            continue
        tau_i[i] = math.exp(root)
        slope = _slope(m, x, root)
        if np.isfinite(sy[i]) and slope != 0:
            tau_i_err[i] = tau_i[i] * sy[i] / abs(slope)
        if n_roots > 1:
            status[i] = "poorly-determined"
            reasons[i].append(f"{n_roots} tau_c values give this ratio; the smallest is reported")
        elif np.isfinite(tau_i_err[i]) and tau_i_err[i] > MAX_RELATIVE_ERROR * tau_i[i]:
            status[i] = "poorly-determined"
            reasons[i].append(
                f"tau_c relative error {100 * tau_i_err[i] / tau_i[i]:.0f}% (> {100 * MAX_RELATIVE_ERROR:.0f}%)"
            )
    if not usable.any():
        raise BackboneError(
            f"{table.source}: no residue has usable intensities in both {labels[0]} and {labels[1]}"
        )

    # Robust outlier screen on the log ratios.
    used = usable.copy()
    if outlier_sd is not None and usable.sum() >= _MIN_FOR_OUTLIERS:
        med = float(np.median(y[usable]))
        spread = _MAD_TO_SD * float(np.median(np.abs(y[usable] - med)))
        if spread > 0:
            far = usable & (np.abs(y - med) > outlier_sd * spread)
            for i in np.flatnonzero(far):
                reasons[i].append(
                    f"left out of the global mean: log ratio {y[i]:.3g} is {abs(y[i] - med) / spread:.1f} robust SD "
                    f"from the median {med:.3g} (> {outlier_sd:g})"
                )
            used &= ~far
    elif outlier_sd is not None:
        notes.append(f"outlier screen skipped: {int(usable.sum())} usable residues (needs {_MIN_FOR_OUTLIERS})")
    n_used = int(used.sum())
    y_mean = float(np.mean(y[used]))
    if n_used >= 2:
        sigma_mean = float(np.std(y[used], ddof=1)) / math.sqrt(n_used)
        error_source = f"residue scatter: standard deviation of {n_used} log ratios / sqrt({n_used})"
    elif np.isfinite(sy[used]).all():
        sigma_mean = float(sy[used][0])
        error_source = "propagated intensity errors of the single usable residue"
    else:
        sigma_mean = math.nan
        error_source = "none: one usable residue and no intensity errors"
    sigma_total = math.sqrt(sigma_mean**2 + scale_rel_err**2) if np.isfinite(sigma_mean) else math.nan

    # Global solution, refined on a fine grid around it.
    root, n_roots = _crossings(m, x, y_mean)
    tau_c = tau_err = math.nan
    interval = (math.nan, math.nan)
    verdict = None
    if np.isfinite(root):
        k = int(np.clip(np.searchsorted(x, root), 1, x.size - 1))
        fine = np.exp(np.linspace(x[max(k - 2, 0)], x[min(k + 1, x.size - 1)], _REFINE_POINTS))
        pf = predicted_ratio(fine, **opts)
        xf = np.log(fine)
        with np.errstate(divide="ignore", invalid="ignore"):
            mf = np.log(pf.ratio)
        root_f, _ = _crossings(mf, xf, y_mean)
        if np.isfinite(root_f):
            root = root_f
        slope = _slope(mf, xf, root) if np.isfinite(root_f) else _slope(m, x, root)
        tau_c = math.exp(root) * 1e-9
        if np.isfinite(sigma_total) and slope != 0:
            tau_err = tau_c * sigma_total / abs(slope)
            low, _ = _crossings(m, x, y_mean - math.copysign(sigma_total, slope))
            high, _ = _crossings(m, x, y_mean + math.copysign(sigma_total, slope))
            interval = (math.exp(low) if np.isfinite(low) else math.nan, math.exp(high) if np.isfinite(high) else math.nan)
        if n_roots > 1:
            notes.append(f"{n_roots} tau_c values on the grid give the mean ratio; the smallest is reported")
        if expected is not None and np.isfinite(tau_err):
            verdict = tumbling_verdict(tau_c, tau_err, float(expected.tau_c_s), expected_rel_uncertainty=u)
    else:
        notes.append(
            f"the mean ratio/scale {math.exp(y_mean):.4g} is outside what the model gives for tau_c {lo:g}-{hi:g} ns "
            f"({np.nanmin(pred.ratio):.4g}-{np.nanmax(pred.ratio):.4g}): no tau_c; check the scale, labeling, "
            "field and delays, or widen tau_c_range_ns"
        )

    expected_ratio = math.nan
    if expected is not None:
        e_ns = float(expected.tau_c_s) * 1e9
        if lo <= e_ns <= hi:
            expected_ratio = float(math.exp(np.interp(math.log(e_ns), x, m)))

    out = pd.DataFrame(
        {
            "residue": rows["residue"].to_numpy(dtype=object),
            "status": status,
            "used": used,
            "reason": ["; ".join(r) for r in reasons],
            "numerator": rows["numerator"].to_numpy(dtype=float),
            "numerator_err": rows["numerator_err"].to_numpy(dtype=float),
            "denominator": rows["denominator"].to_numpy(dtype=float),
            "denominator_err": rows["denominator_err"].to_numpy(dtype=float),
            "ratio": rows["ratio"].to_numpy(dtype=float),
            "ratio_err": rows["ratio_err"].to_numpy(dtype=float),
            "log_ratio": y,
            "tau_c_ns": tau_i,
            "tau_c_ns_err": tau_i_err,
        }
    )
    problems = tuple(table.problems())
    global_info = {
        "source": table.source,
        "numerator": labels[0],
        "denominator": labels[1],
        "peaks": list(pred.peaks),
        "trosy": list(pred.trosy),
        "field_mhz": float(field_mhz),
        "labeling": str(getattr(labeling, "id", labeling)),
        "s2": float(s2),
        "scale": scale,
        "scale_rel_err": scale_rel_err,
        "delays": pred.delays,
        "forward_model": "ratio of per-peak throughputs of the planner's walks on its typical residue",
        "tau_c_ns": tau_c * 1e9,
        "tau_c_err_ns": tau_err * 1e9,
        "tau_c_interval_ns": list(interval),
        "mean_log_ratio": y_mean,
        "mean_log_ratio_err": sigma_total,
        "uncertainty": error_source + (f", scale uncertainty {scale_rel_err:g} added" if scale_rel_err else ""),
        "n_used": n_used,
        "n_residues": int(len(out)),
        "outlier_sd": outlier_sd,
        "tau_c_range_ns": [lo, hi],
        "expected_tau_c_ns": None if expected is None else float(expected.tau_c_s) * 1e9,
        "expected_ratio": expected_ratio,
        "expected_rel_uncertainty": u,
        "expected_description": None if expected is None else expected.describe(),
        "verdict": None if verdict is None else verdict.verdict,
        "verdict_category": None if verdict is None else verdict.category,
        "verdict_message": (
            verdict.message
            if verdict is not None
            else ("no expected tau_c: give the sequence or mass with the temperature" if expected is None else "no tau_c to judge")
        ),
        "status_counts": {s: int(np.sum(status == s)) for s in STATUSES},
        "notes": notes,
        "problems": list(problems),
    }
    return RatioFit(
        tau_c=tau_c,
        tau_c_err=tau_err,
        table=out,
        prediction=pred,
        expected=expected,
        verdict=verdict,
        global_info=global_info,
        problems=problems,
    )


def _grid_range(value):
    from backbone.units import TAU_C_NS

    try:
        lo, hi = (float(v) for v in value)
    except (TypeError, ValueError) as err:
        raise BackboneError(f"tau_c_range_ns must be a pair of numbers [ns], got {value!r}") from err
    if not (TAU_C_NS.low <= lo < hi <= TAU_C_NS.high):
        raise BackboneError(
            f"tau_c_range_ns = {value!r}: needs {TAU_C_NS.low:g} <= low < high <= {TAU_C_NS.high:g} ns"
        )
    return lo, hi


def _choose_experiments(table: IntensityTable, experiments):
    present = {e.lower(): e for e in table.experiments}
    if experiments is None:
        if len(table.experiments) != 2:
            raise BackboneError(
                f"{table.source}: {len(table.experiments)} experiments ({', '.join(table.experiments)}); "
                "choose the two to compare with experiments=(A, B)"
            )
        return tuple(table.experiments)
    pair = _pair(experiments, "experiments")
    for e in pair:
        if not isinstance(e, str) or e.strip().lower() not in present:
            raise BackboneError(
                f"{table.source}: experiment {e!r} is not in the data; it has {', '.join(table.experiments)}"
            )
    if pair[0].strip().lower() == pair[1].strip().lower():
        raise BackboneError(f"experiments: the two experiments are the same ({pair[0]!r})")
    return tuple(e.strip() for e in pair)


def _residue_rows(table: IntensityTable, labels, scale):
    """Per-residue intensities of A and B, ratio, log ratio and pre-fit statuses; plus notes."""
    pts = table.points
    lower = pts["experiment"].str.lower().to_numpy(dtype=object)
    wanted = [label.lower() for label in labels]
    notes = []
    other = sorted(set(pts["experiment"].to_numpy(dtype=object)[~np.isin(lower, wanted)]))
    if other:
        notes.append(f"rows of other experiments ignored: {', '.join(other)}")
    residue = pts["residue"].to_numpy(dtype=object)
    intensity = pts["intensity"].to_numpy(dtype=float)
    error = pts["error"].to_numpy(dtype=float)
    lines = pts["line"].to_numpy()
    flags = pts["flag"].to_numpy(dtype=object)
    index: dict = {}
    for i, (res, exp) in enumerate(zip(residue, lower)):
        if exp in wanted:
            index.setdefault((res, exp), []).append(i)
    residues = list(dict.fromkeys(residue[np.isin(lower, wanted)]))
    records = []
    sides = ("numerator", "denominator")
    for res in residues:
        rec = {"residue": res, "status": "ok", "reasons": []}
        found = [index.get((res, w)) for w in wanted]
        flagged, missing = [], []
        for side, label, rows in zip(sides, labels, found):
            rec[side] = float(intensity[rows[0]]) if rows else math.nan
            rec[f"{side}_err"] = float(error[rows[0]]) if rows else math.nan
            if not rows:
                missing.append(label)
                continue
            flagged += [f"{label} line {int(lines[i])}: {flags[i]}" for i in rows if flags[i]]
        if flagged:
            rec["status"] = "bad-data"
            rec["reasons"].append("; ".join(flagged))
        elif missing:
            rec["status"] = "too-few-points"
            rec["reasons"].append(f"no {missing[0]} intensity: a ratio needs both experiments")
        a, b = rec["numerator"], rec["denominator"]
        ok = rec["status"] == "ok"
        rec["ratio"] = a / b if ok else math.nan
        rec["log_ratio"] = math.log(a / b / scale) if ok else math.nan
        if ok and table.has_errors:
            rel = math.hypot(rec["numerator_err"] / a, rec["denominator_err"] / b)
            rec["log_ratio_err"] = rel
            rec["ratio_err"] = rec["ratio"] * rel
        else:
            rec["log_ratio_err"] = math.nan
            rec["ratio_err"] = math.nan
        records.append(rec)
    return pd.DataFrame(records), notes
