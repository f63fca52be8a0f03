"""Chemical-shift evolution periods, detection, and the rate rules for decoupled and TROSY coherences.

Sampling factors
----------------
A coherence that decays as e^(−Rt) is sampled from 0 to t_max with N equally spaced points of equal noise σ.
Weighting point n with w_n and summing gives the peak height of the transformed spectrum; its S/N is
Σ w_n e^(−R t_n) / (σ √Σ w_n²). The weighting that maximizes it is the signal envelope itself, w_n = e^(−R t_n)
(matched filter; Ernst, Bodenhausen & Wokaun, Principles of NMR in One and Two Dimensions, 1987, ch. 4,
from memory), which gives S/N = √(Σ e^(−2R t_n))/σ. Against a signal that does not decay, sampled the same
way (S/N = √N/σ), and in the continuum limit, with x = R t_max:

    matched filter:   F(x) = √( (1/t_max) ∫_0^t_max e^(−2Rt) dt ) = √( (1 − e^(−2x)) / (2x) )
    no weighting:     U(x) = (1/t_max) ∫_0^t_max e^(−Rt) dt    = (1 − e^(−x)) / x

U is the mean signal over the sampled window relative to its first point; F ≥ U (Cauchy–Schwarz). Both are 1
at x = 0 and compare experiments sampled to the same t_max in the same measurement time; the caller decides
t_max (longer sampling buys resolution at the price of these factors). The same factors serve the directly
detected dimension, where t_max is the acquisition time.

Constant and semi-constant time
-------------------------------
In a constant-time period of fixed length T the shift is sampled by moving a refocusing pulse, so every t1
point has decayed by the same e^(−RT): no t1-dependent decay, and couplings that are not refocused evolve for T.
In semi-constant time (Grzesiek & Bax, J. Biomol. NMR 3, 185, 1993; Logan, Olejniczak, Xu & Fesik,
J. Biomol. NMR 3, 225, 1993; both from memory) a transfer period of length T that must stay fixed for its
coupling is merged with the t1 evolution: the delays are incremented so that the shift evolves for t1, the
coupling for T, and the period lasts T + (1 − T/t_max)·t1 for T ≤ t_max (and T when T ≥ t_max, which is plain
constant time). The extra, t1-dependent decay therefore runs at R·(1 − T/t_max); the fixed part e^(−RT)
belongs to the transfer step and is counted there.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from backbone.constants import Constant
from backbone.errors import BackboneError
from backbone.transfer.steps import _nonneg, _one_minus_exp_ratio, passive_factor

__all__ = [
    "TROSY_COMPONENT_FRACTION",
    "SENSITIVITY_ENHANCEMENT_GAIN",
    "TrosySelection",
    "real_time_factor",
    "detection_factor",
    "constant_time_factor",
    "semi_constant_time_rate",
    "semi_constant_time_factor",
    "decoupled_rate",
    "trosy_selection",
]

_WEIGHTINGS = ("matched", "none")

TROSY_COMPONENT_FRACTION = Constant(
    "fraction of the decoupled 1H-15N signal in the TROSY component",
    0.5,
    "1",
    "Pervushin, Riek, Wider & Wüthrich, PNAS 94, 12366 (1997): one of the two 15N doublet components "
    "is kept and the other discarded, against both collapsed by decoupling (from memory)",
)

SENSITIVITY_ENHANCEMENT_GAIN = Constant(
    "S/N gain of sensitivity enhancement for an I-S pair",
    math.sqrt(2.0),
    "1",
    "Palmer, Cavanagh, Wright & Rance, J. Magn. Reson. 93, 151 (1991); Kay, Keifer & Saarinen, J. Am. Chem. "
    "Soc. 114, 10663 (1992); for TROSY by single-transition transfer Pervushin, Wider & Wüthrich, "
    "J. Biomol. NMR 12, 345 (1998) (all from memory)",
)


class TrosySelection(NamedTuple):
    """Rate of the kept TROSY component [s⁻¹] and its S/N factor relative to a decoupled HSQC [1]."""

    rate: np.ndarray
    factor: np.ndarray


def _check_weighting(weighting: str) -> str:
    if weighting not in _WEIGHTINGS:
        raise BackboneError(f"weighting {weighting!r}: allowed are {', '.join(map(repr, _WEIGHTINGS))}")
    return weighting


def _sampling_factor(x, weighting):
    """F(x) (matched filter) or U(x) (no weighting) of the module notes, x = R·t_max ≥ 0."""
    if weighting == "matched":
        return np.sqrt(_one_minus_exp_ratio(2.0 * x))
    return _one_minus_exp_ratio(x)


def real_time_factor(rate, t_max, *, weighting="matched"):
    """Sensitivity factor of a real-time (indirect) evolution sampled to ``t_max`` (module notes).

    rate : float or array [s⁻¹]
        Decay rate of the evolving coherence (≥ 0).
    t_max : float or array [s]
        Last sampled evolution time (≥ 0).
    weighting : ``"matched"`` or ``"none"``
        ``"matched"``: √((1 − e^(−2x))/(2x)), the matched-filter S/N against a non-decaying signal sampled the
        same way (Ernst, Bodenhausen & Wokaun 1987). ``"none"``: (1 − e^(−x))/x, the mean signal over the
        window relative to its first point (unweighted sum). x = rate·t_max.

    Returns an array of the broadcast shape, in (0, 1].
    """
    _check_weighting(weighting)
    return _sampling_factor(_nonneg("rate", rate, "s^-1") * _nonneg("t_max", t_max, "s"), weighting)


def detection_factor(r2, t_acq, *, weighting="matched"):
    """Sensitivity factor of direct detection (e.g. on 1HN) over the acquisition time ``t_acq``.

    r2 [s⁻¹] is the decay rate of the detected coherence, t_acq [s]. Same definition as
    :func:`real_time_factor`: with the default matched filter, √((1 − e^(−2 R2 t_acq))/(2 R2 t_acq)) relative to
    a non-decaying signal acquired for the same time.
    """
    _check_weighting(weighting)
    return _sampling_factor(_nonneg("r2", r2, "s^-1") * _nonneg("t_acq", t_acq, "s"), weighting)


def constant_time_factor(total_time, rate, *, passive_hz=(), t_max=None):
    """Amplitude after a constant-time evolution period of fixed length T.

    total_time : float or array [s]
        T, the fixed length of the period (≥ 0).
    rate : float or array [s⁻¹]
        Decay rate of the coherence during the period.
    passive_hz : sequence of couplings [Hz]
        Couplings that are not refocused and evolve for the whole of T (e.g. CA–CB in a constant-time 13C
        period); each multiplies by cos(πJT), which is −1 at T = 1/J (Vuister & Bax, J. Magn. Reson. 98, 428,
        1992, from memory).
    t_max : float or array [s], optional
        If given, checked to fit in the period (t_max ≤ T).

    Returns e^(−RT) ∏ cos(πJ_p T). The sampled t1 points carry no further decay (the sampling factor of a
    constant-time dimension is 1).
    """
    t = _nonneg("total_time", total_time, "s")
    r = _nonneg("rate", rate, "s^-1")
    if t_max is not None:
        tm = _nonneg("t_max", t_max, "s")
        too_long = np.broadcast_to(tm > t * (1.0 + 1e-12), np.broadcast_shapes(tm.shape, t.shape))
        if np.any(too_long):
            bad = np.broadcast_to(tm, too_long.shape)[too_long].ravel()[0]
            raise BackboneError(
                f"t_max = {bad:g} s does not fit in the constant-time period; it must be <= total_time"
            )
    return np.exp(-r * t) * passive_factor(t, passive_hz)


def semi_constant_time_rate(rate, t_max, coupling_time):
    """Effective t1 decay rate R·(1 − T/t_max) of a semi-constant-time period (module notes).

    rate [s⁻¹]; t_max [s] last t1 point; coupling_time [s] the fixed coupling-evolution time T merged with t1.
    Returns 0 when T ≥ t_max (constant time) and ``rate`` when T = 0 (real time). Grzesiek & Bax,
    J. Biomol. NMR 3, 185 (1993) (from memory).
    """
    r = _nonneg("rate", rate, "s^-1")
    tm = _nonneg("t_max", t_max, "s")
    tc = _nonneg("coupling_time", coupling_time, "s")
    longer = tm > tc
    return np.where(longer, r * (1.0 - tc / np.where(longer, tm, 1.0)), 0.0 * r)


def semi_constant_time_factor(rate, t_max, coupling_time, *, weighting="matched"):
    """Sampling factor of a semi-constant-time dimension: :func:`real_time_factor` at R·(1 − T/t_max).

    rate [s⁻¹], t_max [s], coupling_time [s]; ``weighting`` as in :func:`real_time_factor`. The fixed decay
    over T is part of the transfer step and not included.
    """
    r_eff = semi_constant_time_rate(rate, t_max, coupling_time)
    return real_time_factor(r_eff, t_max, weighting=weighting)


def decoupled_rate(r_inphase, r_antiphase):
    """Effective rate of a coherence under decoupling of its partner: (R_in + R_anti)/2.

    Decoupling of the partner (e.g. 1H during a 15N period) interconverts in-phase and anti-phase coherence
    faster than they relax, so the coherence spends half its time in each (common practice; Cavanagh,
    Fairbrother, Palmer, Rance & Skelton, Protein NMR Spectroscopy, 2nd ed., 2007, from memory).
    Rates in s⁻¹, arrays broadcast.
    """
    return 0.5 * (_nonneg("r_inphase", r_inphase, "s^-1") + _nonneg("r_antiphase", r_antiphase, "s^-1"))


def trosy_selection(r_inphase, r_antiphase, eta_xy, *, sensitivity_enhanced=True, reference_enhanced=False):
    """Rate and signal factor of the TROSY-selected doublet component.

    The two doublet components of a spin coupled to its amide partner relax at (R_in + R_anti)/2 ± η_xy,
    with η_xy the DD/CSA cross-correlation rate (Goldman, J. Magn. Reson. 60, 437, 1984, from memory;
    Pervushin, Riek, Wider & Wüthrich, PNAS 94, 12366, 1997). TROSY keeps the slow one:

        rate = (R_in + R_anti)/2 − |η_xy|

    The mean includes the partner's longitudinal flips (R_anti − R_in); their mixing of the two lines is
    neglected (valid for |πJ| ≫ R_anti − R_in, as for 1J(N,H) ≈ −92 Hz).

    Signal factor, relative to a decoupled HSQC: the kept component is one of two, 1/2 of the decoupled
    signal when both experiments are recorded alike (:data:`TROSY_COMPONENT_FRACTION`). Sensitivity
    enhancement (single-transition transfer of both orthogonal components, Pervushin, Wider & Wüthrich,
    J. Biomol. NMR 12, 345, 1998) multiplies S/N by √2 (:data:`SENSITIVITY_ENHANCEMENT_GAIN`), so

        factor = 1/2 · (√2 if sensitivity_enhanced) / (√2 if reference_enhanced)

    i.e. 1/√2 for enhanced TROSY against a plain decoupled HSQC, 1/2 against an enhanced one. The
    contribution of the 15N steady-state polarization that some TROSY versions add is not included.

    Parameters
    ----------
    r_inphase, r_antiphase : float or array [s⁻¹]
        Auto-relaxation rates of the in-phase and anti-phase coherence of the observed spin.
    eta_xy : float or array [s⁻¹]
        Transverse DD/CSA cross-correlation rate (its sign selects which line is slow; |η| is used).
    sensitivity_enhanced : bool
        Whether the TROSY experiment uses sensitivity enhancement.
    reference_enhanced : bool
        Whether the decoupled HSQC it is compared with does.

    Returns
    -------
    TrosySelection
        ``(rate, factor)``, arrays of the broadcast shape. |η_xy| larger than the mean rate (a negative
        kept rate, impossible for a physical relaxation matrix) raises :class:`~backbone.errors.BackboneError`.
    """
    mean = decoupled_rate(r_inphase, r_antiphase)
    eta = np.abs(np.asarray(eta_xy, dtype=float))
    if not np.all(np.isfinite(eta)):
        raise BackboneError(f"eta_xy must be finite [s^-1], got {eta_xy!r}")
    rate = mean - eta
    if np.any(rate < 0):
        raise BackboneError(
            "eta_xy: |eta_xy| exceeds the mean of the in-phase and anti-phase rates, which no physical "
            "relaxation matrix allows; check the rates"
        )
    gain = float(SENSITIVITY_ENHANCEMENT_GAIN)
    factor = float(TROSY_COMPONENT_FRACTION) * (gain if sensitivity_enhanced else 1.0)
    factor /= gain if reference_enhanced else 1.0
    return TrosySelection(rate, np.full(np.shape(rate), factor))
