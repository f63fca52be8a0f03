"""Signal-to-noise scaling, sampling cost and measurement time: how long an experiment takes.

Every function is pure and vectorized: numbers or arrays in, arrays of the broadcast shape out (a float or a
str for scalar inputs). SI inside: times in s, rates in s⁻¹, widths in Hz.

The S/N model
-------------
A peak's S/N after a measurement of total time t, relative to a calibration spectrum (S/N_cal after t_cal),
is the product of factors that each compare the experiment with the calibration, so that every factor common
to both cancels (receiver, sample volume, filling factor, processing, the nucleus detected):

    S/N = S/N_cal · √(t/t_cal) · (c/c_cal) · (A/A_cal) · (B0/B0_cal)^(3/2) · P · (Q/Q_cal)

- c/c_cal, concentration: the signal is proportional to the number of molecules in the coil, the noise is not
  (Ernst, Bodenhausen & Wokaun, Principles of NMR in One and Two Dimensions, 1987, ch. 4).
- A/A_cal, throughput: the fraction of the starting magnetization that reaches the detected coherence, from
  the experiment models (transfer steps with relaxation, TROSY selection, sensitivity enhancement, the 1H
  fraction of the amide site), each at its own conditions.
- (B0/B0_cal)^(3/2), field, at fixed linewidth in Hz: polarization ∝ B0, induced voltage ∝ B0, noise ∝ √B0
  (Ernst et al. 1987, ch. 4). Applied only when the calibration was measured at another field (with a
  calibration at this field the factor is 1). Linewidths change with the field too; they are counted through
  the rates in A and Q, never in this factor. The exponent is a parameter: coil-noise-dominated probes come
  closer to 7/4 (Hoult & Richards, J. Magn. Reson. 24, 71, 1976, from memory) and sample-noise-dominated
  cryogenic probes on salty samples closer to 1 (common practice).
- P, probe: S/N ratio of the probe used to the calibration probe (:func:`probe_factor`).
- Q/Q_cal, acquisition (:class:`Acquisition`): the sampling factors of the indirect dimensions and of the
  detection period at the decay rates of their coherences (matched filter,
  :func:`backbone.transfer.evolution.real_time_factor`, :func:`~backbone.transfer.evolution.detection_factor`,
  :func:`~backbone.transfer.evolution.constant_time_factor`), the steady-state 1H magnetization left by the
  recycle delay (:func:`steady_state_factor`), and the fraction of each scan spent acquiring, √(t_acq/t_scan).
- √t: noise adds incoherently over scans, signal coherently (Ernst et al. 1987, ch. 4). For a signal that does
  not decay the S/N per √time does not depend on how the time is divided among increments or dimensions; the
  sampling factors are what decay costs.

:func:`scale_signal_to_noise` applies the common factors, :func:`measurement_time` the whole model, and
compares the time the S/N needs with the least time the sampling needs (:func:`minimum_time`).

Not modeled: non-uniform sampling, amide-water exchange and longitudinal-relaxation enhancement during the
recycle delay, radiation damping, and differences in processing between the two spectra (use the same
weighting for both, or fold the difference into the throughput ratio).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from types import MappingProxyType

import numpy as np

from backbone.constants import XI_DSS, Constant
from backbone.errors import BackboneError
from backbone.scenario import PROBES
from backbone.transfer.evolution import constant_time_factor, detection_factor, real_time_factor
from backbone.units import FIELD_MHZ

__all__ = [
    "FIELD_EXPONENT",
    "CRYOGENIC_PROBE_GAIN",
    "OPTIMUM_RECOVERY_FACTOR",
    "QUADRATURE_FACTOR",
    "MINIMAL_SCANS_GRADIENT",
    "MINIMAL_SCANS_PHASE_CYCLED",
    "SPECTRAL_WIDTH_PPM",
    "DEFAULT_DUTY_LIMIT",
    "IndirectDimension",
    "Acquisition",
    "MeasurementTime",
    "scale_signal_to_noise",
    "probe_factor",
    "time_to_target",
    "spectral_width_hz",
    "increments_for",
    "minimum_time",
    "recycle_delay",
    "steady_state_factor",
    "ernst_angle",
    "measurement_time",
    "high_power_duty_cycle",
    "duty_cycle_warning",
]

_ERNST_1987 = "Ernst, Bodenhausen & Wokaun, Principles of NMR in One and Two Dimensions (1987), ch. 4"

FIELD_EXPONENT = Constant(
    "exponent of B0 in S/N at fixed linewidth",
    1.5,
    "1",
    f"{_ERNST_1987}: polarization and induced voltage each proportional to B0, noise to sqrt(B0)",
)

CRYOGENIC_PROBE_GAIN = Constant(
    "S/N of a cryogenic over a room-temperature probe",
    3.0,
    "1",
    "about 3-4x at low salt, less in salty samples (common practice); the low end is taken so that planned "
    "times are not optimistic",
)

OPTIMUM_RECOVERY_FACTOR = Constant(
    "recovery time per T1 that maximizes S/N per sqrt(time) with 90 degree pulses",
    1.2564,
    "1",
    "Ernst & Anderson, Rev. Sci. Instrum. 37, 93 (1966) (from memory): root of e^x = 1 + 2x, usually quoted "
    "as 1.26 T1",
)

QUADRATURE_FACTOR = Constant(
    "FIDs per increment of an indirect dimension with quadrature detection",
    2.0,
    "1",
    "States, Haberkorn & Ruben, J. Magn. Reson. 48, 286 (1982) (from memory): cosine- and sine-modulated "
    "data sets; echo-antiecho selection records two as well (common practice)",
)

MINIMAL_SCANS_GRADIENT = Constant(
    "minimal scans per FID of a gradient-selected experiment",
    2.0,
    "scans",
    "common practice: gradients select the coherence pathway in one scan; a two-step cycle of the first "
    "pulse with the receiver removes axial peaks and is the usual minimum",
)

MINIMAL_SCANS_PHASE_CYCLED = Constant(
    "minimal scans per FID of an experiment selected by phase cycling",
    4.0,
    "scans",
    "common practice: the shortest cycle that selects the pathway and removes axial peaks; 8 is also common",
)

_SW_NOTE = "common practice: typical protein window including margins"
#: Typical indirect spectral widths [ppm] of the backbone nuclei (keys as in ``goals.resolution_hz``). ``CB``
#: is the combined Cα/Cβ window of HNCACB-type experiments.
SPECTRAL_WIDTH_PPM: Mapping[str, Constant] = MappingProxyType(
    {
        "N": Constant("15N amide window", 32.0, "ppm", f"{_SW_NOTE} (about 100-132 ppm; 30-35 ppm)"),
        "CA": Constant("13C alpha window", 30.0, "ppm", f"{_SW_NOTE} (about 40-70 ppm)"),
        "C": Constant("13C' carbonyl window", 14.0, "ppm", f"{_SW_NOTE} (about 168-182 ppm; 12-15 ppm)"),
        "CB": Constant("13C alpha/beta window", 65.0, "ppm", f"{_SW_NOTE} (about 10-75 ppm; 60-70 ppm)"),
    }
)
_SW_ISOTOPE = MappingProxyType({"N": "15N", "CA": "13C", "C": "13C", "CB": "13C"})

DEFAULT_DUTY_LIMIT = Constant(
    "largest fraction of each scan under high-power pulses, decoupling or spin-lock",
    0.10,
    "1",
    "common practice: about 10-20 % for cryogenic probes; the lower end is taken. Facility rules and the "
    "probe maker's limits take precedence",
)

_LIMITED_BY = ("sensitivity", "sampling")


# ---------------------------------------------------------------------------------------------------------
# Validation and output
# ---------------------------------------------------------------------------------------------------------


def _array(name: str, value, unit: str, *, low: float = -math.inf, strict: bool = False) -> np.ndarray:
    """``value`` as a finite float array with every element >= low (> low if ``strict``)."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError) as err:
        u = f" [{unit}]" if unit else ""
        raise BackboneError(f"{name} must be a number or an array of numbers{u}, got {value!r}") from err
    if not np.all(np.isfinite(arr)):
        u = f" [{unit}]" if unit else ""
        raise BackboneError(f"{name} must be finite{u}, got {value!r}")
    bad = arr <= low if strict else arr < low
    if np.any(bad):
        sign = ">" if strict else ">="
        u = f" {unit}" if unit else ""
        raise BackboneError(f"{name} must be {sign} {low:g}{u}, got {arr[bad].ravel()[0]:g}{u}")
    return arr


def _positive(name: str, value, unit: str) -> np.ndarray:
    return _array(name, value, unit, low=0.0, strict=True)


def _nonneg(name: str, value, unit: str) -> np.ndarray:
    return _array(name, value, unit, low=0.0)


def _whole(name: str, value, *, low: int = 1) -> np.ndarray:
    """Whole numbers >= low, as an int64 array."""
    arr = _array(name, value, "", low=low)
    if np.any(arr != np.floor(arr)):
        raise BackboneError(f"{name} must be whole numbers >= {low}, got {arr[arr != np.floor(arr)].ravel()[0]:g}")
    return arr.astype(np.int64)


def _out(arr):
    """A float (or int) for a 0-d result, else the array."""
    arr = np.asarray(arr)
    return arr.item() if arr.ndim == 0 else arr


# ---------------------------------------------------------------------------------------------------------
# Scaling S/N
# ---------------------------------------------------------------------------------------------------------


def _common_factors(concentration_ratio, throughput_ratio, field_ratio, probe_ratio, field_exponent) -> dict:
    exponent = float(_array("field_exponent", field_exponent, ""))
    field = 1.0 if field_ratio is None else _positive("field_ratio", field_ratio, "") ** exponent
    return {
        "concentration": _positive("concentration_ratio", concentration_ratio, ""),
        "throughput": _positive("throughput_ratio", throughput_ratio, ""),
        "field": np.asarray(field, dtype=float),
        "probe": _positive("probe_ratio", probe_ratio, ""),
    }


def scale_signal_to_noise(
    sn_ref,
    *,
    concentration_ratio=1.0,
    throughput_ratio=1.0,
    field_ratio=None,
    probe_ratio=1.0,
    linewidth_ratio=1.0,
    time_ratio=1.0,
    field_exponent=FIELD_EXPONENT.value,
):
    """S/N of a peak scaled from a reference S/N; every argument is a ratio to the reference (module notes).

    S/N = sn_ref · c_r · A_r · B_r^n · P_r / w_r · √t_r

    sn_ref : float or array [1] — reference S/N (> 0).
    concentration_ratio : c/c_ref [1] — S/N ∝ number of molecules (Ernst, Bodenhausen & Wokaun 1987).
    throughput_ratio : A/A_ref [1] — transferred fraction of magnetization (its magnitude; the peak sign does
        not change S/N), experiment over reference.
    field_ratio : B0/B0_ref [1] or None — raised to ``field_exponent`` (3/2, :data:`FIELD_EXPONENT`, at fixed
        linewidth; Ernst et al. 1987). None (the default): the reference was measured at this field, factor 1.
        Give it only when the calibration is at another field, and count linewidth changes elsewhere.
    probe_ratio : P [1] — S/N of this probe over the reference probe (:func:`probe_factor`).
    linewidth_ratio : Δν/Δν_ref [1] — at fixed integral the height of a Lorentzian is 2·integral/(πΔν), so
        the S/N of the peak height is inversely proportional to the linewidth, for spectra processed alike
        with the same noise level. (:func:`measurement_time` counts the detected linewidth through the
        sampling factors of :class:`Acquisition` instead, which is the same physics with the matched filter.)
    time_ratio : t/t_ref [1] — S/N ∝ √t (Ernst et al. 1987).
    field_exponent : float — exponent of the field ratio.

    Every input must be > 0; arrays broadcast. Returns S/N [1].
    """
    sn = _positive("sn_ref", sn_ref, "")
    f = _common_factors(concentration_ratio, throughput_ratio, field_ratio, probe_ratio, field_exponent)
    width = _positive("linewidth_ratio", linewidth_ratio, "")
    t = _positive("time_ratio", time_ratio, "")
    return _out(sn * f["concentration"] * f["throughput"] * f["field"] * f["probe"] / width * np.sqrt(t))


def probe_factor(probe: str, reference_probe: str, *, cryogenic_gain=CRYOGENIC_PROBE_GAIN.value) -> float:
    """S/N of ``probe`` over ``reference_probe`` [1]; probes as in ``spectrometer.probe`` ("cryogenic",
    "room-temperature"). A cryogenic probe gains ``cryogenic_gain`` (:data:`CRYOGENIC_PROBE_GAIN`, about 3-4x
    at low salt, common practice) over a room-temperature one; equal kinds give 1."""
    for name, value in (("probe", probe), ("reference_probe", reference_probe)):
        if value not in PROBES:
            raise BackboneError(f"{name} = {value!r} is not a probe kind; allowed: {', '.join(map(repr, PROBES))}")
    gain = float(_positive("cryogenic_gain", cryogenic_gain, ""))
    level = {"cryogenic": gain, "room-temperature": 1.0}
    return level[probe] / level[reference_probe]


def time_to_target(sn_at_time, time_s, target_sn):
    """Time [s] to reach ``target_sn`` when ``sn_at_time`` was reached in ``time_s``: t·(target/sn)²
    (S/N ∝ √t; Ernst, Bodenhausen & Wokaun 1987). All inputs > 0; arrays broadcast."""
    sn = _positive("sn_at_time", sn_at_time, "")
    t = _positive("time_s", time_s, "s")
    target = _positive("target_sn", target_sn, "")
    return _out(t * (target / sn) ** 2)


# ---------------------------------------------------------------------------------------------------------
# Sampling: spectral widths, increments, minimum time
# ---------------------------------------------------------------------------------------------------------


def spectral_width_hz(nucleus: str, proton_mhz, *, ppm=None):
    """Spectral width [Hz] of an indirect dimension of ``nucleus`` at the field ``proton_mhz`` [MHz, 1H].

    width = ppm · 10⁻⁶ · Ξ · ν_H, with Ξ the frequency ratio of the nucleus to 1H of DSS (liquid NH3 for 15N;
    Markley et al. 1998, :data:`backbone.constants.XI_DSS`) and ν_H the 1H frequency of the magnet (the ppm-level
    difference between the bare-proton and DSS frequencies is negligible here). ``ppm`` defaults to
    :data:`SPECTRAL_WIDTH_PPM` of the nucleus ("N", "CA", "C", "CB" = Cα/Cβ window); give it for another window.
    """
    if nucleus not in _SW_ISOTOPE:
        raise BackboneError(f"nucleus {nucleus!r} has no spectral width; known are {', '.join(_SW_ISOTOPE)}")
    mhz = _array("proton_mhz", proton_mhz, "MHz")
    FIELD_MHZ.check(mhz, where="spectral_width_hz")
    width_ppm = SPECTRAL_WIDTH_PPM[nucleus].value if ppm is None else _positive("ppm", ppm, "ppm")
    return _out(width_ppm * XI_DSS[_SW_ISOTOPE[nucleus]].value * mhz)


def increments_for(t_max_s, spectral_width_hz):
    """Complex points (increments) an indirect dimension needs to reach ``t_max_s`` [s]: ⌈t_max·SW⌉, at least 1.

    With the dwell time 1/SW [s] (``spectral_width_hz`` [Hz], > 0), N points span the evolution window N/SW
    (common practice for the acquisition time of a dimension). For a wanted resolution Δν [Hz], t_max = 1/Δν
    (:attr:`backbone.scenario.Goals.t_max_s`). Products within 1e-9 of a whole number are taken as that number.
    Returns int or int array.
    """
    t = _nonneg("t_max_s", t_max_s, "s")
    sw = _positive("spectral_width_hz", spectral_width_hz, "Hz")
    n = np.ceil(np.round(t * sw, 9))
    return _out(np.maximum(n, 1).astype(np.int64))


def _per_dimension(name: str, value, count: int) -> list[np.ndarray]:
    """``value`` (one entry for all, or a sequence of ``count``) as a list of whole-number arrays >= 1."""
    if isinstance(value, Sequence) and not isinstance(value, str):
        if len(value) != count:
            raise BackboneError(
                f"{name} has {len(value)} entries; give one per indirect dimension ({count}) or one value"
            )
        return [_whole(f"{name}[{i}]", v) for i, v in enumerate(value)]
    return [_whole(name, value)] * count


def _scan_time(recycle_s, acquisition_s, sequence_s) -> np.ndarray:
    return (
        _nonneg("recycle_s", recycle_s, "s")
        + _positive("acquisition_s", acquisition_s, "s")
        + _nonneg("sequence_s", sequence_s, "s")
    )


def minimum_time(
    increments,
    *,
    recycle_s,
    acquisition_s,
    scans_min=MINIMAL_SCANS_GRADIENT.value,
    quadrature_factor=QUADRATURE_FACTOR.value,
    sequence_s=0.0,
):
    """Least time [s] that records the wanted increments once: ∏(n_i · q_i) · scans_min · t_scan.

    increments : sequence, one entry per indirect dimension (whole numbers >= 1 or arrays of them; empty for a
        1D experiment) — from :func:`increments_for`.
    recycle_s [s] (>= 0), acquisition_s [s] (> 0), sequence_s [s] (>= 0) : the scan time t_scan is their sum;
        ``sequence_s`` is the duration of the pulse sequence before acquisition (default 0: neglected).
    scans_min : whole number >= 1 — the minimal phase cycle: :data:`MINIMAL_SCANS_GRADIENT` (2, the default,
        for gradient-selected experiments; 1 is possible) or :data:`MINIMAL_SCANS_PHASE_CYCLED` (4; 8 is also
        common), common practice.
    quadrature_factor : whole number >= 1, or one per dimension — FIDs per increment: 2 for States or
        echo-antiecho (:data:`QUADRATURE_FACTOR`; States, Haberkorn & Ruben 1982), 1 for a real-only dimension.

    Arrays broadcast; returns seconds.
    """
    if isinstance(increments, str) or not isinstance(increments, Sequence):
        raise BackboneError(f"increments must be a sequence with one entry per indirect dimension, got {increments!r}")
    counts = [_whole(f"increments[{i}]", n) for i, n in enumerate(increments)]
    quad = _per_dimension("quadrature_factor", quadrature_factor, len(counts))
    fids = np.ones((), dtype=np.int64)
    for n, q in zip(counts, quad):
        fids = fids * n * q
    scans = _whole("scans_min", scans_min)
    return _out(fids * scans * _scan_time(recycle_s, acquisition_s, sequence_s))


# ---------------------------------------------------------------------------------------------------------
# Recycle delay and steady state
# ---------------------------------------------------------------------------------------------------------


def recycle_delay(r1_h, *, acquisition_s=0.0, factor=OPTIMUM_RECOVERY_FACTOR.value):
    """Recycle delay [s] that gives the 1H magnetization the recovery time ``factor``·T1, T1 = 1/``r1_h``.

    With 90° excitation the S/N per √time, (1 − e^(−t_r/T1))/√t_r, is largest at t_r = 1.2564 T1
    (:data:`OPTIMUM_RECOVERY_FACTOR`; Ernst & Anderson 1966, from memory), where t_r is the recovery time
    between scans: the acquisition plus the recycle delay, as in :func:`steady_state_factor`. The delay
    returned is ``factor/r1_h − acquisition_s``, and 0 where the acquisition alone is longer.

    r1_h : float or array [s⁻¹] — longitudinal rate of the starting 1H (e.g. the non-selective R1 of H from
        :func:`backbone.relaxation.engine.relaxation_rates`), > 0.
    acquisition_s : float or array [s], >= 0.  factor : float, > 0.
    """
    r1 = _positive("r1_h", r1_h, "s^-1")
    acq = _nonneg("acquisition_s", acquisition_s, "s")
    k = _positive("factor", factor, "")
    return _out(np.maximum(k / r1 - acq, 0.0))


def _recovery_exponent(recycle_s, acq_s, r1):
    """R1·t_r with t_r = recycle + acquisition, checked."""
    tr = _nonneg("recycle_s", recycle_s, "s") + _nonneg("acq_s", acq_s, "s")
    if np.any(tr <= 0):
        raise BackboneError("recycle_s + acq_s must be > 0 s: the magnetization needs time to recover")
    return _positive("r1", r1, "s^-1") * tr


def steady_state_factor(recycle_s, acq_s, r1, *, flip_deg=90.0):
    """Steady-state longitudinal magnetization available per scan, as a fraction of M0 [1].

    With recovery time t_r = recycle_s + acq_s [s] and E1 = e^(−R1 t_r) (``r1`` [s⁻¹], > 0), a train of pulses
    of flip angle α gives the transverse signal

        M0 (1 − E1) sin α / (1 − E1 cos α)      (Ernst & Anderson, Rev. Sci. Instrum. 37, 93, 1966, from memory)

    which is 1 − E1 for α = 90° (the default). Assumes no transverse magnetization survives to the next scan
    (gradients, T2 ≪ t_r). ``flip_deg`` in (0, 180]. Arrays broadcast.
    """
    x = _recovery_exponent(recycle_s, acq_s, r1)
    a = _array("flip_deg", flip_deg, "deg", low=0.0, strict=True)
    if np.any(a > 180.0):
        raise BackboneError(f"flip_deg must be in (0, 180] deg, got {a[a > 180.0].ravel()[0]:g} deg")
    rad = np.deg2rad(a)
    one_minus_e1 = -np.expm1(-x)
    # 1 − E1 cos α written as 2 sin²(α/2) + cos α (1 − E1): no cancellation for small α or small R1·t_r
    denominator = 2.0 * np.sin(0.5 * rad) ** 2 + np.cos(rad) * one_minus_e1
    return _out(np.where(a == 90.0, one_minus_e1, one_minus_e1 * np.sin(rad) / denominator))


def ernst_angle(recycle_s, acq_s, r1):
    """Flip angle [deg] that maximizes :func:`steady_state_factor`: arccos(E1), E1 = e^(−R1 (recycle + acq))
    (Ernst & Anderson 1966, from memory). Inputs as in :func:`steady_state_factor`."""
    return _out(np.rad2deg(np.arccos(np.exp(-_recovery_exponent(recycle_s, acq_s, r1)))))


# ---------------------------------------------------------------------------------------------------------
# Experiment description and measurement time
# ---------------------------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class IndirectDimension:
    """One indirect dimension: its sampling and the decay of the coherence that evolves in it.

    t_max_s : float or array [s] — last evolution time (1/resolution), >= 0.
    spectral_width_hz : float or array [Hz] — > 0 (:func:`spectral_width_hz`).
    rate : float or array [s⁻¹] — decay rate of the evolving coherence (e.g. the 15N rate under 1H decoupling,
        ``Nx_hdec`` of :data:`backbone.relaxation.engine.COHERENCES`), >= 0.
    constant_time_s : float, array or None [s] — None: real-time evolution, sampling factor
        :func:`~backbone.transfer.evolution.real_time_factor` (matched filter unless ``weighting`` says
        otherwise). A length T: constant-time evolution, factor
        :func:`~backbone.transfer.evolution.constant_time_factor` = e^(−R·T) ∏cos(πJ·T) over ``passive_hz``.
        Give T only when the experiment's throughput does not already count the period; when it does (the
        period is one of the transfer steps), leave it None and the rate 0: the sampling itself costs nothing.
    passive_hz : sequence [Hz] — couplings evolving through a constant-time period (e.g. CA–CB).
    weighting : "matched" or "none" — as in :func:`~backbone.transfer.evolution.real_time_factor`.
    """

    t_max_s: float | np.ndarray
    spectral_width_hz: float | np.ndarray
    rate: float | np.ndarray = 0.0
    constant_time_s: float | np.ndarray | None = None
    passive_hz: tuple = ()
    weighting: str = "matched"

    def __post_init__(self):
        _nonneg("t_max_s", self.t_max_s, "s")
        _positive("spectral_width_hz", self.spectral_width_hz, "Hz")
        _nonneg("rate", self.rate, "s^-1")
        _ = self.sampling_factor  # validates constant_time_s, passive_hz and weighting with the factor's messages

    @property
    def increments(self):
        """Complex points: :func:`increments_for` (t_max_s, spectral_width_hz)."""
        return increments_for(self.t_max_s, self.spectral_width_hz)

    @property
    def sampling_factor(self) -> np.ndarray:
        """S/N factor of this dimension [1], against a non-decaying signal sampled the same way.

        The magnitude: a constant-time period whose passive couplings invert the peak (cos(πJT) < 0, as for
        Cβ at T = 1/J(CA,CB)) changes its sign, not its S/N.
        """
        if self.constant_time_s is None:
            return real_time_factor(self.rate, self.t_max_s, weighting=self.weighting)
        return np.abs(
            constant_time_factor(self.constant_time_s, self.rate, passive_hz=self.passive_hz, t_max=self.t_max_s)
        )


@dataclass(frozen=True, eq=False)
class Acquisition:
    """How one experiment is recorded: what sets its S/N per √time apart from its throughput.

    acquisition_s : float or array [s] — direct acquisition time t_acq, > 0.
    recycle_s : float or array [s] — recycle delay, >= 0 (:func:`recycle_delay`).
    dimensions : sequence of :class:`IndirectDimension` — empty for a 1D experiment.
    detection_rate : float or array [s⁻¹] — decay rate of the detected coherence (R2 of HN, or its TROSY
        rate), >= 0; its factor is :func:`~backbone.transfer.evolution.detection_factor` (matched filter).
    recovery_rate : float, array or None [s⁻¹] — R1 of the starting 1H; None: full recovery between scans
        (steady-state factor 1).
    sequence_s : float or array [s] — duration of the pulse sequence before acquisition, >= 0 (default 0).

    :attr:`sensitivity_factor` is the S/N per √time relative to a fully relaxed, non-decaying signal acquired
    without pause; only its ratio to the calibration's (Q/Q_cal of the module notes) enters
    :func:`measurement_time`, so describe both experiments alike.
    """

    acquisition_s: float | np.ndarray
    recycle_s: float | np.ndarray
    dimensions: tuple[IndirectDimension, ...] = ()
    detection_rate: float | np.ndarray = 0.0
    recovery_rate: float | np.ndarray | None = None
    sequence_s: float | np.ndarray = 0.0

    def __post_init__(self):
        dims = self.dimensions
        if isinstance(dims, IndirectDimension) or not isinstance(dims, Sequence):
            raise BackboneError(f"dimensions must be a sequence of IndirectDimension, got {dims!r}")
        for i, d in enumerate(dims):
            if not isinstance(d, IndirectDimension):
                raise BackboneError(f"dimensions[{i}] must be an IndirectDimension, got {d!r}")
        object.__setattr__(self, "dimensions", tuple(dims))
        _scan_time(self.recycle_s, self.acquisition_s, self.sequence_s)
        _nonneg("detection_rate", self.detection_rate, "s^-1")
        if self.recovery_rate is not None:
            _positive("recovery_rate", self.recovery_rate, "s^-1")

    @property
    def scan_s(self) -> np.ndarray:
        """Time of one scan [s]: recycle + sequence + acquisition."""
        return _scan_time(self.recycle_s, self.acquisition_s, self.sequence_s)

    @property
    def increments(self) -> tuple:
        """Complex points of each indirect dimension."""
        return tuple(d.increments for d in self.dimensions)

    @property
    def sensitivity_factor(self) -> np.ndarray:
        """∏ sampling factors · detection factor · steady state · √(t_acq/t_scan) [1]."""
        q = detection_factor(self.detection_rate, self.acquisition_s)
        for d in self.dimensions:
            q = q * d.sampling_factor
        if self.recovery_rate is not None:
            q = q * steady_state_factor(self.recycle_s, self.acquisition_s, self.recovery_rate)
        return q * np.sqrt(np.asarray(self.acquisition_s, dtype=float) / self.scan_s)


@dataclass(frozen=True, eq=False)
class MeasurementTime:
    """Result of :func:`measurement_time`; arrays of the broadcast shape (floats/str for scalar inputs).

    sn_per_root_s [s^-1/2] — S/N per √time of the experiment.
    sensitivity_time_s [s] — time to reach the target S/N.
    minimum_time_s [s] — least time that records every increment once with the minimal phase cycle.
    time_s [s] — the larger of the two, the time to report.
    limited_by — "sensitivity" or "sampling", whichever sets ``time_s``.
    signal_to_noise [1] — S/N reached in ``time_s`` (above the target when sampling limits).
    increments — complex points per indirect dimension.
    factors — the S/N factors relative to the calibration: concentration, throughput, field, probe,
        acquisition (Q/Q_cal).
    """

    sn_per_root_s: float | np.ndarray
    sensitivity_time_s: float | np.ndarray
    minimum_time_s: float | np.ndarray
    time_s: float | np.ndarray
    limited_by: str | np.ndarray
    signal_to_noise: float | np.ndarray
    increments: tuple
    factors: Mapping[str, float | np.ndarray] = field(default_factory=dict)

    def as_dict(self) -> dict:
        """JSON-ready dict (floats, or nested lists for arrays)."""

        def plain(x):
            return x.tolist() if isinstance(x, np.ndarray) else x

        return {
            "sn_per_root_s": plain(self.sn_per_root_s),
            "sensitivity_time_s": plain(self.sensitivity_time_s),
            "minimum_time_s": plain(self.minimum_time_s),
            "time_s": plain(self.time_s),
            "limited_by": plain(self.limited_by),
            "signal_to_noise": plain(self.signal_to_noise),
            "increments": [plain(n) for n in self.increments],
            "factors": {k: plain(v) for k, v in self.factors.items()},
        }


def measurement_time(
    calibration_sn,
    calibration_time_s,
    target_sn,
    experiment: Acquisition,
    calibration: Acquisition,
    *,
    concentration_ratio=1.0,
    throughput_ratio=1.0,
    field_ratio=None,
    probe_ratio=1.0,
    field_exponent=FIELD_EXPONENT.value,
    scans_min=MINIMAL_SCANS_GRADIENT.value,
    quadrature_factor=QUADRATURE_FACTOR.value,
) -> MeasurementTime:
    """How long ``experiment`` takes to reach ``target_sn``, scaled from a calibration spectrum (module notes).

    calibration_sn [1], calibration_time_s [s] — the measured reference point (> 0), e.g. an HSQC.
    target_sn [1] — wanted S/N of the peak (> 0).
    experiment, calibration : :class:`Acquisition` — how each was (or will be) recorded, each with the rates
        at its own conditions; factors common to both cancel in Q/Q_cal.

    Ratios of the experiment to the calibration (> 0):
        concentration_ratio — c/c_cal; throughput_ratio — A/A_cal from the experiment models (each at its own
        labeling, field and τc); field_ratio — B0/B0_cal, None when the calibration is at this field
        (factor (B0/B0_cal)^field_exponent otherwise); probe_ratio — :func:`probe_factor`.
    scans_min, quadrature_factor — as in :func:`minimum_time`, for the experiment.

    S/N per √s = S/N_cal/√t_cal · c_r · A_r · (B0 ratio)^(3/2) · P · Q/Q_cal; the time to the target follows
    from :func:`time_to_target`; the minimum time from :func:`minimum_time` with the experiment's increments
    and scan time. The reported time is the larger, ``limited_by`` says which. Arrays broadcast over a grid.
    """
    for name, acq in (("experiment", experiment), ("calibration", calibration)):
        if not isinstance(acq, Acquisition):
            raise BackboneError(f"{name} must be an Acquisition, got {acq!r}")
    cal_sn = _positive("calibration_sn", calibration_sn, "")
    cal_t = _positive("calibration_time_s", calibration_time_s, "s")
    target = _positive("target_sn", target_sn, "")
    factors = _common_factors(concentration_ratio, throughput_ratio, field_ratio, probe_ratio, field_exponent)
    q_cal = calibration.sensitivity_factor
    if np.any(q_cal <= 0):
        raise BackboneError(
            "calibration: its acquisition gives no signal (a constant-time period decays to 0 or sits at a node of "
            "a passive coupling); check its dimensions"
        )
    factors["acquisition"] = experiment.sensitivity_factor / q_cal

    per_root = cal_sn / np.sqrt(cal_t)
    for value in factors.values():
        per_root = per_root * value
    if np.any(per_root <= 0):
        raise BackboneError(
            "experiment: its acquisition gives no signal (a constant-time period decays to 0 or sits at a node of "
            "a passive coupling); check its dimensions"
        )
    t_sens = target**2 / per_root**2
    increments = experiment.increments
    t_min = np.asarray(
        minimum_time(
            list(increments),
            recycle_s=experiment.recycle_s,
            acquisition_s=experiment.acquisition_s,
            sequence_s=experiment.sequence_s,
            scans_min=scans_min,
            quadrature_factor=quadrature_factor,
        ),
        dtype=float,
    )
    t_sens, t_min = np.broadcast_arrays(t_sens, t_min)
    time = np.maximum(t_sens, t_min)
    limited = np.where(t_sens >= t_min, _LIMITED_BY[0], _LIMITED_BY[1])
    return MeasurementTime(
        sn_per_root_s=_out(np.broadcast_to(per_root, time.shape).copy()),
        sensitivity_time_s=_out(t_sens),
        minimum_time_s=_out(t_min),
        time_s=_out(time),
        limited_by=_out(limited),
        signal_to_noise=_out(per_root * np.sqrt(time)),
        increments=increments,
        factors=MappingProxyType({k: _out(v) for k, v in factors.items()}),
    )


# ---------------------------------------------------------------------------------------------------------
# High-power duty cycle
# ---------------------------------------------------------------------------------------------------------


def high_power_duty_cycle(high_power_s_per_scan, scan_time_s):
    """Fraction of each scan [1] spent under high-power pulses, decoupling or spin-lock.

    high_power_s_per_scan [s] (>= 0) over scan_time_s [s] (> 0, e.g. :attr:`Acquisition.scan_s`); the high-power
    time cannot exceed the scan. Arrays broadcast.
    """
    hp = _nonneg("high_power_s_per_scan", high_power_s_per_scan, "s")
    scan = _positive("scan_time_s", scan_time_s, "s")
    hp, scan = np.broadcast_arrays(hp, scan)
    if np.any(hp > scan):
        bad = np.flatnonzero(hp > scan)[0]
        raise BackboneError(
            f"high_power_s_per_scan = {hp.ravel()[bad]:g} s exceeds scan_time_s = {scan.ravel()[bad]:g} s; "
            f"it must be a part of the scan"
        )
    return _out(hp / scan)


def duty_cycle_warning(duty, limit=DEFAULT_DUTY_LIMIT.value) -> str | None:
    """A warning text when any ``duty`` [1] exceeds ``limit`` [1], else None. Never prints.

    duty in [0, 1] (:func:`high_power_duty_cycle`); limit in (0, 1], default :data:`DEFAULT_DUTY_LIMIT`
    (10 %, the lower end of the 10-20 % common for cryogenic probes) or the scenario's
    ``goals.high_power_duty_limit``.
    """
    d = _nonneg("duty", duty, "")
    if np.any(d > 1.0):
        raise BackboneError(f"duty must be in [0, 1], got {d[d > 1.0].ravel()[0]:g}")
    lim = float(_positive("limit", limit, ""))
    if lim > 1.0:
        raise BackboneError(f"limit must be in (0, 1], got {lim:g}")
    worst = float(np.max(d)) if d.size else 0.0
    if worst <= lim:
        return None
    return (
        f"high-power duty cycle {worst:.1%} exceeds the limit of {lim:.1%}: shorten the decoupling or spin-lock "
        f"periods, lower their power or lengthen the recycle delay, and follow your facility's rules and the "
        f"probe maker's limits"
    )
