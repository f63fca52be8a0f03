"""Exact check of the fast step algebra against the Liouville-space reference propagator, one row per step kind.

Every transfer step of an experiment is computed by the closed forms of :mod:`backbone.transfer.steps` and
:mod:`backbone.transfer.evolution`. This module computes the same quantity a second, independent way, with the
density-operator propagator of :mod:`backbone.transfer.reference` (full Liouville space of 2-3 spins, matrix
exponentials, ideal pulses, non-zero offsets, one phenomenological rate per product operator). It reports
both numbers, their relative difference and whether that is within a tolerance (default 1 %).

What each check propagates
--------------------------
Delays follow the project convention: a delay is the total time the active coupling evolves, and echo
halves are τ/2. Offsets go on every spin the reference scenario lets carry one. A spin that stays
longitudinal (z) throughout a period is not affected by its offset at all, because its offset term
commutes with z operators. The rates are typical of a protonated, 13C/15N-labeled protein of about 20 kDa
(τc ≈ 12 ns) at 600 MHz. They are illustrative (common practice), and the in-phase and anti-phase rates
are unequal wherever the algebra is exact for unequal rates:

* ``inept``: Nx → 2NyHz over τ = 1/(2|J_NH|), the first half of the reverse INEPT of an out-and-back
  experiment. R(2NyHz) − R(Nx) is the selective longitudinal rate of the amide proton.
* ``refocus``: refocused INEPT Hx → 2HyNz → 2HzNy → Nx, τ1 = τ2 = 1/(2|J_NH|); the algebra value is
  inept(τ1) × refocused_inept(τ2).
* ``branch-own`` / ``branch-preceding``: N → CA(i) by ¹J(N,CA) and → CA(i−1) by ²J(N,CA(i−1)) at once over
  T = 24 ms. 1H is decoupled, i.e. there is no 1H in the spin system. Both sides use the additive
  relaxation model of the algebra.
* ``homonuclear``: CA → C′ with ¹J(CA,C) active and ¹J(CA,CB) passive, over τ at the maximum of
  sin(πJaτ)cos(πJpτ) (6.29 ms). The aliphatic band-selective 180 inverts CB with CA; it is modelled as ideal
  selective 180s. The passive partner belongs to the transverse
  CA: when the carbonyl is the transverse spin (C′ → CA), CB has no coupling to it.
* ``carbon-split-ca`` / ``carbon-split-cb``: out-and-back CA → CB split over two periods of
  τ = 1/(4|J_CACB|) each. C′ is present and *not* pulsed, so its coupling is refocused, as the algebra
  assumes. The two pathways stand for the CA- and CB-labelled signals that t1 separates. They are read by
  projecting the state between the two periods onto the operators with CA, respectively CB, transverse.
  The CA anti-phase term to the refocused C′ relaxes faster during the echoes (R(2CAyCz) > R(CAx)). The
  algebra neglects this, and at the default rates it costs 0.3 %.
* ``multiple-quantum``: CA–HA multiple-quantum period of 10 ms with ¹J(CA,CB) passive (CB inverted).
* ``constant-time``: CA constant-time period T = 1/|J_CACB| with the shift evolving for T/3. The reference
  amplitude is demodulated by the shift phase: Ix cos φ + Iy sin φ, with φ = 2πνt.
* ``decoupled-period``: 15N period with 1H 180 pulses, compared with the algebra's decoupled rate
  (R_in + R_anti)/2 (:func:`backbone.transfer.evolution.decoupled_rate`). The default length is
  t = 2/|J_NH|, with n = round(t|J_NH|) = 2 pulses, one in the middle of each interval of 1/|J_NH|. Between
  pulses the coherence then goes in-phase → anti-phase → in-phase and spends on average half its time in
  each, and the reference matches e^(−R_mean t) to about 1e-5. The mean is *not* the limit of many closely
  spaced pulses. When the spacing is ≪ 1/|J| the coupling is suppressed, the coherence stays in-phase and
  the reference tends to e^(−R(Nx) t). At the default rates, 64 pulses (spacing 0.34 ms) put it 10 % away
  from the mean rule. Pass ``n_pulses`` to see this.

In some places the algebra assumes something the reference need not. Passive couplings multiply by
cos(πJ_p τ), which is exact only when the term anti-phase to the passive partner relaxes like the in-phase
one. There the reference is set to the algebra's assumption and the row's ``conditions`` say so; pass
``r_passive_antiphase`` to see the effect of lifting it.

Signs: the algebra returns transferred amplitudes for |J|, while the reference keeps the physical sign of
J. A reference anti-phase amplitude after an odd number of sin-type factors is therefore multiplied by
sign(J); each row states this.

Sources: product-operator rules and normalization, Sørensen, Eich, Levitt, Bodenhausen & Ernst, Prog. NMR
Spectrosc. 16, 163 (1983); the periods themselves, Cavanagh, Fairbrother, Palmer, Rance & Skelton, Protein NMR
Spectroscopy, 2nd ed. (2007).
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import NamedTuple

import numpy as np
from scipy.optimize import brentq

from backbone.errors import BackboneError
from backbone.graph.couplings import COUPLINGS
from backbone.transfer import evolution as _evolution
from backbone.transfer import reference as _reference
from backbone.transfer import steps as _steps

__all__ = [
    "VerifyRow",
    "STEP_KINDS",
    "COUPLING_KINDS",
    "DEFAULT_RATES",
    "DEFAULT_OFFSETS_HZ",
    "DEFAULT_TOLERANCE",
    "NO_CHECK_REASON",
    "verify_kind",
    "verify_step_kinds",
    "verify_experiment",
    "format_verify_table",
]

#: Relative tolerance of a check (1 %).
DEFAULT_TOLERANCE = 0.01

#: Reason given for a step that has no propagator check.
NO_CHECK_REASON = "no propagator check: closed-form sampling factor"

#: Couplings the checks use, by kind name of :data:`backbone.graph.couplings.COUPLINGS`; defaults are the
#: typical signed values there.
COUPLING_KINDS = ("1J(N,H)", "1J(N,CA)", "2J(N,CA(i-1))", "1J(CA,C)", "1J(CA,CB)", "1J(CA,HA)")

#: Rates [s⁻¹] by product operator (a name stands for every phase of its coherence pattern, as in
#: :func:`backbone.transfer.reference.relaxation_superoperator`). Illustrative values for a protonated
#: 13C/15N protein of about 20 kDa (τc ≈ 12 ns) at 600 MHz (common practice). Anti-phase terms add the
#: selective longitudinal rate of the partner: about 10 s⁻¹ for the amide proton in a protonated protein
#: (spin diffusion), 1-3 s⁻¹ for 15N and the carbons.
DEFAULT_RATES: Mapping[str, float] = MappingProxyType(
    {
        "Hx": 25.0,  # amide 1H in-phase
        "2HyNz": 27.0,  # amide 1H anti-phase to 15N
        "Nx": 12.0,  # 15N in-phase
        "2NyHz": 22.0,  # 15N anti-phase to the amide proton (also 2HzNy: the same coherence pattern)
        "2NyCAz": 14.0,  # 15N anti-phase to CA(i)
        "2NyCA(i-1)z": 13.5,  # 15N anti-phase to CA(i-1)
        "CAx": 30.0,  # CA in-phase (CA-HA dipolar)
        "2CAyCz": 32.0,  # CA anti-phase to C'
        "2CAyCBz": 33.0,  # CA anti-phase to CB
        "2CAxHAx": 40.0,  # CA-HA multiple-quantum coherence
    }
)

#: Rotating-frame offsets [Hz] at 600 MHz with the carriers where experiments usually put them (1H on water,
#: 15N at 118 ppm, CA at 56 ppm, C' at 176 ppm, the aliphatic carbons at 43 ppm for CB): a few ppm each.
DEFAULT_OFFSETS_HZ: Mapping[str, float] = MappingProxyType(
    {"H": 1800.0, "N": 420.0, "CA": 600.0, "CA(i-1)": -750.0, "C": 300.0, "CB": -1500.0, "HA": -300.0}
)


@dataclass(frozen=True)
class VerifyRow:
    """One comparison of the step algebra with the reference propagator.

    kind : the check (one of :data:`STEP_KINDS`), or the model's step kind for a step without a check
    description : what was propagated, in words, with the delay and couplings
    algebra : amplitude from the closed forms [1] (NaN when not checked)
    reference : the same amplitude from the Liouville-space propagator [1] (NaN when not checked)
    rel_error : |algebra − reference| / |reference| [1]
    passed : ``rel_error <= tolerance``; ``None`` when the step has no propagator check
    conditions : couplings [Hz], delay [s], rates [s⁻¹], offsets [Hz], tolerance and the modelling choices of
        the check (plain JSON-ready values); ``conditions["reason"]`` says why a row was not checked.
    """

    kind: str
    description: str
    algebra: float
    reference: float
    rel_error: float
    passed: bool | None
    conditions: dict = field(default_factory=dict)


# ---------------------------------------------------------------------------------------------------------
# Inputs
# ---------------------------------------------------------------------------------------------------------


class _Setup(NamedTuple):
    j: dict[str, float]  # by coupling slot (COUPLING_KINDS)
    labels: dict[str, str]  # name shown for each slot (the slot itself, or a model step's coupling kind)
    rates: dict[str, float]
    offsets: dict[str, float]
    delay: float | None
    options: dict

    def coupling(self, slot: str) -> tuple[float, str]:
        return self.j[slot], self.labels.get(slot, slot)


def _number(value, what: str) -> float:
    try:
        number = float(value)
    except (TypeError, ValueError) as err:
        raise BackboneError(f"{what} must be a number, got {value!r}") from err
    if not math.isfinite(number):
        raise BackboneError(f"{what} must be finite, got {value!r}")
    return number


def _merge(defaults: Mapping[str, float], given, what: str, unit: str, *, nonneg: bool) -> dict[str, float]:
    out = dict(defaults)
    if given is None:
        return out
    if not isinstance(given, Mapping):
        raise BackboneError(f"{what} must be a mapping name -> value [{unit}], got {given!r}")
    for name, value in given.items():
        if name not in defaults:
            raise BackboneError(f"{what} {name!r} is unknown; allowed are {', '.join(defaults)}")
        number = _number(value, f"{what} {name!r} [{unit}]")
        if nonneg and number < 0:
            raise BackboneError(f"{what} {name!r} = {number:g} {unit}: must be >= 0")
        out[name] = number
    return out


def _positive(value, what: str, unit: str) -> float:
    number = _number(value, f"{what} [{unit}]")
    if number <= 0:
        raise BackboneError(f"{what} = {number:g} {unit}: must be > 0")
    return number


def _check_tolerance(tolerance) -> float:
    return _positive(tolerance, "tolerance", "fraction of one")


def _default_couplings() -> dict[str, float]:
    return {kind: float(COUPLINGS[kind].typical_hz) for kind in COUPLING_KINDS}


def _half_period(j_hz: float, label: str) -> float:
    """1/(2|J|) [s], the textbook INEPT delay; J must not vanish."""
    if j_hz == 0:
        raise BackboneError(f"{label} = 0 Hz: the default delay 1/(2|J|) needs a non-zero coupling; give delay_s")
    return 1.0 / (2.0 * abs(j_hz))


def _passive_optimum(j_active_hz: float, j_passive_hz: float, label: str) -> float:
    """Delay [s] of the first maximum of sin(π Ja τ) cos(π Jp τ), no relaxation (1/(2|Ja|) for Jp = 0).

    The derivative a cos(aτ) cos(bτ) − b sin(aτ) sin(bτ) (a = π|Ja|, b = π|Jp|) is a > 0 at τ = 0 and
    negative at τ = π/(2 max(a, b)), so its first root lies in between.
    """
    if j_passive_hz == 0:
        return _half_period(j_active_hz, label)
    if j_active_hz == 0:
        raise BackboneError(f"{label} = 0 Hz: the default delay needs a non-zero active coupling; give delay_s")
    a, b = np.pi * abs(j_active_hz), np.pi * abs(j_passive_hz)

    def slope(t):
        return a * math.cos(a * t) * math.cos(b * t) - b * math.sin(a * t) * math.sin(b * t)

    return float(brentq(slope, 0.0, np.pi / (2.0 * max(a, b)), xtol=1e-15, rtol=1e-12))


def _sign(j_hz: float) -> float:
    return -1.0 if j_hz < 0 else 1.0


# ---------------------------------------------------------------------------------------------------------
# The checks: each returns (algebra, reference, description, conditions)
# ---------------------------------------------------------------------------------------------------------


def _inept(s: _Setup):
    j, label = s.coupling("1J(N,H)")
    tau = s.delay if s.delay is not None else _half_period(j, label)
    r_in, r_anti = s.rates["Nx"], s.rates["2NyHz"]
    algebra = _steps.inept(tau, j, r_in, r_anti)
    ref = _reference.reference_inept(
        j, tau, r_inphase=r_in, r_antiphase=r_anti, offset_hz=s.offsets["N"], partner_offset_hz=s.offsets["H"]
    )
    text = f"INEPT build-up in-phase -> anti-phase, {label} {j:g} Hz, tau {tau * 1e3:.2f} ms"
    cond = {
        "j_hz": {label: j},
        "delay_s": tau,
        "rates": {"Nx": r_in, "2NyHz": r_anti},
        "offsets_hz": {"N": s.offsets["N"], "H": s.offsets["H"]},
        "sign": "reference 2NyHz amplitude times sign(J)",
    }
    return algebra, _sign(j) * ref.antiphase, text, cond


def _refocus(s: _Setup):
    j, label = s.coupling("1J(N,H)")
    tau1 = s.delay if s.delay is not None else _half_period(j, label)
    tau2 = tau1 if s.options.get("second_delay_s") is None else s.options["second_delay_s"]
    r = s.rates
    algebra = _steps.inept(tau1, j, r["Hx"], r["2HyNz"]) * _steps.refocused_inept(tau2, j, r["2NyHz"], r["Nx"])
    ref = _reference.reference_refocused_inept(
        j,
        tau1,
        tau2,
        r_source_inphase=r["Hx"],
        r_source_antiphase=r["2HyNz"],
        r_target_antiphase=r["2NyHz"],
        r_target_inphase=r["Nx"],
        source_offset_hz=s.offsets["H"],
        target_offset_hz=s.offsets["N"],
    )
    text = (
        f"refocused INEPT (build-up, then refocusing on the partner), {label} {j:g} Hz, "
        f"tau {tau1 * 1e3:.2f} + {tau2 * 1e3:.2f} ms; algebra inept x refocused_inept"
    )
    cond = {
        "j_hz": {label: j},
        "delay_s": tau1,
        "second_delay_s": tau2,
        "rates": {name: r[name] for name in ("Hx", "2HyNz", "2NyHz", "Nx")},
        "offsets_hz": {"H": s.offsets["H"], "N": s.offsets["N"]},
        "sign": "Nx amplitude, even in J",
    }
    return algebra, ref.inphase, text, cond


def _branch(index: int):
    def check(s: _Setup):
        (j1, label1), (j2, label2) = s.coupling("1J(N,CA)"), s.coupling("2J(N,CA(i-1))")
        t = s.delay if s.delay is not None else 0.024
        r = s.rates
        anti = (r["2NyCAz"], r["2NyCA(i-1)z"])
        amps = _steps.branch_transfer(t, (j1, j2), r["Nx"], anti)
        ref = _reference.reference_branch_transfer(
            j1, j2, t, r_inphase=r["Nx"], r_first=anti[0], r_second=anti[1], offset_hz=s.offsets["N"]
        )
        signed = (_sign(j1) * ref.first, _sign(j2) * ref.second)[index]
        branch = ("first", "second")[index]
        text = (
            f"one spin to two partners at once, {branch} branch: {label1} {j1:g} Hz and {label2} {j2:g} Hz, "
            f"T {t * 1e3:.1f} ms, 1H decoupled"
        )
        cond = {
            "j_hz": {label1: j1, label2: j2},
            "delay_s": t,
            "rates": {
                "Nx": r["Nx"],
                "2NyCAz": anti[0],
                "2NyCA(i-1)z": anti[1],
                "4NxCAzCA(i-1)z": anti[0] + anti[1] - r["Nx"],
            },
            "offsets_hz": {"N": s.offsets["N"]},
            "model": "additive relaxation of the doubly anti-phase term (both algebra and reference)",
            "offsets_not_applied": "CA(i), CA(i-1): longitudinal throughout, offsets inert",
            "sign": f"reference 2Ny{('CA', 'CA(i-1)')[index]}z amplitude times sign(J)",
        }
        return float(amps.transferred[index]), signed, text, cond

    return check


def _homonuclear(s: _Setup):
    (ja, label_a), (jp, label_p) = s.coupling("1J(CA,C)"), s.coupling("1J(CA,CB)")
    tau = s.delay if s.delay is not None else _passive_optimum(ja, jp, label_a)
    r_in, r_anti = s.rates["CAx"], s.rates["2CAyCz"]
    r_pass = r_in if s.options.get("r_passive_antiphase") is None else s.options["r_passive_antiphase"]
    algebra = _steps.homonuclear_transfer(tau, ja, r_in, r_anti, passive_hz=(jp,)).transferred
    ref = _reference.reference_homonuclear(
        ja, jp, tau, r_inphase=r_in, r_antiphase=r_anti, r_passive_antiphase=r_pass,
        passive_inverted=True, offset_hz=s.offsets["CA"],
    )
    text = (
        f"transfer with a passive coupling (as CA -> C'), {label_a} {ja:g} Hz active, {label_p} {jp:g} Hz "
        f"passive (partner inverted, as by a band-selective 180 on CA and CB), tau {tau * 1e3:.2f} ms"
    )
    cond = {
        "j_hz": {label_a: ja, label_p: jp},
        "delay_s": tau,
        "rates": {"CAx": r_in, "2CAyCz": r_anti, "2CAyCBz": r_pass},
        "offsets_hz": {"CA": s.offsets["CA"]},
        "model": "ideal selective 180s on (CA, CB) and C'; R(2CAyCBz) = R(CAx) unless r_passive_antiphase is "
        "given (the algebra's cos(pi Jp tau) assumes it)",
        "offsets_not_applied": "C', CB: longitudinal throughout, offsets inert",
        "sign": "reference 2CAyCz amplitude times sign(J)",
    }
    return float(algebra), _sign(ja) * ref.first, text, cond


def _carbon_split_reference(j_cacb, j_cac, tau, r_in, r_cb, r_c, offsets) -> tuple[float, float]:
    """CA and CB pathway amplitudes of the out-and-back CA -> CB split, C' present and not pulsed."""
    ref = _reference
    system = ref.SpinSystem(
        ("CA", "CB", "C"),
        {("CA", "CB"): j_cacb, ("CA", "C"): j_cac},
        {"CA": offsets["CA"], "CB": offsets["CB"], "C": offsets["C"]},
    )
    # Additive rule: R(CAx) = r_in, R(2CAyCBz) = r_cb, R(2CAyCz) = r_c, products add their extras.
    rule = ref.additive_rates(
        system,
        transverse={"CA": r_in, "CB": r_in},
        antiphase_extra={"CB": r_cb - r_in, "C": r_c - r_in},
    )
    gamma = ref.relaxation_superoperator(system, {"CAx": r_in, "2CAyCBz": r_cb, "2CAyCz": r_c}, default=rule)
    aliphatic = ("CA", "CB")
    out = ref.propagator(system, [*ref.echo(tau, aliphatic), ref.Pulse(aliphatic, 90.0)], gamma)
    back = ref.propagator(system, [ref.Pulse(aliphatic, 90.0), *ref.echo(tau, aliphatic)], gamma)
    state = out @ ref.state_vector(system, {"CAx": 1.0})
    # The pathways are what t1 labels with the CA or the CB shift: operators with CB transverse, the rest.
    cb_transverse = np.array(["CB" in ref.coherence_pattern(system, n).transverse for n in system.basis_names])
    ca_path = ref.amplitude(system, back @ np.where(cb_transverse, 0.0, state), "CAx")
    cb_path = ref.amplitude(system, back @ np.where(cb_transverse, state, 0.0), "CAx")
    return ca_path, cb_path


def _carbon_split(index: int):
    def check(s: _Setup):
        (j, label), (j_c, label_c) = s.coupling("1J(CA,CB)"), s.coupling("1J(CA,C)")
        tau = s.delay if s.delay is not None else _half_period(j, label) / 2.0
        r_in, r_cb, r_c = s.rates["CAx"], s.rates["2CAyCBz"], s.rates["2CAyCz"]
        algebra = _steps.cacb_split(tau, j, r_in, r_cb, out_and_back=True)[index]
        reference = _carbon_split_reference(j, j_c, tau, r_in, r_cb, r_c, s.offsets)[index]
        path, formula = (("CA", "cos^2"), ("CB", "-sin^2"))[index]
        text = (
            f"CA -> CB split out and back, {path} pathway ({formula}), {label} {j:g} Hz, two periods of "
            f"{tau * 1e3:.2f} ms; {label_c} {j_c:g} Hz refocused"
        )
        cond = {
            "j_hz": {label: j, label_c: j_c},
            "delay_s": tau,
            "rates": {"CAx": r_in, "2CAyCBz": r_cb, "2CAyCz": r_c},
            "offsets_hz": {name: s.offsets[name] for name in ("CA", "CB", "C")},
            "model": "ideal 180 and 90 pulses on CA and CB, C' not pulsed (its coupling refocuses; the faster "
            "anti-phase relaxation to C' during the echoes is what the algebra neglects); pathways "
            "separated by projection between the periods, t1 = 0",
            "sign": "even in J",
        }
        return float(algebra), reference, text, cond

    return check


def _multiple_quantum(s: _Setup):
    (ja, label_a), (jp, label_p) = s.coupling("1J(CA,HA)"), s.coupling("1J(CA,CB)")
    t = s.delay if s.delay is not None else 0.010
    r_mq = s.rates["2CAxHAx"]
    r_pass = r_mq if s.options.get("r_passive_antiphase") is None else s.options["r_passive_antiphase"]
    algebra = _steps.multiple_quantum(t, r_mq, passive_hz=(jp,))
    ref = _reference.reference_mq(
        t, j_active_hz=ja, j_passive_hz=jp, r_mq=r_mq, r_mq_antiphase=r_pass, passive_inverted=True,
        offset_hz=s.offsets["CA"], partner_offset_hz=s.offsets["HA"],
    )
    text = (
        f"multiple-quantum period {t * 1e3:.1f} ms, {label_a} {ja:g} Hz inactive, "
        f"{label_p} {jp:g} Hz passive (partner inverted)"
    )
    cond = {
        "j_hz": {label_a: ja, label_p: jp},
        "delay_s": t,
        "rates": {"2CAxHAx": r_mq, "4CAyHAyCBz": r_pass},
        "offsets_hz": {"CA": s.offsets["CA"], "HA": s.offsets["HA"]},
        "model": "R(4CAyHAyCBz) = R(2CAxHAx) unless r_passive_antiphase is given (the algebra's cos factor "
        "assumes it)",
        "offsets_not_applied": "CB: longitudinal throughout, offset inert",
        "sign": "even in J",
    }
    return float(algebra), ref.antiphase, text, cond


def _constant_time(s: _Setup):
    j, label = s.coupling("1J(CA,CB)")
    total = s.delay if s.delay is not None else 2.0 * _half_period(j, label)
    t1 = total / 3.0 if s.options.get("evolution_s") is None else s.options["evolution_s"]
    if not 0.0 <= t1 <= total:
        raise BackboneError(
            f"evolution_s = {t1:g} s: the shift evolution must lie in [0, T] with T = delay_s = {total:g} s"
        )
    r_in = s.rates["CAx"]
    r_pass = r_in if s.options.get("r_passive_antiphase") is None else s.options["r_passive_antiphase"]
    nu = s.offsets["CA"]
    algebra = _evolution.constant_time_factor(total, r_in, passive_hz=(j,))
    ref = _reference.reference_constant_time(
        total, t1, j_hz=j, offset_hz=nu, r_inphase=r_in, r_antiphase=r_pass, partner_inverted=True
    )
    phase = 2.0 * np.pi * nu * t1
    demodulated = ref.inphase * np.cos(phase) + ref.inphase_quadrature * np.sin(phase)
    passive = f"{label} {j:g} Hz evolving for T" if j != 0 else "no passive coupling"
    text = f"constant-time period T {total * 1e3:.2f} ms, {passive}, shift evolution {t1 * 1e3:.2f} ms"
    cond = {
        "j_hz": {label: j},
        "delay_s": total,
        "evolution_s": t1,
        "rates": {"CAx": r_in, "2CAyCBz": r_pass},
        "offsets_hz": {"CA": nu},
        "model": "reference demodulated by the shift phase: Ix cos(phi) + Iy sin(phi), phi = 2 pi nu t; "
        "R(2CAyCBz) = R(CAx) unless r_passive_antiphase is given (the algebra's cos factor assumes it)",
        "sign": "even in J",
    }
    return float(algebra), float(demodulated), text, cond


def _decoupled(s: _Setup):
    j, label = s.coupling("1J(N,H)")
    t = s.delay if s.delay is not None else 4.0 * _half_period(j, label)
    n = s.options.get("n_pulses")
    n = max(1, round(t * abs(j))) if n is None else n
    r_in, r_anti = s.rates["Nx"], s.rates["2NyHz"]
    algebra = _evolution.constant_time_factor(t, _evolution.decoupled_rate(r_in, r_anti))

    ref = _reference
    nu_n = s.offsets["N"]
    system = ref.SpinSystem(("N", "H"), {("N", "H"): j}, {"N": nu_n, "H": s.offsets["H"]})
    gamma = ref.relaxation_superoperator(system, {"Nx": r_in, "2NyHz": r_anti})
    spacing = t / n
    sequence = [ref.Delay(spacing / 2.0), ref.Pulse("H", 180.0), ref.Delay(spacing / 2.0)] * n
    final = ref.propagate(system, {"Nx": 1.0}, sequence, gamma)
    phase = 2.0 * np.pi * nu_n * t
    nx, ny = ref.amplitude(system, final, "Nx"), ref.amplitude(system, final, "Ny")
    demodulated = nx * np.cos(phase) + ny * np.sin(phase)
    text = (
        f"15N period {t * 1e3:.2f} ms, 1H decoupled by {n} 180 pulse(s) every "
        f"{spacing * 1e3:.2f} ms (1/|{label}| = {1e3 / abs(j):.2f} ms), against exp(-t (R_in + R_anti)/2)"
    )
    cond = {
        "j_hz": {label: j},
        "delay_s": t,
        "n_pulses": int(n),
        "pulse_spacing_s": spacing,
        "rates": {"Nx": r_in, "2NyHz": r_anti},
        "offsets_hz": {"N": nu_n, "H": s.offsets["H"]},
        "model": "mean rate holds when the coupling evolves between 1H 180s (spacing k/|J|: the coherence "
        "alternates in-phase/anti-phase); with spacing << 1/|J| the coupling is suppressed and the "
        "reference tends to exp(-R(Nx) t); reference demodulated by the 15N shift phase",
        "sign": "in-phase amplitude, even in J",
    }
    return float(algebra), float(demodulated), text, cond


class _Kind(NamedTuple):
    run: Callable[[_Setup], tuple]
    active: tuple[str, ...]  # coupling slots a model step's active couplings fill, in order
    passive: tuple[str, ...]  # slots of its passive couplings
    options: tuple[str, ...]  # kind-specific keyword options


_KINDS: Mapping[str, _Kind] = MappingProxyType(
    {
        "inept": _Kind(_inept, ("1J(N,H)",), (), ()),
        "refocus": _Kind(_refocus, ("1J(N,H)",), (), ("second_delay_s",)),
        "branch-own": _Kind(_branch(0), ("1J(N,CA)", "2J(N,CA(i-1))"), (), ()),
        "branch-preceding": _Kind(_branch(1), ("1J(N,CA)", "2J(N,CA(i-1))"), (), ()),
        "homonuclear": _Kind(_homonuclear, ("1J(CA,C)",), ("1J(CA,CB)",), ("r_passive_antiphase",)),
        "carbon-split-ca": _Kind(_carbon_split(0), ("1J(CA,CB)",), (), ()),
        "carbon-split-cb": _Kind(_carbon_split(1), ("1J(CA,CB)",), (), ()),
        "multiple-quantum": _Kind(_multiple_quantum, ("1J(CA,HA)",), ("1J(CA,CB)",), ("r_passive_antiphase",)),
        "constant-time": _Kind(_constant_time, (), ("1J(CA,CB)",), ("evolution_s", "r_passive_antiphase")),
        "decoupled-period": _Kind(_decoupled, ("1J(N,H)",), (), ("n_pulses",)),
    }
)

#: The checks, in the order :func:`verify_step_kinds` reports them.
STEP_KINDS = tuple(_KINDS)


def _check_options(kind: str, allowed: tuple[str, ...], options: dict) -> dict:
    out = {}
    for name, value in options.items():
        if name not in allowed:
            extra = f"; options of {kind!r} are {', '.join(allowed)}" if allowed else f"; {kind!r} takes none"
            raise BackboneError(
                f"verify {kind!r}: unknown parameter {name!r} (common ones are j, rates, offsets_hz, delay_s, "
                f"tolerance{extra})"
            )
        if value is None:
            out[name] = None
        elif name == "n_pulses":
            if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 1:
                raise BackboneError(f"n_pulses must be an integer >= 1, got {value!r}")
            out[name] = int(value)
        elif name == "evolution_s":
            out[name] = _number(value, "evolution_s [s]")
        elif name == "r_passive_antiphase":
            rate = _number(value, "r_passive_antiphase [s^-1]")
            if rate < 0:
                raise BackboneError(f"r_passive_antiphase = {rate:g} s^-1: must be >= 0")
            out[name] = rate
        else:  # second_delay_s
            out[name] = _positive(value, name, "s")
    return out


def _row(kind, description, algebra, reference, tolerance, conditions) -> VerifyRow:
    algebra, reference = float(algebra), float(reference)
    diff = abs(algebra - reference)
    rel = diff / abs(reference) if reference != 0 else (0.0 if diff == 0 else math.inf)
    conditions = {**conditions, "tolerance": tolerance}
    return VerifyRow(kind, description, algebra, reference, rel, bool(rel <= tolerance), conditions)


def _verify(kind, *, j, rates, offsets_hz, delay_s, tolerance, labels, options) -> VerifyRow:
    try:
        spec = _KINDS[kind]
    except (KeyError, TypeError) as err:
        raise BackboneError(f"verify: step kind {kind!r} is unknown; known are {', '.join(STEP_KINDS)}") from err
    setup = _Setup(
        _merge(_default_couplings(), j, "coupling", "Hz", nonneg=False),
        dict(labels),
        _merge(DEFAULT_RATES, rates, "rate", "s^-1", nonneg=True),
        _merge(DEFAULT_OFFSETS_HZ, offsets_hz, "offset of spin", "Hz", nonneg=False),
        None if delay_s is None else _positive(delay_s, "delay_s", "s"),
        _check_options(kind, spec.options, options),
    )
    tol = _check_tolerance(tolerance)
    algebra, reference, description, conditions = spec.run(setup)
    return _row(kind, description, algebra, reference, tol, conditions)


def verify_kind(
    kind: str,
    *,
    j: Mapping[str, float] | None = None,
    rates: Mapping[str, float] | None = None,
    offsets_hz: Mapping[str, float] | None = None,
    delay_s: float | None = None,
    tolerance: float = DEFAULT_TOLERANCE,
    **options,
) -> VerifyRow:
    """Compare one step kind of the algebra with the reference propagator (module notes).

    Parameters
    ----------
    kind : str
        One of :data:`STEP_KINDS`.
    j : mapping coupling kind → float [Hz], optional
        Signed couplings replacing the typical values, keys from :data:`COUPLING_KINDS`.
    rates : mapping product operator → float [s⁻¹], optional
        Rates replacing :data:`DEFAULT_RATES` (keys from there), each ≥ 0.
    offsets_hz : mapping spin → float [Hz], optional
        Offsets replacing :data:`DEFAULT_OFFSETS_HZ` (keys from there).
    delay_s : float [s], optional
        The period's delay (total evolution time of its active coupling; for ``constant-time`` the period T,
        for ``decoupled-period`` its length); default the textbook value given in the module notes.
    tolerance : float [fraction of one]
        Largest relative difference that passes (> 0; default 0.01).
    **options
        Kind-specific: ``second_delay_s`` [s] (``refocus``, τ2), ``r_passive_antiphase`` [s⁻¹]
        (``homonuclear``, ``multiple-quantum``, ``constant-time``: rate of the term anti-phase to the passive
        partner, default the in-phase/MQ rate the algebra assumes), ``evolution_s`` [s] (``constant-time``,
        default T/3), ``n_pulses`` (``decoupled-period``, default round(t·|J(N,H)|)).

    Returns
    -------
    VerifyRow
    """
    return _verify(
        kind, j=j, rates=rates, offsets_hz=offsets_hz, delay_s=delay_s, tolerance=tolerance, labels={},
        options=options,
    )


def verify_step_kinds(
    *,
    j: Mapping[str, float] | None = None,
    rates: Mapping[str, float] | None = None,
    offsets_hz: Mapping[str, float] | None = None,
    tolerance: float = DEFAULT_TOLERANCE,
) -> list[VerifyRow]:
    """One :class:`VerifyRow` per entry of :data:`STEP_KINDS`, at the textbook delays.

    ``j`` [Hz], ``rates`` [s⁻¹] and ``offsets_hz`` [Hz] override the defaults as in :func:`verify_kind`;
    ``tolerance`` is the relative tolerance of every check.
    """
    return [verify_kind(k, j=j, rates=rates, offsets_hz=offsets_hz, tolerance=tolerance) for k in STEP_KINDS]


# ---------------------------------------------------------------------------------------------------------
# Experiment models (duck-typed)
# ---------------------------------------------------------------------------------------------------------

_UNCHECKED_KINDS = ("detect", "sensitivity-enhancement")
_COUPLING_ATOMS = re.compile(r"^\dJ\(([A-Z]+),([A-Z]+)")


def _coupling_value(item) -> tuple[str | None, float]:
    """(label, J [Hz]) of one coupling entry: a kind name of COUPLINGS (its typical value; a family such as
    ``1J(CB,CG)`` takes its first variant, here the aliphatic one), a number [Hz], or an object with ``j_hz``
    (and optionally ``kind``)."""
    if isinstance(item, str):
        if item in COUPLINGS:
            return item, float(COUPLINGS[item].typical_hz)
        variants = [k for k in COUPLINGS if k.split("[", 1)[0] == item and "[" in k]
        if not variants:
            raise BackboneError(f"coupling {item!r} is unknown; known kinds are {', '.join(COUPLINGS)}")
        return variants[0], float(COUPLINGS[variants[0]].typical_hz)
    value = getattr(item, "j_hz", item)
    return getattr(item, "kind", None), _number(value, f"coupling {item!r} [Hz]")


def _couplings(value) -> list[tuple[str | None, float]]:
    if value is None:
        return []
    items = list(value) if isinstance(value, (list, tuple)) else [value]
    return [_coupling_value(item) for item in items]


def _one_spin_to_several(active) -> bool:
    """Several active couplings of one spin (a branch), e.g. 1J(N,CA) and 2J(N,CA(i-1)); not element-wise pairs
    such as 1J(CA,HA) with 1J(CB,HB). Couplings given as bare numbers count as a branch."""
    if len(active) < 2:
        return False
    atoms = []
    for label, _ in active:
        match = _COUPLING_ATOMS.match(label or "")
        if match is None:
            return True
        atoms.append(set(match.groups()))
    return bool(set.intersection(*atoms))


def _step_delay(step, *names) -> float | None:
    for name in ("delay_s", "fixed_delay_s", "delay", *names):
        value = getattr(step, name, None)
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            return float(value)
    return None  # a named delay: the check uses its textbook value


def _plan(step, kind, active, passive):
    """[(check, active, passive, delay)] for a step, or the reason it has none."""
    delay = _step_delay(step)
    if kind in ("inept", "transfer", "refocus"):
        if _one_spin_to_several(active):
            return [(c, active, [], delay) for c in ("branch-own", "branch-preceding")]
        if kind in ("inept", "transfer") and len(active) == 1 and passive:
            return [("homonuclear", active, passive, delay)]
        single = "refocus" if kind == "refocus" else "inept"
        return [(single, [a], [], delay) for a in active] or "no active coupling to check"
    if kind == "carbon-split":
        return [(c, active, [], delay) for c in ("carbon-split-ca", "carbon-split-cb")]
    if kind == "multiple-quantum":
        return [("multiple-quantum", active, passive, delay)]
    if kind == "shift-evolution":
        if getattr(step, "mode", None) != "constant-time":
            return NO_CHECK_REASON
        return [("constant-time", [], passive or [("no passive coupling", 0.0)], _step_delay(step, "t_max_s"))]
    if kind in _UNCHECKED_KINDS:
        return NO_CHECK_REASON
    return f"no propagator check for step kind {kind!r}"


def _unchecked(kind, name: str, reason: str) -> VerifyRow:
    conditions = {"step": name, "step_kind": kind, "reason": reason}
    return VerifyRow(str(kind), f"{name}: {reason}", math.nan, math.nan, math.nan, None, conditions)


def _verify_step(step, name: str, tolerance: float) -> list[VerifyRow]:
    kind = getattr(step, "kind", None)
    active = _couplings(getattr(step, "active", None))
    passive = _couplings(getattr(step, "passive", None))
    plan = _plan(step, kind, active, passive)
    if isinstance(plan, str):
        return [_unchecked(kind, name, plan)]
    decoupled = getattr(step, "decoupled", None) or ()
    if kind in ("inept", "transfer", "refocus", "carbon-split") and "1J(N,H)" in decoupled:
        plan.append(("decoupled-period", [("1J(N,H)", float(COUPLINGS["1J(N,H)"].typical_hz))], [], None))
    rows = []
    for check, act, pas, delay in plan:
        spec = _KINDS[check]
        j, labels = {}, {}
        for slots, entries in ((spec.active, act), (spec.passive, pas)):
            for slot, (label, hz) in zip(slots, entries):
                j[slot], labels[slot] = hz, label or slot
        row = _verify(check, j=j, rates=None, offsets_hz=None, delay_s=delay, tolerance=tolerance, labels=labels,
                      options={})
        conditions = {**row.conditions, "step": name, "step_kind": kind}
        consumed = pas[: len(spec.passive)]
        unused = [label for label, _ in act[len(spec.active):]]
        unused += [label for label, hz in passive if (label, hz) not in consumed]
        if unused:
            conditions["couplings_not_in_check"] = [str(u) for u in unused]
        rows.append(
            VerifyRow(row.kind, f"{name}: {row.description}", row.algebra, row.reference, row.rel_error,
                      row.passed, conditions)
        )
    return rows


def verify_experiment(model, *, tolerance: float = DEFAULT_TOLERANCE) -> list[VerifyRow]:
    """Check each step of an experiment model with the matching per-kind check.

    The model is read by duck typing (:class:`backbone.experiments.model.ExperimentModel` has this shape):
    an iterable ``model.steps`` whose items have ``kind`` and ``name`` and, when present, ``active`` and
    ``passive`` (coupling kind names of :data:`backbone.graph.couplings.COUPLINGS`, whose typical values are
    used, or numbers [Hz]), ``decoupled`` (kind names), ``mode`` (``"constant-time"`` …) and a numeric delay
    ``delay_s``/``fixed_delay_s`` [s]. A step's couplings replace the check's defaults in order; a named delay
    (whose value the optimizer decides) leaves the check at its textbook delay.

    Mapping of step kinds: ``inept``/``transfer``/``refocus`` with several couplings of one spin → both branch
    checks; ``inept``/``transfer`` with one active and a passive coupling → ``homonuclear`` (the check with a
    passive coupling); otherwise ``inept`` (or
    ``refocus``) once per active coupling; ``carbon-split`` → both pathways; ``multiple-quantum`` →
    ``multiple-quantum``; ``shift-evolution`` in constant time → ``constant-time`` (period from a fixed delay,
    else ``t_max_s``). A coupling step that decouples 1J(N,H) adds a ``decoupled-period`` row (the
    decoupled-rate rule, at its default period). Real-time evolution, ``detect`` and
    ``sensitivity-enhancement`` give a row with ``passed=None`` and the reason :data:`NO_CHECK_REASON`, and so
    does any other kind, with its own reason. Couplings a check cannot take are listed in
    ``conditions["couplings_not_in_check"]``. A value no check can use raises
    :class:`~backbone.errors.BackboneError` naming the step.
    """
    tol = _check_tolerance(tolerance)
    try:
        steps = list(model.steps)
    except (AttributeError, TypeError) as err:
        raise BackboneError("verify: the experiment model has no iterable 'steps'") from err
    rows: list[VerifyRow] = []
    for position, step in enumerate(steps):
        name = str(getattr(step, "name", None) or f"step {position + 1}")
        try:
            rows.extend(_verify_step(step, name, tol))
        except BackboneError as err:
            raise BackboneError(f"step {name!r} ({getattr(step, 'kind', '?')}): {err}") from err
    return rows


# ---------------------------------------------------------------------------------------------------------
# Plain-text table (a pure string; printing belongs to the face layer)
# ---------------------------------------------------------------------------------------------------------


def _fmt(value: float, spec: str) -> str:
    return "-" if value is None or not math.isfinite(value) else format(value, spec)


def format_verify_table(rows: Iterable[VerifyRow]) -> str:
    """Plain-text table of verify rows: kind, algebra, reference, relative error, result, description.

    ``result`` is ``pass``, ``FAIL`` or ``n/a`` (no check; the reason stands in the description). Returns the
    table as one string with a trailing summary line; prints nothing.
    """
    rows = list(rows)
    header = ("kind", "algebra", "reference", "rel. error", "result", "description")
    body = [
        (
            r.kind,
            _fmt(r.algebra, ".6f"),
            _fmt(r.reference, ".6f"),
            _fmt(r.rel_error, ".1e"),
            "n/a" if r.passed is None else ("pass" if r.passed else "FAIL"),
            r.description,
        )
        for r in rows
    ]
    widths = [max(len(cells[k]) for cells in [header, *body]) for k in range(len(header) - 1)]

    def line(cells):
        numbers = [cells[k].rjust(widths[k]) for k in (1, 2, 3)]
        return "  ".join([cells[0].ljust(widths[0]), *numbers, cells[4].ljust(widths[4]), cells[5]]).rstrip()

    rule = "-" * (sum(widths) + 2 * len(widths) + len(header[-1]))
    checked = [r for r in rows if r.passed is not None]
    failed = sum(1 for r in checked if not r.passed)
    summary = f"{len(checked) - failed} of {len(checked)} checks passed"
    if failed:
        summary += f", {failed} failed"
    if len(checked) != len(rows):
        summary += f"; {len(rows) - len(checked)} step(s) without a propagator check"
    return "\n".join([line(header), rule, *(line(cells) for cells in body), rule, summary]) + "\n"
