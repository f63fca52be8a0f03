"""Spectral density of an isotropically tumbling molecule with fast internal motion (model-free).

Lipari & Szabo, J. Am. Chem. Soc. 104, 4546-4559 (1982):

    J(ω) = (2/5) [ S² τc / (1 + ω²τc²) + (1 − S²) τ / (1 + ω²τ²) ],   1/τ = 1/τc + 1/τe.

The factor 2/5 is kept *inside* J, so the rate expressions of :mod:`backbone.relaxation.terms` are the ones of
Abragam (1961) and Kay, Torchia & Bax (Biochemistry 28, 8972, 1989) as written, with ω in rad s⁻¹. J is even in
ω, so the sign convention of the Larmor frequencies (ω = γB0, signed γ) does not matter here; it matters only in
the sums and differences the rate expressions form (see :mod:`backbone.relaxation.terms`).
"""

from __future__ import annotations

import numpy as np

from backbone.errors import BackboneError

__all__ = ["spectral_density", "rigid_spectral_density"]

# The rank-2 orientational correlation function of isotropic tumbling is C(t) = (1/5) exp(−|t|/τc); its
# two-sided Fourier transform is (2/5) τc / (1 + ω²τc²).
_TWO_FIFTHS = 0.4


def _check_model_free(s2, tau_e) -> None:
    s2 = np.asarray(s2, dtype=float)
    tau_e = np.asarray(tau_e, dtype=float)
    if not np.all(np.isfinite(s2)) or np.any((s2 < 0.0) | (s2 > 1.0)):
        raise BackboneError(f"spectral density: s2 (order parameter) must lie in [0, 1], got {s2!r}")
    if not np.all(np.isfinite(tau_e)) or np.any(tau_e < 0.0):
        raise BackboneError(f"spectral density: tau_e [s] must be finite and >= 0, got {tau_e!r}")


def rigid_spectral_density(omega, tau_c):
    """J(ω) = (2/5) τc / (1 + ω²τc²) [s] of a rigid isotropic rotor (Abragam 1961, ch. VIII).

    Parameters
    ----------
    omega : float or array [rad s⁻¹]
    tau_c : float or array [s], > 0
    """
    omega = np.asarray(omega, dtype=float)
    tau_c = np.asarray(tau_c, dtype=float)
    return _TWO_FIFTHS * tau_c / (1.0 + (omega * tau_c) ** 2)


def spectral_density(omega, tau_c, *, s2=1.0, tau_e=0.0):
    """Model-free spectral density J(ω) [s] (Lipari & Szabo 1982), 2/5 factor included.

    Parameters
    ----------
    omega : float or array [rad s⁻¹]
        Angular frequency (sign irrelevant, J is even).
    tau_c : float or array [s]
        Overall (isotropic) rotational correlation time, > 0.
    s2 : float or array, optional
        Generalized order parameter S² in [0, 1]. 1 is the rigid rotor.
    tau_e : float or array [s], optional
        Effective internal correlation time, ≥ 0. With ``tau_e = 0`` the internal term vanishes (its
        correlation function decays infinitely fast) and J = (2/5) S² τc / (1 + ω²τc²); with ``s2 = 1`` the
        rigid rotor is recovered for any ``tau_e``.

    All arguments broadcast against each other (numpy rules); the result has the broadcast shape.
    Raises :class:`~backbone.errors.BackboneError` if ``s2`` is outside [0, 1] or ``tau_e`` is negative.
    """
    _check_model_free(s2, tau_e)
    omega = np.asarray(omega, dtype=float)
    tau_c = np.asarray(tau_c, dtype=float)
    s2 = np.asarray(s2, dtype=float)
    tau_e = np.asarray(tau_e, dtype=float)
    # τ = τc τe / (τc + τe): finite (zero) for τe = 0, no division by zero since τc > 0.
    tau = tau_c * tau_e / (tau_c + tau_e)
    overall = s2 * tau_c / (1.0 + (omega * tau_c) ** 2)
    internal = (1.0 - s2) * tau / (1.0 + (omega * tau) ** 2)
    return _TWO_FIFTHS * (overall + internal)
